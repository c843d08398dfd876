/**
 * A sweep on disk: reading sweep files (with their base experiment), the plan `runs.json` in the sweep's
 * folder, and the state of each run's folder `runs/<id>/` (finished, part-way with a checkpoint, failed).
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { EbbflowError, fail, issueText } from "../../errors/index.js";
import { expandSweep, SWEEP_PLAN_FORMAT, type SweepPlan, type SweepRun } from "../../sweep/expand.js";
import { parseSweepFile } from "../../sweep/schema.js";
import { parseSweepPlan } from "../../sweep/plan.js";
import { readResults, type Results } from "../plot/results.js";
import { writeFileAtomic } from "../files.js";
import { cleanTemporaryFiles, ensureFolder } from "../run/folder.js";
import { loadPlugins, resolvePlugin } from "../plugins.js";

async function readJsonFile(file: string, what: string): Promise<unknown> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return fail("io_error", file, `a readable ${what}`, (e as NodeJS.ErrnoException).code ?? (e as Error).message);
  }
  try {
    return JSON.parse(text) as unknown;
  } catch (e) {
    return fail("parse_error", file, "JSON text", (e as Error).message);
  }
}

/**
 * Reads a sweep file and its base experiment (a path relative to the sweep file, or inline) and expands it.
 * Error paths start with the file's name, e.g. `strip.sweep.json: grid["rule.rte"]`.
 * @param file - Path of the sweep file.
 * @returns The plan, with `baseDir` set to the sweep file's folder (relative data paths resolve there).
 * @throws `EbbflowError` `io_error`, `parse_error`, `invalid_config`.
 * @category Sweeps
 */
export async function loadSweepFile(file: string): Promise<SweepPlan> {
  const raw = await readJsonFile(file, "sweep file");
  const name = path.basename(file);
  const baseDir = path.dirname(path.resolve(file));
  const prefixed = (e: unknown, prefix: string): never => {
    if (e instanceof EbbflowError) throw new EbbflowError(e.issues.map((i) => ({ ...i, path: `${prefix}: ${i.path}` })));
    throw e;
  };
  let sweep;
  try {
    sweep = parseSweepFile(raw);
  } catch (e) {
    return prefixed(e, name);
  }
  let base: unknown = sweep.base;
  let where = "base";
  let pluginDir = baseDir;
  if (typeof sweep.base === "string") {
    const baseFile = path.resolve(baseDir, sweep.base);
    base = await readJsonFile(baseFile, "base experiment (base)");
    where = path.basename(baseFile);
    pluginDir = path.dirname(baseFile);
  }
  // the base experiment's plugins (paths relative to its file) define rules of the user's own
  const specs = base !== null && typeof base === "object" && Array.isArray((base as { plugins?: unknown }).plugins) ? ((base as { plugins: unknown[] }).plugins as string[]) : [];
  let registry;
  try {
    registry = await loadPlugins(specs, { baseDir: pluginDir });
  } catch (e) {
    return prefixed(e, where);
  }
  try {
    const plan = expandSweep(sweep, base, { where, name: name.replace(/(\.sweep)?\.json$/i, ""), registry });
    return { ...plan, baseDir, ...(specs.length > 0 ? { plugins: specs.map((p) => resolvePlugin(p, pluginDir)) } : {}) };
  } catch (e) {
    return prefixed(e, name);
  }
}

/** Files of a sweep's output folder. @category Sweeps */
export interface SweepFolder {
  readonly dir: string;
  /** The plan: `DIR/runs.json`. */
  readonly plan: string;
  /** Folder of the runs: `DIR/runs`. */
  readonly runs: string;
  /** Scheduler logs: `DIR/logs`. */
  readonly logs: string;
  /** Batch script and submissions: `DIR/slurm`. */
  readonly slurm: string;
}

/**
 * The file names of a sweep's output folder.
 * @param dir - The folder.
 * @returns Absolute paths.
 * @category Sweeps
 */
export function sweepFolder(dir: string): SweepFolder {
  const abs = path.resolve(dir);
  return { dir: abs, plan: path.join(abs, "runs.json"), runs: path.join(abs, "runs"), logs: path.join(abs, "logs"), slurm: path.join(abs, "slurm") };
}

/** Files of one run: `runs/<id>/results.jsonl`, `model.json`, `checkpoint.json`, `failure.json`. @category Sweeps */
export interface RunFiles {
  readonly dir: string;
  readonly results: string;
  readonly model: string;
  readonly checkpoint: string;
  /** Written when the run fails (error code, path and message); removed when it finishes. */
  readonly failure: string;
}

/**
 * The files of one run inside a sweep folder.
 * @param dir - The sweep folder.
 * @param id - The run's id.
 * @returns Absolute paths.
 * @category Sweeps
 */
export function runFiles(dir: string, id: string): RunFiles {
  const d = path.join(sweepFolder(dir).runs, id);
  return { dir: d, results: path.join(d, "results.jsonl"), model: path.join(d, "model.json"), checkpoint: path.join(d, "checkpoint.json"), failure: path.join(d, "failure.json") };
}

