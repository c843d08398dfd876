/**
 * `ebbflow sweep`: sweeps over seeds and configurations, run on local worker threads or as one Slurm job
 * array, with status, resubmission of failed runs and summaries across seeds.
 * @module
 */
import os from "node:os";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { Command, InvalidArgumentError, Option } from "commander";
import { sweepJsonSchema } from "../sweep/schema.js";
import type { SweepPlan } from "../sweep/expand.js";
import { loadSweepFile, readSweepPlan, runAt } from "../node/sweep/files.js";
import { executeRun } from "../node/sweep/execute.js";
import { runSweepLocally } from "../node/sweep/local.js";
import { resubmitSweep, submitSweep, sweepStatus, waitForJobs, type SlurmSubmission, type SweepStatusReport } from "../node/sweep/slurm.js";
import { summarizeSweepFolder } from "../node/sweep/summarize.js";
import { guard } from "./output.js";
import { intOption, numberOption } from "./numbers.js";

const int = (name: string, min: number) => intOption(name, min);
const level = numberOption("--level", { min: 0, max: 1, openMin: true, openMax: true });

const out = (text: string) => process.stdout.write(text);
const err = (text: string) => process.stderr.write(text);

/** Options of `ebbflow sweep run`. */
interface RunOptions {
  readonly out?: string;
  readonly workers?: number;
  readonly slurm?: boolean;
  readonly partition?: string;
  readonly time?: string;
  readonly cpusPerTask?: number;
  readonly throttle?: number;
  readonly wait?: boolean;
  readonly json?: boolean;
}

/** The ebbflow command's own script, for the batch script's tasks (this module sits beside it). */
function cliScript(): string {
  const here = fileURLToPath(import.meta.url);
  return path.join(path.dirname(here), path.extname(here) === ".ts" ? "../../dist/cli/main.js" : "main.js");
}

function describeSubmission(s: SlurmSubmission, json: boolean, dir: string): void {
  if (json) return;
  out(`submitted job ${s.job}: array ${s.array} (${s.indices.length} task${s.indices.length === 1 ? "" : "s"}); logs in ${path.join(dir, "logs")}\n`);
  out(`follow it with: ebbflow sweep status ${dir}\n`);
}

function printStatus(s: SweepStatusReport): void {
  const c = s.counts;
  out(`${s.name}: ${s.total} runs — ${c.finished} finished, ${c.running} running, ${c.pending} pending, ${c.failed} failed, ${c.interrupted} interrupted, ${c["not-started"]} not started\n`);
  if (s.submissions.length > 0) out(`jobs: ${s.submissions.map((x) => `${x.job} (array ${x.array})`).join(", ")}\n`);
  const failed = s.runs.filter((r) => r.state === "failed");
  if (failed.length > 0) {
    out("failed:\n");
    for (const r of failed) {
      out(`  #${r.index} ${r.id} ${r.label} seed ${r.seed}${r.task ? ` task ${r.task}` : ""}${r.schedulerState ? ` ${r.schedulerState}` : ""}${r.exitCode ? ` exit ${r.exitCode}` : ""}\n`);
      if (r.log) out(`      log: ${r.log}\n`);
      if (r.error) out(`      ${r.error.split("\n")[0]}\n`);
    }
    out(`submit them again (after fixing the cause) with: ebbflow sweep resubmit ${s.dir} --failed\n`);
  }
}

