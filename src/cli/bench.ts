/**
 * `ebbflow bench`: the training benchmark with peers, written as JSON with the machine's fingerprint;
 * `--compare a.json b.json` shows two machines or versions side by side.
 * @module
 */
import { promises as fs } from "node:fs";
import { fail } from "../errors/index.js";
import { formatBench, runBench, type BenchReport } from "../node/bench/workload.js";
import { writeFileAtomic } from "../node/files.js";
import { readJson, readModelArgument } from "./inputs.js";

/** Options of `ebbflow bench`. */
export interface BenchCommandOptions {
  readonly out?: string;
  readonly compare?: string[];
  readonly seconds?: number;
  readonly batch?: number[];
  readonly workers?: number[];
  readonly peers?: boolean;
  readonly json?: boolean;
}

async function readReport(file: string): Promise<BenchReport> {
  const r = (await readJson(file)) as Partial<BenchReport>;
  if (r?.kind !== "ebbflow-bench") fail("parse_error", file, 'a benchmark report (kind "ebbflow-bench")', r?.kind);
  return r as BenchReport;
}

/** Runs `ebbflow bench [MODEL.json]` or `ebbflow bench --compare a.json b.json`. */
export async function benchCommand(model: string | undefined, o: BenchCommandOptions): Promise<void> {
  if (o.compare !== undefined) {
    if (o.compare.length !== 2) fail("invalid_parameter", "--compare", "two report files", `${o.compare.length}`);
    const [a, b] = await Promise.all(o.compare.map(readReport));
    process.stdout.write((o.json ? JSON.stringify({ a, b }) : formatBench(a!, b)) + "\n");
    return;
  }
  const spec = model !== undefined ? (await readModelArgument(model)).experiment.network : undefined;
  const report = await runBench({
    model: spec,
    seconds: o.seconds ?? 1,
    batches: o.batch ?? [1, 64],
    workers: o.workers ?? [1, 2],
    peers: o.peers !== false,
    log: o.json ? undefined : (l) => process.stderr.write(l + "\n"),
  });
  const out = o.out ?? `bench-${report.machine.cpu.replace(/[^A-Za-z0-9]+/g, "-").toLowerCase()}-${report.created.slice(0, 19).replace(/[:T]/g, "-")}.json`;
  await writeFileAtomic(out, JSON.stringify(report, null, 1) + "\n");
  if (o.json) process.stdout.write(JSON.stringify(report) + "\n");
  else process.stdout.write(formatBench(report) + `\n\nwrote ${out}\n`);
  void fs;
}