/**
 * Writes the plan as `DIR/runs.json` (atomically), creating the folder. When the folder already holds a
 * plan, its runs must be the same (same ids in the same order): a folder holds one sweep.
 * @param dir - The sweep folder.
 * @param plan - The plan.
 * @throws `EbbflowError` `invalid_config` (path = the plan file) when the folder holds a different sweep.
 * @category Sweeps
 */
export async function writeSweepPlan(dir: string, plan: SweepPlan): Promise<void> {
  const f = sweepFolder(dir);
  await ensureFolder(f.runs, "--out");
  // temporary files of writers that died (other live runners' are left alone)
  await cleanTemporaryFiles(f.dir, { deadOnly: true });
  if (await exists(f.plan)) {
    const existing = await readSweepPlan(dir);
    const a = existing.runs.map((r) => r.id).join(",");
    const b = plan.runs.map((r) => r.id).join(",");
    if (a !== b) fail("invalid_config", f.plan, "the same runs as the sweep already in this folder (use another --out for a different sweep)", `${plan.runs.length} runs that differ from its ${existing.runs.length}`);
  }
  await writeFileAtomic(f.plan, JSON.stringify(plan, null, 1) + "\n");
}

/**
 * Reads a sweep folder's plan (`DIR/runs.json`).
 * @param dir - The sweep folder.
 * @returns The plan.
 * @throws `EbbflowError` `io_error` when missing, `parse_error` when not a plan.
 * @category Sweeps
 */
export async function readSweepPlan(dir: string): Promise<SweepPlan> {
  const file = sweepFolder(dir).plan;
  const raw = (await readJsonFile(file, "sweep plan (runs.json; start the sweep with ebbflow sweep run)")) as Partial<SweepPlan> | null;
  if (raw === null || typeof raw !== "object" || raw.format !== SWEEP_PLAN_FORMAT) {
    fail("parse_error", file, `a sweep plan (format ${JSON.stringify(SWEEP_PLAN_FORMAT)})`, raw === null || typeof raw !== "object" ? raw : raw.format);
  }
  // rules of the user's own come from the plan's plugins (absolute paths or URLs): loaded before the runs are checked
  const plugins = (raw as { plugins?: unknown }).plugins;
  const registry = Array.isArray(plugins) && plugins.length > 0 && plugins.every((p) => typeof p === "string") ? await loadPlugins(plugins as string[]) : undefined;
  return parseSweepPlan(raw, file, registry);
}

/** What a run's folder shows. @category Sweeps */
export interface RunProgress {
  /** The results have an end line and the final model is saved. */
  readonly finished: boolean;
  /** Epochs in the results file. */
  readonly epochs: number;
  /** Epoch of the last checkpoint (0 without one). */
  readonly checkpointEpoch: number;
  /** The run's results, when the file exists and reads. */
  readonly results: Results | null;
  /** The failure record of the last attempt, when it failed. */
  readonly failure: RunFailure | null;
}

/** The failure record of a run (`failure.json`). @category Sweeps */
export interface RunFailure {
  readonly code: string;
  readonly path: string;
  readonly message: string;
  /** ISO 8601 time of the failure. */
  readonly at: string;
}

async function exists(file: string): Promise<boolean> {
  try {
    await fs.access(file);
    return true;
  } catch {
    return false;
  }
}

/**
 * Reads the state of a run's folder. A run counts as finished when its results end with an end line and
 * `model.json` exists (the end line is written last).
 * @param dir - The sweep folder.
 * @param run - The run.
 * @returns What the folder shows.
 * @category Sweeps
 */
export async function readRunProgress(dir: string, run: Pick<SweepRun, "id">): Promise<RunProgress> {
  const files = runFiles(dir, run.id);
  let results: Results | null = null;
  try {
    results = readResults(await fs.readFile(files.results, "utf8"), files.results);
  } catch {
    results = null;
  }
  let checkpointEpoch = 0;
  try {
    // the trainer state is at the end of the file; its epoch is the checkpoint's
    const data = JSON.parse(await fs.readFile(files.checkpoint, "utf8")) as { trainer?: { epoch?: unknown } };
    if (typeof data.trainer?.epoch === "number") checkpointEpoch = data.trainer.epoch;
  } catch {
    checkpointEpoch = 0;
  }
  let failure: RunFailure | null = null;
  try {
    failure = JSON.parse(await fs.readFile(files.failure, "utf8")) as RunFailure;
  } catch {
    failure = null;
  }
  const finished = results?.end !== undefined && (await exists(files.model));
  return { finished, epochs: results?.epochs.length ?? 0, checkpointEpoch, results, failure };
}

/**
 * The run at an index of a plan.
 * @param plan - The plan.
 * @param index - A run index (the scheduler's array task id).
 * @returns The run.
 * @throws `EbbflowError` `invalid_parameter` (`--index`) when the plan has no such run.
 * @category Sweeps
 */
export function runAt(plan: SweepPlan, index: number): SweepRun {
  const run = plan.runs[index];
  if (run === undefined || !Number.isInteger(index)) throw new EbbflowError(issueText("invalid_parameter", "--index", `a run index from 0 to ${plan.runs.length - 1}`, String(index)));
  return run;
}
