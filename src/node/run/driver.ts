/**
 * The epoch driver shared by `ebbflow train` and the sweep runner: it runs a constructed `Trainer` epoch by
 * epoch and writes the run folder in one fixed order, so that what is on disk always tells how far the run
 * got and a resumed run continues exactly where it stopped:
 *
 * 1. per epoch: the epoch's results line is appended; then, when a checkpoint is due (every
 *    `checkpointEvery` epochs) or training stops, the checkpoint is written, carrying the stop reason;
 * 2. after the last epoch: the final model, then the end line of the results (flushed to disk).
 *
 * An end line therefore means everything is on disk. A crash after the stop epoch's checkpoint resumes
 * with the recorded stop reason (no extra epoch is trained); a crash before it resumes from the last
 * checkpoint, and the results file is written again from the checkpoint's history (which also repairs a
 * torn last line).
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { fail } from "../../errors/index.js";
import type { BuildOptions } from "../../network/network.js";
import type { EpochRecord, StopReason, Trainer } from "../../train/loop.js";
import { VERSION } from "../../cli/version.js";
import { loadCheckpoint, saveCheckpoint, type LoadedCheckpoint } from "../checkpoint.js";
import { saveModel } from "../files.js";
import type { ResultsHeaderLine } from "../plot/results.js";
import type { RunFolderFiles } from "./folder.js";
import { configDifferences, configHashOf, type ConfigChange } from "./identity.js";
import { inspectResults, ResultsWriter } from "./results.js";

/** Where a run starts: from scratch, or from its folder's checkpoint (with an accepted change of experiment, if any). @category Training */
export interface RunStart {
  /** The checkpoint to resume from, or null to start from scratch. */
  readonly checkpoint: LoadedCheckpoint | null;
  /** The accepted change of experiment, when the config differs from the checkpoint's. */
  readonly change: ConfigChange | null;
}

/** Options of {@link findRunStart}. @category Training */
export interface RunStartOptions {
  /** The run's config now (plain data with `network`, `rule`, `training`, `data`, `seed`). */
  readonly config: Readonly<Record<string, unknown>>;
  /** Accept a config that differs from the checkpoint's (the change is recorded); the network cannot change. */
  readonly acceptChanges?: boolean | undefined;
  /** Where to build the checkpoint's network. */
  readonly build?: BuildOptions | undefined;
  /** How to name the folder in errors (e.g. `--resume`). */
  readonly what?: string | undefined;
}

/**
 * Reads a run folder's checkpoint, if there is one, and checks that it belongs to the same experiment: its
 * config hash must equal the hash of `config`. A different config is refused unless `acceptChanges`, in
 * which case the change (the paths that differ) is returned to be recorded; a different network is always
 * refused (the checkpoint's weights belong to its network).
 * @param files - The run folder's files.
 * @param options - The config now and whether to accept changes.
 * @returns Where the run starts.
 * @throws `EbbflowError` `invalid_config` for another experiment; `parse_error`/`io_error` for a damaged checkpoint.
 * @category Training
 */
export async function findRunStart(files: RunFolderFiles, options: RunStartOptions): Promise<RunStart> {
  const exists = await fs.access(files.checkpoint).then(
    () => true,
    () => false,
  );
  if (!exists) return { checkpoint: null, change: null };
  const checkpoint = await loadCheckpoint(files.checkpoint, options.build);
  const hash = configHashOf(options.config);
  if (hash === checkpoint.configHash) return { checkpoint, change: null };
  const paths = configDifferences(checkpoint.config, options.config);
  const what = options.what ?? files.dir;
  const network = paths.filter((p) => p === "network" || p.startsWith("network.") || p.startsWith("network["));
  if (network.length > 0) fail("invalid_config", what, "the checkpoint's network (its weights belong to it; start a new run for another network)", `a different network: ${network.join(", ")}`);
  if (options.acceptChanges !== true) {
    fail("invalid_config", what, `the experiment of the checkpoint (config ${checkpoint.configHash.slice(0, 12)}), or --accept-changes to continue with the changes recorded in the results`, `a different experiment: ${paths.join(", ")}`);
  }
  return { checkpoint, change: { epoch: checkpoint.state.epoch, at: new Date().toISOString(), from: checkpoint.configHash, to: hash, paths } };
}

/**
 * Restores a trainer from a run start (nothing to do when it starts from scratch). After an accepted
 * change of rule (another rule name), the rule starts from a fresh state.
 * @param trainer - A trainer built on the checkpoint's network.
 * @param start - From {@link findRunStart}.
 * @throws `EbbflowError` `parse_error` when the state does not fit the trainer.
 * @category Training
 */
export function restoreTrainer(trainer: Trainer, start: RunStart): void {
  const c = start.checkpoint;
  if (c === null) return;
  const ruleOf = (config: Readonly<Record<string, unknown>>) => (config.rule as { rule?: unknown } | undefined)?.rule;
  const sameRule = start.change === null || ruleOf(c.config) === trainer.rule.config.rule;
  trainer.loadState(sameRule ? c.state : { ...c.state, rule: {} });
}

