/**
 * Sweeps on a Slurm cluster. The runner writes the plan (`DIR/runs.json`) and a batch script
 * (`DIR/slurm/task.sh`), then submits ONE job array (`sbatch --array=0-(n-1)%K`); each array task runs
 * `node <cli> sweep task DIR --index $SLURM_ARRAY_TASK_ID`, which executes that run (resuming it when it
 * has a checkpoint). Scheduling is left entirely to Slurm. Status comes from the scheduler's own view
 * (`squeue -t all`, `scontrol show job`; no accounting database needed) together with each run's folder,
 * and failed tasks can be submitted again on their own.
 * @module
 */
import { execFile } from "node:child_process";
import { promises as fs } from "node:fs";
import path from "node:path";
import { z } from "zod";
import { EbbflowError, fail, issueText, requireInteger } from "../../errors/index.js";
import type { SweepPlan } from "../../sweep/expand.js";
import { writeFileAtomic } from "../files.js";
import { ensureFolder } from "../run/folder.js";
import { readRunProgress, readSweepPlan, sweepFolder, writeSweepPlan } from "./files.js";

/** Options of the batch script. @category Sweeps */
export interface SlurmOptions {
  /** Absolute path of the ebbflow command's script (`dist/cli/main.js`); tasks run it with {@link SlurmOptions.node}. */
  readonly cli: string;
  /** The node executable (default: the one running now, `process.execPath`). */
  readonly node?: string | undefined;
  /** Partition (`--partition`); the cluster's default when absent. */
  readonly partition?: string | undefined;
  /** Time limit per task (`--time`, e.g. `00:10:00`). */
  readonly time?: string | undefined;
  /** CPUs per task (`--cpus-per-task`, default 1). */
  readonly cpusPerTask?: number | undefined;
  /** At most this many tasks at once (`%K` in the array spec). */
  readonly throttle?: number | undefined;
  /** Job name (default `ebbflow-<sweep name>`). */
  readonly jobName?: string | undefined;
}

/** One submission of a sweep's tasks (`DIR/slurm/submissions.json`). @category Sweeps */
export interface SlurmSubmission {
  /** The array job's id. */
  readonly job: string;
  /** Run indices in this array. */
  readonly indices: readonly number[];
  /** The `--array` value given to sbatch. */
  readonly array: string;
  /** ISO 8601 time of submission. */
  readonly submitted: string;
}

/** States of a run as {@link sweepStatus} reports them. @category Sweeps */
export type RunState = "finished" | "running" | "pending" | "failed" | "interrupted" | "not-started";

/** One run's status. @category Sweeps */
export interface RunStatus {
  readonly index: number;
  readonly id: string;
  readonly label: string;
  readonly seed: number | string;
  readonly state: RunState;
  /** Epochs in the run's results. */
  readonly epochs: number;
  /** The scheduler's task (`JOB_INDEX`) of the latest submission holding this run. */
  readonly task?: string | undefined;
  /** The scheduler's state of that task (e.g. `COMPLETED`, `FAILED`), when it still knows the job. */
  readonly schedulerState?: string | undefined;
  /** Exit code of the task as `code:signal` (from `scontrol show job`). */
  readonly exitCode?: string | undefined;
  /** The task's error log. */
  readonly log?: string | undefined;
  /** Why it failed: the run's failure record, else the last line of its error log. */
  readonly error?: string | undefined;
}

/** Status of a whole sweep. @category Sweeps */
export interface SweepStatusReport {
  readonly dir: string;
  readonly name: string;
  readonly total: number;
  readonly counts: Readonly<Record<RunState, number>>;
  readonly runs: readonly RunStatus[];
  readonly submissions: readonly SlurmSubmission[];
}

const ACTIVE_RUNNING = new Set(["RUNNING", "COMPLETING", "CONFIGURING", "STAGE_OUT", "SIGNALING", "RESIZING"]);
const ACTIVE_WAITING = new Set(["PENDING", "REQUEUED", "REQUEUE_HOLD", "REQUEUE_FED", "SUSPENDED", "STOPPED"]);

