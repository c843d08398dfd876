/**
 * Running one run of a sweep, epoch by epoch, in whatever process or thread calls it (the main process, a
 * worker thread, a Slurm task): results, checkpoints and the final model are written atomically into
 * `runs/<id>/`, so a crash loses at most the epochs since the last checkpoint, and running it again skips a
 * finished run or resumes from the checkpoint. The same run gives the same bits wherever it runs.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { EbbflowError } from "../../errors/index.js";
import { buildNetwork } from "../../network/network.js";
import { Trainer, type StopReason } from "../../train/loop.js";
import type { SweepRun } from "../../sweep/expand.js";
import { writeFileAtomic } from "../files.js";
import { resolveData } from "../sources.js";
import { resolveSplitPaths } from "../fixed-split.js";
import { VERSION } from "../../cli/version.js";
import { claimRunFolder, ensureFolder, isFolderBusy } from "../run/folder.js";
import { driveRun, findRunStart, restoreTrainer } from "../run/driver.js";
import { loadPlugins } from "../plugins.js";
import { readRunProgress, runFiles, type RunFailure } from "./files.js";

/** One run to execute (plain data, so it can be sent to a worker thread). @category Sweeps */
export interface RunTask {
  /** The sweep folder. */
  readonly dir: string;
  readonly run: SweepRun;
  /** Folder that relative data paths are resolved against (the sweep file's). */
  readonly baseDir: string;
  /** Epochs between checkpoints. */
  readonly checkpointEvery: number;
  /** Modules defining rules of the user's own (the plan's `plugins`), imported before the run. */
  readonly plugins?: readonly string[] | undefined;
}

/** What became of a run. @category Sweeps */
export interface RunReport {
  readonly index: number;
  readonly id: string;
  /** `finished` now, `skipped` because it had finished before, `busy` because another process is running it (its folder is locked), or `failed`. */
  readonly status: "finished" | "skipped" | "busy" | "failed";
  /** Epoch of the checkpoint it resumed from (0 when it started afresh). */
  readonly resumedFrom: number;
  /** Epochs run in total. */
  readonly epochs: number;
  readonly stopped?: StopReason | undefined;
  readonly error?: RunFailure | undefined;
}

/** A data source naming a file (rather than a built-in set) is resolved against the sweep file's folder. */
function dataSource(source: string, baseDir: string): string {
  return /\.(csv|tsv|json)$/i.test(source) ? path.resolve(baseDir, source) : source;
}

/**
 * Executes one run of a sweep (see the module notes). Errors do not throw: they are returned in the
 * report and recorded in the run's `failure.json`.
 * @param task - The run, the sweep folder, the data folder and the checkpoint interval.
 * @returns The run's report.
 * @category Sweeps
 */
export async function executeRun(task: RunTask): Promise<RunReport> {
  const { run } = task;
  const files = runFiles(task.dir, run.id);
  let resumedFrom = 0;
  let release: (() => Promise<void>) | null = null;
  try {
    const progress = await readRunProgress(task.dir, run);
    if (progress.finished) return { index: run.index, id: run.id, status: "skipped", resumedFrom: 0, epochs: progress.epochs, stopped: progress.results?.end?.stopped };
    // the run's lock: a second runner of the same sweep leaves this run (and its files) to the first
    let claimed;
    try {
      claimed = await claimRunFolder(files.dir, "resume", `runs/${run.id}`);
    } catch (e) {
      if (isFolderBusy(e)) return { index: run.index, id: run.id, status: "busy", resumedFrom: 0, epochs: progress.epochs };
      throw e;
    }
    release = claimed.lock.release;
    const { config, seed } = run;
    const { train, test } = await resolveData(dataSource(config.data.source, task.baseDir), {
      testFraction: config.data.testFraction,
      seed,
      targetColumns: config.data.targetColumns,
      targetLayers: config.data.targetLayers,
      inputLayers: config.data.inputLayers,
      oneHot: config.data.oneHot,
      scale: config.data.scale,
      sequenceColumn: config.data.sequenceColumn,
      split: config.data.split === undefined ? undefined : resolveSplitPaths(config.data.split, task.baseDir),
    });
    const registry = await loadPlugins(task.plugins ?? []);
    // the run's record: its resolved config (its hash is the run's identity) and its place in the sweep
    const record = { ...config, sweepRun: { id: run.id, configuration: run.configuration, index: run.index } };
    const start = await findRunStart(claimed.files, { config: record, build: { units: registry.units }, what: `runs/${run.id}` });
    const trainer = new Trainer(start.checkpoint?.net ?? buildNetwork(config.network, { units: registry.units }), config.rule, train, config.training, { test, seed, registry });
    restoreTrainer(trainer, start);
    resumedFrom = trainer.epoch;
    const result = await driveRun({ trainer, files: claimed.files, config: record, seed, checkpointEvery: task.checkpointEvery, start });
    await fs.rm(files.failure, { force: true });
    // another runner may have finished it between the first look and taking the lock
    return { index: run.index, id: run.id, status: result.alreadyFinished ? "skipped" : "finished", resumedFrom, epochs: result.epochs, stopped: result.reason };
  } catch (e) {
    const error: RunFailure =
      e instanceof EbbflowError
        ? { code: e.code, path: e.path, message: e.message, at: new Date().toISOString() }
        : { code: "error", path: "", message: (e as Error)?.message ?? String(e), at: new Date().toISOString() };
    await ensureFolder(files.dir).catch(() => undefined);
    await writeFileAtomic(files.failure, JSON.stringify({ ...error, run: run.id, index: run.index }) + "\n").catch(() => undefined);
    return { index: run.index, id: run.id, status: "failed", resumedFrom, epochs: 0, error };
  } finally {
    if (release !== null) await release();
  }
}