async function runCommand(file: string, o: RunOptions): Promise<void> {
  const plan: SweepPlan = await loadSweepFile(file);
  const dir = path.resolve(o.out ?? path.join("sweeps", plan.name));
  const json = o.json === true;
  if (o.slurm) {
    const submission = await submitSweep(plan, dir, { cli: cliScript(), partition: o.partition, time: o.time, cpusPerTask: o.cpusPerTask, throttle: o.throttle });
    if (submission === null) {
      if (json) out(JSON.stringify({ out: dir, submission: null, runs: plan.runs.length }) + "\n");
      else out(`all ${plan.runs.length} runs have finished; nothing to submit (${dir})\n`);
      return;
    }
    describeSubmission(submission, json, dir);
    if (o.wait) await waitForJobs([submission.job]);
    const status = o.wait ? await sweepStatus(dir) : undefined;
    if (json) out(JSON.stringify({ out: dir, submission, runs: plan.runs.length, ...(status ? { status } : {}) }) + "\n");
    else if (status) printStatus(status);
    return;
  }
  const workers = o.workers ?? Math.max(1, Math.min(os.availableParallelism(), plan.runs.length));
  // every file is written atomically, so stopping at once (worker threads included) loses at most the epochs since a checkpoint
  const onInterrupt = () => {
    err(`\ninterrupted: finished runs and checkpoints are kept; run the same command again to resume\n`);
    process.exit(130);
  };
  process.once("SIGINT", onInterrupt);
  if (!json) err(`${plan.name}: ${plan.runs.length} runs (${plan.configurations.length} configurations × ${plan.seeds.length} seeds) on ${workers === 0 ? "this process" : `${workers} worker thread${workers === 1 ? "" : "s"}`}; folder ${dir}\n`);
  const report = await runSweepLocally(plan, {
    out: dir,
    workers,
    onRunDone: (x, done, total) => {
      if (json) return;
      const run = plan.runs[x.index];
      const what = x.status === "failed" ? `FAILED: ${x.error?.message.split("\n")[0] ?? ""}` : `${x.status} (${x.epochs} epochs${x.resumedFrom > 0 ? `, resumed from epoch ${x.resumedFrom}` : ""})`;
      err(`[${done}/${total}] #${x.index} ${x.id} ${run?.label ?? ""} seed ${run?.seed ?? ""}: ${what}\n`);
    },
  });
  process.removeListener("SIGINT", onInterrupt);
  if (json) out(JSON.stringify(report) + "\n");
  else out(`${report.finished} finished, ${report.skipped} already finished, ${report.busy > 0 ? `${report.busy} running in another process, ` : ""}${report.failed} failed; results in ${dir}\n`);
  if (report.failed > 0) process.exitCode = 1;
}

async function taskCommand(dir: string, o: { index: number; json?: boolean }): Promise<void> {
  const plan = await readSweepPlan(dir);
  const run = runAt(plan, o.index);
  const runReport = await executeRun({ dir: path.resolve(dir), run, baseDir: plan.baseDir ?? process.cwd(), checkpointEvery: plan.checkpointEvery, plugins: plan.plugins });
  if (o.json) out(JSON.stringify(runReport) + "\n");
  else out(`run #${run.index} ${run.id} (${run.label}, seed ${run.seed}): ${runReport.status}${runReport.status === "failed" ? "" : `, ${runReport.epochs} epochs${runReport.resumedFrom > 0 ? `, resumed from epoch ${runReport.resumedFrom}` : ""}`}\n`);
  if (runReport.status === "failed") {
    err(`ebbflow: run #${run.index} ${run.id} failed: ${runReport.error?.message ?? "unknown error"}\n`);
    process.exitCode = 1;
  }
}

async function statusCommand(dir: string, o: { json?: boolean }): Promise<void> {
  const status = await sweepStatus(dir);
  if (o.json) out(JSON.stringify(status) + "\n");
  else printStatus(status);
}

async function resubmitCommand(dir: string, o: { failed?: boolean; throttle?: number; wait?: boolean; json?: boolean }): Promise<void> {
  const abs = path.resolve(dir);
  const submission = await resubmitSweep(abs, { failed: o.failed, throttle: o.throttle });
  if (submission === null) {
    if (o.json) out(JSON.stringify({ out: abs, submission: null }) + "\n");
    else out(`nothing to resubmit: no ${o.failed ? "failed" : "unfinished, idle"} runs\n`);
    return;
  }
  describeSubmission(submission, o.json === true, abs);
  if (o.wait) await waitForJobs([submission.job]);
  const status = o.wait ? await sweepStatus(abs) : undefined;
  if (o.json) out(JSON.stringify({ out: abs, submission, ...(status ? { status } : {}) }) + "\n");
  else if (status) printStatus(status);
}

async function summarizeCommand(dir: string, o: { metric?: string; split?: "train" | "test"; band?: "range" | "sd"; level?: number; json?: boolean }): Promise<void> {
  const r = await summarizeSweepFolder(dir, { metric: o.metric, split: o.split, band: o.band, level: o.level });
  if (o.json) {
    out(JSON.stringify({ ...r.summary, files: r.files }) + "\n");
    return;
  }
  out(r.table);
  const missing = r.summary.configurations.reduce((n, c) => n + c.unfinished.length, 0);
  if (missing > 0) out(`(${missing} unfinished run${missing === 1 ? "" : "s"} left out)\n`);
  if (r.files) out(r.files.svg !== undefined ? `wrote ${r.files.json} and ${r.files.svg}\n` : `wrote ${r.files.json}\n`);
  if (r.plotSkipped !== undefined) out(`no chart: ${r.plotSkipped}\n`);
}