/** Runs a command; resolves with its output, or rejects with an `io_error` naming the command. */
function command(file: string, args: readonly string[]): Promise<{ stdout: string; stderr: string }> {
  return new Promise((resolve, reject) => {
    execFile(file, args, { encoding: "utf8", maxBuffer: 64 * 1024 * 1024 }, (error, stdout, stderr) => {
      if (error) reject(new EbbflowError(issueText("io_error", file, `${[file, ...args].join(" ")} to succeed`, (stderr || error.message).trim().split("\n").at(-1) ?? "failed")));
      else resolve({ stdout, stderr });
    });
  });
}

/**
 * Writes indices as a Slurm array spec: runs of consecutive indices as ranges, e.g. `0-3,5,7-8`, with
 * `%K` appended for a throttle.
 * @param indices - Run indices (any order, no repeats).
 * @param throttle - At most this many tasks at once (optional).
 * @returns The `--array` value.
 * @category Sweeps
 */
export function arraySpec(indices: readonly number[], throttle?: number): string {
  const sorted = [...indices].sort((a, b) => a - b);
  const parts: string[] = [];
  for (let i = 0; i < sorted.length; ) {
    let j = i;
    while (j + 1 < sorted.length && (sorted[j + 1] as number) === (sorted[j] as number) + 1) j++;
    parts.push(i === j ? `${sorted[i]}` : `${sorted[i]}-${sorted[j]}`);
    i = j + 1;
  }
  return parts.join(",") + (throttle !== undefined ? `%${throttle}` : "");
}

/**
 * Reads an array task spec back into indices (`3`, `0-7`, `0-7%2`, `1,3-4`, `0-6:2`).
 * @param spec - The spec.
 * @returns The indices.
 * @category Sweeps
 */
export function parseArraySpec(spec: string): number[] {
  const out: number[] = [];
  for (const part of spec.replace(/%\d+$/, "").split(",")) {
    const m = /^(\d+)(?:-(\d+)(?::(\d+))?)?$/.exec(part.trim());
    if (m === null) continue;
    const lo = Number(m[1]);
    const hi = m[2] === undefined ? lo : Number(m[2]);
    const step = m[3] === undefined ? 1 : Math.max(1, Number(m[3]));
    for (let i = lo; i <= hi; i += step) out.push(i);
  }
  return out;
}

function shellQuote(s: string): string {
  return `'${s.replace(/'/g, `'\\''`)}'`;
}

/**
 * The batch script of a sweep: Slurm directives (job name, logs `DIR/logs/%A_%a.out|err`, CPUs, time,
 * partition) and one command that runs the array task's run.
 * @param dir - The sweep folder (absolute).
 * @param name - The sweep's name.
 * @param options - The batch options.
 * @returns The script's text.
 * @category Sweeps
 */
export function batchScript(dir: string, name: string, options: SlurmOptions): string {
  const f = sweepFolder(dir);
  const lines = [
    "#!/bin/bash",
    `#SBATCH --job-name=${(options.jobName ?? `ebbflow-${name}`).replace(/[^\w.-]/g, "_")}`,
    `#SBATCH --output=${path.join(f.logs, "%A_%a.out")}`,
    `#SBATCH --error=${path.join(f.logs, "%A_%a.err")}`,
    `#SBATCH --cpus-per-task=${options.cpusPerTask ?? 1}`,
    ...(options.time !== undefined ? [`#SBATCH --time=${options.time}`] : []),
    ...(options.partition !== undefined ? [`#SBATCH --partition=${options.partition}`] : []),
    "# Written by `ebbflow sweep run --slurm`: one array task runs one run of runs.json (resuming it from its",
    "# checkpoint when it has one). Submitted with sbatch --array=<indices>[%throttle].",
    `exec ${shellQuote(options.node ?? process.execPath)} ${shellQuote(options.cli)} sweep task ${shellQuote(f.dir)} --index "$SLURM_ARRAY_TASK_ID"`,
    "",
  ];
  return lines.join("\n");
}

const SUBMISSIONS_FORMAT = "ebbflow-sweep-submissions";

