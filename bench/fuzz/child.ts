/**
 * A fuzz worker process: runs cases `start` to `end - 1` of one kind and reports each over IPC, so that the
 * parent (`bench/fuzz.ts`) can time every case, kill a case that hangs and go on after it.
 * Arguments: KIND SEED START END MAIN_URL.
 */
import fc from "fast-check";
import { cliKind, kinds, type FuzzKind } from "./kinds.js";

const [name, seedText, startText, endText, mainUrl] = process.argv.slice(2);
const all: FuzzKind[] = [...kinds, cliKind(mainUrl!) as FuzzKind];
const kind = all.find((k) => k.name === name);
if (kind === undefined || process.send === undefined) {
  console.error(`unknown kind ${name} (or not started with IPC)`);
  process.exit(3);
}
const seed = Number(seedText);
const send = (m: unknown) => new Promise<void>((resolve) => process.send!(m, () => resolve()));
for (let i = Number(startText); i < Number(endText); i++) {
  const c = fc.sample(kind.cases, { seed: seed + i * 7919, numRuns: 1 })[0];
  await send({ t: "start", i });
  let verdict;
  try {
    verdict = await kind.run(c);
  } catch (e) {
    verdict = { kind: "untyped", detail: `runner: ${(e as Error)?.message ?? String(e)}` };
  }
  await send({ t: "done", i, verdict });
}
await send({ t: "end" });
process.exit(0);
