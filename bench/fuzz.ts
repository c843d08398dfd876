/**
 * The fuzz suite (`npm run fuzz`, or `npm run bench -- fuzz`): every input kind of `bench/fuzz/kinds.ts`,
 * 10,000 cases each by default, each kind in child processes of 500 cases, two kinds at a time. Every case
 * has a time limit; a case over it is killed (the kind goes on after it) and run again alone with four
 * times the limit, and only a case over that is a hang; a process that dies is an untyped error of its case. Prints, per kind: cases, refused with a typed error,
 * accepted, untyped errors, hangs, silently wrong results, and the first few failures with their case numbers.
 *
 * Environment: EBBFLOW_FUZZ_CASES (per kind, default 10000), EBBFLOW_FUZZ_SEED (default 20261201),
 * EBBFLOW_FUZZ_KINDS (comma-separated names, default all). Exit code 1 when any case failed.
 * Replay one case: the seed of case i is SEED + i * 7919 (see bench/fuzz/child.ts).
 */
import { fork } from "node:child_process";
import { fileURLToPath } from "node:url";
import { cliKind, kinds } from "./fuzz/kinds.js";

interface Tally {
  cases: number;
  refused: number;
  accepted: number;
  untyped: number;
  hang: number;
  wrong: number;
  failures: string[];
}

const CHUNK = 500;
const child = fileURLToPath(new URL("./fuzz/child.js", import.meta.url));
const mainUrl = new URL("../src/cli/main.js", import.meta.url).href;

/** Runs cases start..end-1 in one child. A case over the limit is killed: with `suspects`, it is noted there to be run again alone (a busy machine can stall a case); without, it is a hang. */
function runChunk(name: string, seed: number, start: number, end: number, timeoutMs: number, t: Tally, suspects?: number[]): Promise<number> {
  // resolves with the index to continue from (end when the chunk finished)
  return new Promise((resolve) => {
    // a 256 MiB limit per block keeps a worker's memory bounded (what is tested is the behaviour at the limit)
    const p = fork(child, [name, String(seed), String(start), String(end), mainUrl], { stdio: ["ignore", "ignore", "pipe", "ipc"], env: { ...process.env, EBBFLOW_MAX_BYTES: process.env.EBBFLOW_MAX_BYTES ?? String(256 * 1024 ** 2) } });
    let current = -1;
    let timer: NodeJS.Timeout | null = null;
    let settled = false;
    let stderr = "";
    p.stderr?.on("data", (d: Buffer) => (stderr = (stderr + d.toString()).slice(-2000)));
    const finish = (next: number) => {
      if (settled) return;
      settled = true;
      if (timer) clearTimeout(timer);
      resolve(next);
    };
    p.on("message", (m: { t: string; i: number; verdict: { kind: keyof Tally; detail?: string } }) => {
      if (m.t === "start") {
        current = m.i;
        timer = setTimeout(() => {
          if (suspects !== undefined) suspects.push(current);
          else {
            t.cases++;
            t.hang++;
            if (t.failures.length < 8) t.failures.push(`case ${current}: hang (> ${timeoutMs} ms, also when run again alone)`);
          }
          p.kill("SIGKILL");
          finish(current + 1);
        }, timeoutMs);
      } else if (m.t === "done") {
        if (timer) clearTimeout(timer);
        t.cases++;
        (t[m.verdict.kind] as number)++;
        if ((m.verdict.kind === "untyped" || m.verdict.kind === "wrong") && t.failures.length < 8) t.failures.push(`case ${m.i}: ${m.verdict.kind}: ${m.verdict.detail ?? ""}`);
      } else if (m.t === "end") finish(end);
    });
    p.on("exit", (code, signal) => {
      if (settled) return;
      if (current >= 0) {
        t.cases++;
        t.untyped++;
        if (t.failures.length < 8) t.failures.push(`case ${current}: the process died (${signal ?? `exit ${code}`}): ${stderr.trim().split("\n").slice(-3).join(" | ")}`);
        finish(current + 1);
      } else finish(end);
    });
  });
}

async function runKind(name: string, timeoutMs: number, count: number, seed: number): Promise<Tally> {
  const t: Tally = { cases: 0, refused: 0, accepted: 0, untyped: 0, hang: 0, wrong: 0, failures: [] };
  let i = 0;
  const suspects: number[] = [];
  while (i < count) i = await runChunk(name, seed, i, Math.min(count, i + CHUNK), timeoutMs, t, suspects);
  // a case over its limit runs again alone with four times the limit: only then is it a hang
  for (const s of suspects) await runChunk(name, seed, s, s + 1, 4 * timeoutMs, t);
  return t;
}

export async function run(): Promise<void> {
  const count = Number(process.env.EBBFLOW_FUZZ_CASES ?? 10_000);
  const seed = Number(process.env.EBBFLOW_FUZZ_SEED ?? 20261201);
  const wanted = process.env.EBBFLOW_FUZZ_KINDS?.split(",").filter((s) => s !== "");
  const all = [...kinds, cliKind(mainUrl)].filter((k) => wanted === undefined || wanted.includes(k.name));
  console.log(`${all.length} input kinds × ${count} cases, seed ${seed}`);
  const results = new Map<string, Tally>();
  const queue = [...all];
  const t0 = Date.now();
  await Promise.all(
    [0, 1].map(async () => {
      for (let k = queue.shift(); k !== undefined; k = queue.shift()) {
        const s = Date.now();
        const t = await runKind(k.name, k.timeoutMs ?? 20_000, count, seed);
        results.set(k.name, t);
        console.log(`  ${k.name}: ${t.cases} cases in ${((Date.now() - s) / 1000).toFixed(0)} s`);
      }
    }),
  );
  console.log(`\n| kind | cases | refused (typed) | accepted | untyped | hangs | wrong |\n| --- | ---: | ---: | ---: | ---: | ---: | ---: |`);
  let bad = 0;
  for (const k of all) {
    const t = results.get(k.name)!;
    bad += t.untyped + t.hang + t.wrong;
    console.log(`| ${k.name} | ${t.cases} | ${t.refused} | ${t.accepted} | ${t.untyped} | ${t.hang} | ${t.wrong} |`);
  }
  for (const k of all) {
    const t = results.get(k.name)!;
    if (t.failures.length > 0) console.log(`\n${k.name}:\n  ${t.failures.join("\n  ")}`);
  }
  console.log(`\n${bad === 0 ? "no" : bad} untyped errors, hangs or wrong results; ${((Date.now() - t0) / 1000).toFixed(0)} s`);
  if (bad > 0) process.exitCode = 1;
}