/** Schema of `slurm/submissions.json`. */
const submissionsSchema = z
  .object({
    format: z.literal(SUBMISSIONS_FORMAT, { error: JSON.stringify(SUBMISSIONS_FORMAT) }),
    submissions: z.array(
      z
        .object({
          job: z.string().regex(/^[0-9]+(;[\w.-]+)?$/, { error: "a job id as sbatch printed it" }),
          indices: z.array(z.number().int().min(0)),
          array: z.string().regex(/^[0-9,\-%]+$/, { error: "an --array value" }),
          submitted: z.string().refine((s) => Number.isFinite(Date.parse(s)), { error: "an ISO 8601 date-time" }),
        })
        .strict(),
    ),
  })
  .strict();

/**
 * The submissions recorded in a sweep folder (none for a local sweep).
 * @param dir - The sweep folder.
 * @returns The submissions, oldest first.
 * @category Sweeps
 */
export async function readSubmissions(dir: string): Promise<SlurmSubmission[]> {
  const file = path.join(sweepFolder(dir).slurm, "submissions.json");
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch {
    return [];
  }
  let data: unknown;
  try {
    data = JSON.parse(text) as unknown;
  } catch (e) {
    return fail("parse_error", file, `a submissions record (format ${JSON.stringify(SUBMISSIONS_FORMAT)})`, `unreadable JSON (${(e as Error).message})`);
  }
  const r = submissionsSchema.safeParse(data);
  if (!r.success) {
    const zi = r.error.issues[0]!;
    const where = zi.code === "unrecognized_keys" ? [...zi.path, zi.keys[0] ?? ""] : zi.path;
    return fail("parse_error", `${file}: ${where.map((k) => (typeof k === "number" ? `[${k}]` : `.${String(k)}`)).join("").replace(/^\./, "") || "(root)"}`, zi.code === "unrecognized_keys" ? "no such field (unknown key)" : zi.message.replace(/^Invalid input: expected /, "").replace(/, received \w+$/, ""), zi.code);
  }
  return r.data.submissions as SlurmSubmission[];
}

/** Submits the batch script for the given indices as one array job and records it. */
async function submitIndices(dir: string, indices: readonly number[], throttle: number | undefined): Promise<SlurmSubmission> {
  const f = sweepFolder(dir);
  const array = arraySpec(indices, throttle);
  const { stdout } = await command("sbatch", ["--parsable", `--array=${array}`, path.join(f.slurm, "task.sh")]);
  const job = stdout.trim().split(";")[0] ?? "";
  if (!/^\d+$/.test(job)) fail("io_error", "sbatch", "a job id from sbatch --parsable", stdout.trim());
  const submission: SlurmSubmission = { job, indices: [...indices].sort((a, b) => a - b), array, submitted: new Date().toISOString() };
  const all = [...(await readSubmissions(dir)), submission];
  await writeFileAtomic(path.join(f.slurm, "submissions.json"), JSON.stringify({ format: SUBMISSIONS_FORMAT, submissions: all }, null, 1) + "\n");
  return submission;
}

function checkOptions(options: SlurmOptions): void {
  if (options.throttle !== undefined) requireInteger("throttle", options.throttle, 1);
  if (options.cpusPerTask !== undefined) requireInteger("cpusPerTask", options.cpusPerTask, 1);
  if (options.time !== undefined && !/^(\d+-)?\d+(:\d+){0,2}$/.test(options.time)) fail("invalid_parameter", "time", "a Slurm time limit such as 00:10:00, 10 or 1-00:00:00", options.time);
  if (typeof options.cli !== "string" || !path.isAbsolute(options.cli)) fail("invalid_parameter", "cli", "the absolute path of the ebbflow command's script", options.cli);
}

/**
 * Submits a sweep to Slurm as one job array over its unfinished runs (all of them on a fresh folder). The
 * plan goes to `DIR/runs.json`, the batch script to `DIR/slurm/task.sh`, task logs to `DIR/logs/`.
 * @param plan - The sweep plan.
 * @param out - The sweep folder.
 * @param options - Batch options (the CLI path is required).
 * @returns The submission, or null when every run has finished.
 * @throws `EbbflowError` `invalid_parameter` for bad options; `io_error` when sbatch fails.
 * @category Sweeps
 */
