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
import { loadCheckpoint, ResultsWriter, saveCheckpoint } from "../checkpoint.js";
import { saveModel, writeFileAtomic } from "../files.js";
import { resolveData } from "../sources.js";
import { resolveSplitPaths } from "../fixed-split.js";
import { VERSION } from "../../cli/version.js";
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
  /** `finished` now, `skipped` because it had finished before, or `failed`. */
  readonly status: "finished" | "skipped" | "failed";
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

/** The checkpoint's extra record: the run's id and config, and whether training had already stopped. */
interface CheckpointNote {
  readonly run: string;
  readonly seed: number | string;
  readonly stopped: StopReason | null;
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
  try {
    const progress = await readRunProgress(task.dir, run);
    if (progress.finished) return { index: run.index, id: run.id, status: "skipped", resumedFrom: 0, epochs: progress.epochs, stopped: progress.results?.end?.stopped };
    await fs.mkdir(files.dir, { recursive: true });
    // temporary files of an atomic write cut short by a crash (the files they were to replace are intact)
    for (const name of await fs.readdir(files.dir)) if (/^\..+\.tmp$/.test(name)) await fs.rm(path.join(files.dir, name), { force: true });
    const { config, seed } = run;
    const { train, test } = await resolveData(dataSource(config.data.source, task.baseDir), {
      testFraction: config.data.testFraction,
      seed,
      targetColumns: config.data.targetColumns,
      oneHot: config.data.oneHot,
      scale: config.data.scale,
      split: config.data.split === undefined ? undefined : resolveSplitPaths(config.data.split, task.baseDir),
    });
    const registry = await loadPlugins(task.plugins ?? []);
    let net = buildNetwork(config.network, { units: registry.units });
    let stopped: StopReason | null = null;
    let state = null;
    if (progress.checkpointEpoch > 0) {
      const saved = await loadCheckpoint(files.checkpoint, { units: registry.units });
      const note = saved.config as { sweepRun?: CheckpointNote } | null;
      if (note?.sweepRun?.run === run.id) {
        net = saved.net;
        state = saved.state;
        stopped = note.sweepRun.stopped;
        resumedFrom = saved.state.epoch;
      }
    }
    const trainer = new Trainer(net, config.rule, train, config.training, { test, seed, registry });
    if (state !== null) trainer.loadState(state);
    const header = { kind: "header" as const, ebbflow: VERSION, seed, config: { ...config, sweepRun: { id: run.id, configuration: run.configuration, index: run.index } }, started: new Date().toISOString() };
    const writer = new ResultsWriter(files.results, header, trainer.history);
    const note = (s: StopReason | null) => ({ ...config, sweepRun: { run: run.id, seed, stopped: s } satisfies CheckpointNote });
    const t0 = Date.now();
    let reason: StopReason | null = stopped ?? (trainer.epoch >= config.training.epochs ? "max-epochs" : null);
    while (reason === null) {
      const record = trainer.runEpoch();
      reason = trainer.stopAfter(record);
      await writer.epoch(record);
      if (reason === null && record.epoch % task.checkpointEvery === 0) await saveCheckpoint(files.checkpoint, trainer, note(null));
    }
    // final checkpoint, then the model, then the end line: an end line means everything is on disk
    await saveCheckpoint(files.checkpoint, trainer, note(reason));
    await saveModel(files.model, trainer.net);
    await writer.end(reason, trainer.epoch, (Date.now() - t0) / 1000);
    await fs.rm(files.failure, { force: true });
    return { index: run.index, id: run.id, status: "finished", resumedFrom, epochs: trainer.epoch, stopped: reason };
  } catch (e) {
    const error: RunFailure =
      e instanceof EbbflowError
        ? { code: e.code, path: e.path, message: e.message, at: new Date().toISOString() }
        : { code: "error", path: "", message: (e as Error)?.message ?? String(e), at: new Date().toISOString() };
    await fs.mkdir(files.dir, { recursive: true }).catch(() => undefined);
    await writeFileAtomic(files.failure, JSON.stringify({ ...error, run: run.id, index: run.index }) + "\n").catch(() => undefined);
    return { index: run.index, id: run.id, status: "failed", resumedFrom, epochs: 0, error };
  }
}