/** Options of {@link driveRun}. @category Training */
export interface DriveOptions {
  /** The trainer, built by the caller and restored with {@link restoreTrainer} when resuming. */
  readonly trainer: Trainer;
  /** The run folder's files (its lock held by the caller). */
  readonly files: RunFolderFiles;
  /** The run's config (written to the results header and the checkpoint). */
  readonly config: Readonly<Record<string, unknown>>;
  /** The run's seed (for the results header). */
  readonly seed: number | string;
  /** Epochs between checkpoints (an integer >= 1). */
  readonly checkpointEvery: number;
  /** Where the run starts (default: from scratch). */
  readonly start?: RunStart | undefined;
  /** Called after each epoch is on disk. */
  readonly onEpoch?: ((record: EpochRecord, trainer: Trainer) => void) | undefined;
}

/** What {@link driveRun} did. @category Training */
export interface DriveResult {
  readonly reason: StopReason;
  /** Epochs completed in total. */
  readonly epochs: number;
  /** Epochs completed when this call started (0 from scratch). */
  readonly resumedFrom: number;
  /** Wall-clock seconds of this call. */
  readonly seconds: number;
  /** The run had already finished (end line and model on disk): nothing was written. */
  readonly alreadyFinished: boolean;
  /** The results file had a torn last line (a crash during an append); it was written again. */
  readonly repairedTornLine: boolean;
}

/**
 * Runs a trainer to its end, writing results, checkpoints, model and end line in the fixed order of the
 * module notes.
 * @param o - Trainer, files, config, seed, checkpoint interval, start.
 * @returns Why and when training stopped.
 * @throws `EbbflowError` from training or from the files (`io_error`).
 * @category Training
 */
export async function driveRun(o: DriveOptions): Promise<DriveResult> {
  const { trainer, files } = o;
  const every = o.checkpointEvery;
  if (!Number.isInteger(every) || every < 1) fail("invalid_parameter", "checkpointEvery", "an integer >= 1", every);
  const start = o.start ?? { checkpoint: null, change: null };
  const saved = start.checkpoint;
  const t0 = Date.now();
  const resumedFrom = trainer.epoch;
  const configHash = configHashOf(o.config);
  const started = saved?.started ?? new Date().toISOString();
  const changes = [...(saved?.changes ?? []), ...(start.change !== null ? [start.change] : [])];
  const historyFile = path.basename(files.results);

  // the stop reason recorded in the checkpoint stands; with an accepted change, a higher epoch limit lifts "max-epochs"
  let reason: StopReason | null = saved?.stopped ?? null;
  if (start.change !== null && reason === "max-epochs" && trainer.epoch < trainer.options.epochs) reason = null;
  if (reason === null && trainer.epoch >= trainer.options.epochs) reason = "max-epochs";

  const seen = saved !== null ? await inspectResults(files.results) : null;
  if (saved !== null && start.change === null && reason !== null && reason === saved.stopped && seen?.torn === false) {
    const end = seen.results?.end;
    const modelThere = await fs.access(files.model).then(
      () => true,
      () => false,
    );
    if (end !== undefined && end.epochs === trainer.epoch && end.stopped === reason && modelThere) {
      return { reason, epochs: trainer.epoch, resumedFrom, seconds: 0, alreadyFinished: true, repairedTornLine: false };
    }
  }

  const header: ResultsHeaderLine = {
    kind: "header",
    ebbflow: VERSION,
    seed: o.seed,
    config: o.config,
    configHash,
    started,
    ...(changes.length > 0 ? { changes: changes as unknown as Readonly<Record<string, unknown>>[] } : {}),
  };
  const writer = new ResultsWriter(files.results, header, trainer.history);
  // the checkpoint refers to the results' epoch lines (flushed first) instead of holding the history
  const checkpoint = async (stopped: StopReason | null) => {
    await writer.sync();
    await saveCheckpoint(files.checkpoint, trainer, o.config, { configHash, started, stopped, changes, history: { file: historyFile, chain: writer.chain } });
  };
  try {
    await writer.start();
    let checkpointed = saved !== null && saved.stopped === reason && start.change === null && saved.state.epoch === trainer.epoch;
    while (reason === null) {
      const record = trainer.runEpoch();
      reason = trainer.stopAfter(record);
      if (trainer.hooks.onEpoch?.(record, trainer) === "stop") reason = "callback";
      await writer.epoch(record);
      checkpointed = reason !== null || record.epoch % every === 0;
      if (checkpointed) await checkpoint(reason);
      o.onEpoch?.(record, trainer);
    }
    // a run that stopped without training now (a resumed or changed run): its stop reason goes to the checkpoint
    if (!checkpointed) await checkpoint(reason);
    await saveModel(files.model, trainer.net);
    const seconds = (Date.now() - t0) / 1000;
    await writer.end(reason, trainer.epoch, seconds);
    return { reason, epochs: trainer.epoch, resumedFrom, seconds, alreadyFinished: false, repairedTornLine: seen?.torn === true };
  } finally {
    await writer.close();
  }
}