export async function submitSweep(plan: SweepPlan, out: string, options: SlurmOptions): Promise<SlurmSubmission | null> {
  checkOptions(options);
  const f = sweepFolder(out);
  await writeSweepPlan(f.dir, plan);
  await ensureFolder(f.logs, "--out");
  await ensureFolder(f.slurm, "--out");
  await writeFileAtomic(path.join(f.slurm, "task.sh"), batchScript(f.dir, plan.name, options));
  await fs.chmod(path.join(f.slurm, "task.sh"), 0o755);
  const status = await sweepStatus(f.dir);
  const indices = status.runs.filter((r) => r.state !== "finished" && r.state !== "running" && r.state !== "pending").map((r) => r.index);
  if (indices.length === 0) return null;
  return submitIndices(f.dir, indices, options.throttle);
}

/**
 * Submits the sweep's runs again: with `failed`, only the runs whose task failed (by the scheduler's state
 * or the run's failure record); otherwise every run that has not finished and is not queued or running.
 * The batch script written by {@link submitSweep} is reused.
 * @param dir - The sweep folder.
 * @param options - `failed`: failed runs only; `throttle`: `%K` for this array.
 * @returns The submission, or null when there is nothing to submit.
 * @throws `EbbflowError` `io_error` when the folder has no batch script or sbatch fails.
 * @category Sweeps
 */
export async function resubmitSweep(dir: string, options: { failed?: boolean | undefined; throttle?: number | undefined } = {}): Promise<SlurmSubmission | null> {
  if (options.throttle !== undefined) requireInteger("throttle", options.throttle, 1);
  const f = sweepFolder(dir);
  try {
    await fs.access(path.join(f.slurm, "task.sh"));
  } catch {
    fail("io_error", path.join(f.slurm, "task.sh"), "the batch script of a sweep submitted with ebbflow sweep run --slurm", "missing");
  }
  const status = await sweepStatus(f.dir);
  const wanted = options.failed ? new Set<RunState>(["failed"]) : new Set<RunState>(["failed", "interrupted", "not-started"]);
  const indices = status.runs.filter((r) => wanted.has(r.state)).map((r) => r.index);
  if (indices.length === 0) return null;
  return submitIndices(f.dir, indices, options.throttle);
}

/** The scheduler's view of one array task. */
interface TaskView {
  state?: string;
  exitCode?: string;
  stderr?: string;
}

/** Reads `squeue` and `scontrol` for one array job; an unknown (aged-out) job gives an empty map. */
async function schedulerView(job: string): Promise<Map<number, TaskView>> {
  const view = new Map<number, TaskView>();
  const entry = (i: number): TaskView => {
    let v = view.get(i);
    if (v === undefined) {
      v = {};
      view.set(i, v);
    }
    return v;
  };
  try {
    const { stdout } = await command("squeue", ["-h", "-r", "-t", "all", "-j", job, "-o", "%i %T"]);
    for (const line of stdout.split("\n")) {
      const m = /^(\d+)_(\[?[\d,\-%:]+\]?)\s+(\S+)/.exec(line.trim());
      if (m === null || m[1] !== job) continue;
      for (const i of parseArraySpec((m[2] as string).replace(/[[\]]/g, ""))) entry(i).state = m[3] as string;
    }
  } catch {
    return view;
  }
  try {
    const { stdout } = await command("scontrol", ["show", "job", "-o", job]);
    for (const line of stdout.split("\n")) {
      const fields = new Map<string, string>();
      for (const token of line.trim().split(/\s+/)) {
        const eq = token.indexOf("=");
        if (eq > 0) fields.set(token.slice(0, eq), token.slice(eq + 1));
      }
      if (fields.get("ArrayJobId") !== job) continue;
      for (const i of parseArraySpec(fields.get("ArrayTaskId") ?? "")) {
        const v = entry(i);
        const state = fields.get("JobState");
        if (state !== undefined) v.state = state;
        const code = fields.get("ExitCode");
        if (code !== undefined) v.exitCode = code;
        const err = fields.get("StdErr");
        if (err !== undefined) v.stderr = err;
      }
    }
  } catch {
    // squeue knew the job; scontrol may have just lost it: keep what squeue said
  }
  return view;
}

