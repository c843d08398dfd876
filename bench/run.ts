/**
 * Runs the benchmarks: `npm run bench` (all) or `npm run bench -- units traces`.
 * Every figure is a ratio against a peer measured in the same run.
 */
import { printMachine } from "./machine.js";

type Suite = { run: () => Promise<void> };
const suites: Record<string, () => Promise<Suite>> = {
  units: () => import("./units.js"),
  traces: () => import("./traces.js"),
  kernels: () => import("./kernels.js"),
  wasm: () => import("./wasm.js"),
  settle: () => import("./settle.js"),
  training: () => import("./training.js"),
  step: () => import("./step.js"),
  update: () => import("./update.js"),
  active: () => import("./active.js"),
  batch: () => import("./batch.js"),
  parallel: () => import("./parallel.js"),
  agreement: () => import("./agreement.js"),
  digits: () => import("./digits.js"),
  "digits-conv": () => import("./digits-conv.js"),
  runs: () => import("./runs.js"),
  sparse: () => import("./sparse.js"),
  fuzz: () => import("./fuzz.js"),
  sequences: () => import("./sequences.js"),
};

const wanted = process.argv.slice(2);
printMachine();
for (const [name, load] of Object.entries(suites)) {
  // the fuzz and sequences suites run only when asked for by name (they take minutes)
  if (wanted.length > 0 ? !wanted.includes(name) : name === "fuzz" || name === "sequences") continue;
  console.log(`\n## ${name}`);
  const suite = await load();
  await suite.run();
}