async function listCommand(file: string, o: { json?: boolean }): Promise<void> {
  const plan = await loadSweepFile(file);
  if (o.json) {
    out(JSON.stringify(plan) + "\n");
    return;
  }
  out(`${plan.name}: ${plan.configurations.length} configurations × ${plan.seeds.length} seeds = ${plan.runs.length} runs${plan.duplicates > 0 ? ` (${plan.duplicates} repeated configurations dropped)` : ""}\n`);
  for (const r of plan.runs) out(`  #${r.index} ${r.id} ${r.label} seed ${r.seed}\n`);
}

/**
 * Adds `ebbflow sweep` and its subcommands (run, task, status, resubmit, summarize, list, schema) to a program.
 * @param program - The ebbflow command.
 * @category Sweeps
 */
export function registerSweep(program: Command): void {
  const sweep = program.command("sweep").description("sweeps over seeds and configurations: run locally on worker threads or on a Slurm cluster, follow, resubmit, summarise");

  sweep
    .command("run")
    .description("run every unfinished run of a sweep file (worker threads, or one Slurm job array with --slurm)")
    .argument("<sweep>", "SWEEP.json")
    .option("--out <dir>", "sweep folder (default sweeps/<name>)")
    .option("--workers <n>", "worker threads (0: one after another in this process; default: the CPU count)", int("--workers", 0))
    .option("--slurm", "submit one Slurm job array instead of running here")
    .option("--partition <name>", "Slurm partition (with --slurm)")
    .option("--time <limit>", "Slurm time limit per task, e.g. 00:10:00 (with --slurm)")
    .option("--cpus-per-task <n>", "CPUs per Slurm task (with --slurm; default 1)", int("--cpus-per-task", 1))
    .option("--throttle <k>", "at most K Slurm tasks at once (with --slurm)", int("--throttle", 1))
    .option("--wait", "with --slurm: wait until the tasks leave the queue, then print the status")
    .option("--json", "machine-readable output")
    .action(guard(runCommand));

  sweep
    .command("task")
    .description("run one run of a sweep folder (what each Slurm array task calls)")
    .argument("<dir>", "sweep folder")
    .requiredOption("--index <i>", "run index (the array task id)", int("--index", 0))
    .option("--json", "machine-readable output")
    .action(guard(taskCommand));

  sweep
    .command("status")
    .description("state of every run of a sweep folder: finished, running, pending, failed (with exit code and log), interrupted")
    .argument("<dir>", "sweep folder")
    .option("--json", "machine-readable output")
    .action(guard(statusCommand));

  sweep
    .command("resubmit")
    .description("submit a Slurm sweep's unfinished runs again as one job array (--failed: only the failed ones)")
    .argument("<dir>", "sweep folder")
    .option("--failed", "only runs whose task failed")
    .option("--throttle <k>", "at most K tasks at once", int("--throttle", 1))
    .option("--wait", "wait until the tasks leave the queue, then print the status")
    .option("--json", "machine-readable output")
    .action(guard(resubmitCommand));

  sweep
    .command("summarize")
    .description("per configuration: mean, standard deviation and confidence interval across seeds of the final metric; JSON and SVG curves")
    .argument("<dir>", "sweep folder")
    .option("--metric <name>", "sse, loss, binaryCrossEntropy, softmaxCrossEntropy, accuracy or cosine (default sse)")
    .addOption(new Option("--split <split>", "which evaluation (default test when there is one)").choices(["train", "test"]))
    .addOption(new Option("--band <band>", "band of the curves: range (min to max) or sd (mean ± sd)").choices(["range", "sd"]))
    .option("--level <p>", "confidence level (default 0.95)", level)
    .option("--json", "machine-readable output")
    .action(guard(summarizeCommand));

  sweep
    .command("list")
    .description("expand a sweep file and list its runs with their ids, without running anything")
    .argument("<sweep>", "SWEEP.json")
    .option("--json", "machine-readable output (the whole plan)")
    .action(guard(listCommand));

  sweep
    .command("schema")
    .description("print the JSON Schema of sweep files")
    .action(
      guard(async () => {
        out(JSON.stringify(sweepJsonSchema(), null, 2) + "\n");
      }),
    );
}