async function lastLine(file: string): Promise<string | undefined> {
  try {
    const lines = (await fs.readFile(file, "utf8")).split("\n").map((l) => l.trim()).filter((l) => l !== "");
    return lines.at(-1);
  } catch {
    return undefined;
  }
}

/**
 * The status of every run of a sweep folder: its results folder (finished, part-way, failure record) and,
 * for Slurm sweeps, the scheduler's state of the latest task that ran it, with exit code and log path.
 * Works for local sweeps too (no scheduler part).
 * @param dir - The sweep folder.
 * @returns The status.
 * @throws `EbbflowError` `io_error` / `parse_error` when the folder has no plan.
 * @category Sweeps
 */
export async function sweepStatus(dir: string): Promise<SweepStatusReport> {
  const f = sweepFolder(dir);
  const plan = await readSweepPlan(f.dir);
  const submissions = await readSubmissions(f.dir);
  const latest = new Map<number, SlurmSubmission>();
  for (const s of submissions) for (const i of s.indices) latest.set(i, s);
  const views = new Map<string, Map<number, TaskView>>();
  for (const job of new Set([...latest.values()].map((s) => s.job))) views.set(job, await schedulerView(job));
  const runs: RunStatus[] = [];
  for (const run of plan.runs) {
    const progress = await readRunProgress(f.dir, run);
    const sub = latest.get(run.index);
    const view = sub === undefined ? undefined : views.get(sub.job)?.get(run.index);
    const log = sub === undefined ? undefined : (view?.stderr ?? path.join(f.logs, `${sub.job}_${run.index}.err`));
    const s = view?.state;
    let state: RunState;
    if (progress.finished) state = "finished";
    else if (s !== undefined && ACTIVE_RUNNING.has(s)) state = "running";
    else if (s !== undefined && ACTIVE_WAITING.has(s)) state = "pending";
    else if (s !== undefined || progress.failure !== null) state = "failed";
    else if (progress.epochs > 0 || progress.checkpointEpoch > 0) state = "interrupted";
    else state = sub === undefined ? "not-started" : "failed";
    const error = state !== "failed" ? undefined : (progress.failure?.message ?? (log !== undefined ? await lastLine(log) : undefined) ?? (s !== undefined ? `the task ended ${s}` : "the scheduler no longer knows the task and the run did not finish"));
    runs.push({
      index: run.index,
      id: run.id,
      label: run.label,
      seed: run.seed,
      state,
      epochs: progress.epochs,
      ...(sub !== undefined ? { task: `${sub.job}_${run.index}`, log } : {}),
      ...(s !== undefined ? { schedulerState: s } : {}),
      ...(view?.exitCode !== undefined ? { exitCode: view.exitCode } : {}),
      ...(error !== undefined ? { error } : {}),
    });
  }
  const counts: Record<RunState, number> = { finished: 0, running: 0, pending: 0, failed: 0, interrupted: 0, "not-started": 0 };
  for (const r of runs) counts[r.state]++;
  return { dir: f.dir, name: plan.name, total: runs.length, counts, runs, submissions };
}

/**
 * Waits until the scheduler no longer lists any task of the given jobs as queued or running (polling
 * `squeue`), then returns.
 * @param jobs - Array job ids.
 * @param options - `timeoutMs` (default 10 minutes), `intervalMs` between polls (default 500).
 * @throws `EbbflowError` `io_error` on timeout.
 * @category Sweeps
 */
export async function waitForJobs(jobs: readonly string[], options: { timeoutMs?: number | undefined; intervalMs?: number | undefined } = {}): Promise<void> {
  if (jobs.length === 0) return;
  const deadline = Date.now() + (options.timeoutMs ?? 600_000);
  for (;;) {
    let listed = "";
    try {
      listed = (await command("squeue", ["-h", "-j", jobs.join(","), "-o", "%i"])).stdout.trim();
    } catch {
      listed = "";
    }
    if (listed === "") return;
    if (Date.now() > deadline) fail("io_error", "squeue", `jobs ${jobs.join(", ")} to leave the queue`, `still listed after ${Math.round((options.timeoutMs ?? 600_000) / 1000)} s`);
    await new Promise((r) => setTimeout(r, options.intervalMs ?? 500));
  }
}
