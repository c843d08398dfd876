/**
 * The training benchmark of `ebbflow bench` (EqProp 784-256-10, µs per example at batch 1 and 64,
 * 1 and 2 workers, NumPy and TF.js peers in the same run); writes bench/results/<machine>-<date>.json.
 */
import { mkdirSync } from "node:fs";
import { formatBench, runBench } from "../src/node/bench/workload.js";
import { writeFileAtomic } from "../src/node/files.js";

export async function run(): Promise<void> {
  const report = await runBench({ seconds: 2, log: (l) => console.log("  " + l) });
  console.log(formatBench(report));
  mkdirSync("bench/results", { recursive: true });
  const file = `bench/results/${report.machine.cpu.replace(/[^A-Za-z0-9]+/g, "-").toLowerCase()}-${report.created.slice(0, 10)}.json`;
  await writeFileAtomic(file, JSON.stringify(report, null, 1) + "\n");
  console.log(`wrote ${file}`);
}
