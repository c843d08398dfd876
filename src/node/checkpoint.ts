/**
 * Checkpoints of training runs (Node only), written atomically and validated in full when read.
 *
 * A checkpoint (version 2) holds the model (declaration and weights, with its own checksum), the trainer's
 * state, the run's config and its hash (the run's identity), the time the run started, the stop reason
 * once training has stopped, and the changes of experiment accepted on resumes. `checksum` is the SHA-256
 * of the canonical JSON of everything else: reading checks every field's type and range (paths name the
 * field), then the checksum, so a damaged file is a typed error and never a hang or a different run.
 * Version 1 checkpoints (no checksum, no identity, no stop reason) are refused with a clear error.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { z } from "zod";
import { EbbflowError, describeValue, fail, inputShapeIssues, issueText, type Issue } from "../errors/index.js";
import { savedDataIssues } from "../errors/saved.js";
import { checksumIssue, contentChecksum, modelFromData, modelToData, type ModelFile } from "../config/modelFile.js";
import type { BuildOptions, Network } from "../network/network.js";
import type { StopReason, Trainer, TrainerState } from "../train/loop.js";
import { trainerStateIssues } from "../train/state.js";
import { writeFileAtomic } from "./files.js";
import { ioFail } from "./io.js";
import { configHashOf, type ConfigChange } from "./run/identity.js";
import { historyFromResults, type HistoryReference } from "./run/history.js";

export { ResultsWriter } from "./run/results.js";

/** Identifier in a checkpoint file's `format` field. @category Files */
export const CHECKPOINT_FORMAT = "ebbflow-checkpoint";
/** Current checkpoint version. @category Files */
export const CHECKPOINT_VERSION = 2;

/** A checkpoint file as data. @category Files */
export interface CheckpointFile {
  readonly format: typeof CHECKPOINT_FORMAT;
  readonly version: typeof CHECKPOINT_VERSION;
  /** SHA-256 of the canonical JSON of the other fields. */
  readonly checksum: string;
  /** Hash of `config` (the run's identity). */
  readonly configHash: string;
  /** When the run started (kept across resumes). */
  readonly started: string;
  /** Why training stopped, once it has (null while it goes on). */
  readonly stopped: StopReason | null;
  /** Changes of experiment accepted on resumes, oldest first. */
  readonly changes: readonly ConfigChange[];
  /** Where the epoch records are when they are not in `trainer.history` (then empty): lines of the results file. */
  readonly history: HistoryReference | null;
  readonly config: Readonly<Record<string, unknown>>;
  readonly model: ModelFile;
  readonly trainer: TrainerState;
}

/** What a run records in its checkpoint besides the trainer: identity, start time, stop reason, accepted changes. @category Files */
export interface CheckpointRun {
  /** Hash of the config (computed from it when left out). */
  readonly configHash?: string | undefined;
  /** ISO 8601 start time of the run (default: now). */
  readonly started?: string | undefined;
  /** Why training stopped, or null while it goes on (default null). */
  readonly stopped?: StopReason | null | undefined;
  /** Accepted changes of experiment (default none). */
  readonly changes?: readonly ConfigChange[] | undefined;
  /**
   * The epoch records are in a results file beside the checkpoint (its name and the chain of its epoch
   * lines so far): the checkpoint refers to them instead of holding them, and stays the same size however
   * long the run. Default: the history is stored in the checkpoint.
   */
  readonly history?: { readonly file: string; readonly chain: string } | undefined;
}

/** A checkpoint read back: the rebuilt network (bit-exact weights), the trainer state and the run's record. @category Files */
export interface LoadedCheckpoint {
  readonly net: Network;
  readonly state: TrainerState;
  readonly config: Readonly<Record<string, unknown>>;
  readonly configHash: string;
  readonly started: string;
  readonly stopped: StopReason | null;
  readonly changes: readonly ConfigChange[];
}

/**
 * Writes a checkpoint of `trainer` atomically (temporary file, flush, rename).
 * @param file - The checkpoint file.
 * @param trainer - The trainer (its network and state are saved).
 * @param config - The run's config (plain data).
 * @param run - Identity, start time, stop reason and accepted changes.
 * @category Files
 */
export async function saveCheckpoint(file: string, trainer: Trainer, config: Readonly<Record<string, unknown>>, run: CheckpointRun = {}): Promise<void> {
  const body = {
    format: CHECKPOINT_FORMAT as typeof CHECKPOINT_FORMAT,
    version: CHECKPOINT_VERSION as typeof CHECKPOINT_VERSION,
    configHash: run.configHash ?? configHashOf(config),
    started: run.started ?? new Date().toISOString(),
    stopped: run.stopped ?? null,
    changes: run.changes ?? [],
    history: run.history !== undefined ? { file: run.history.file, epochs: trainer.epoch, chain: run.history.chain } : null,
    config,
    model: modelToData(trainer.net),
    trainer: run.history !== undefined ? { ...trainer.saveState(), history: [] } : trainer.saveState(),
  };
  const data: CheckpointFile = { ...body, checksum: contentChecksum(body) };
  await writeFileAtomic(file, JSON.stringify(data) + "\n");
}

const hex64 = z.string({ error: "64 lowercase hexadecimal digits" }).regex(/^[0-9a-f]{64}$/, { error: "64 lowercase hexadecimal digits" });
const ISO_DATE = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:\d{2})$/;
const isoDate = z.string({ error: "an ISO 8601 date-time" }).refine((s) => ISO_DATE.test(s) && Number.isFinite(Date.parse(s)), { error: "an ISO 8601 date-time" });
const stopReason = z.enum(["max-epochs", "early-stopping", "target-reached", "callback"], { error: "one of max-epochs, early-stopping, target-reached, callback" });

/** Schema of a configuration change record. */
const changeSchema = z
  .object({ epoch: z.number().int().min(0), at: isoDate, from: hex64, to: hex64, paths: z.array(z.string()).max(20) })
  .strict();

/** Schema of a checkpoint's top level (the model and the trainer state have their own validators). */
const checkpointSchema = z
  .object({
    format: z.literal(CHECKPOINT_FORMAT, { error: JSON.stringify(CHECKPOINT_FORMAT) }),
    version: z.literal(CHECKPOINT_VERSION, { error: `${CHECKPOINT_VERSION} (version 1 checkpoints carry no checksum or run identity: start the run again with --overwrite)` }),
    checksum: hex64,
    configHash: hex64,
    started: isoDate,
    stopped: stopReason.nullable(),
    changes: z.array(changeSchema),
    history: z
      .object({
        file: z.string().regex(/^[^/\\\0]+$/, { error: "a file name beside the checkpoint" }).refine((s) => s !== "." && s !== "..", { error: "a file name beside the checkpoint" }),
        epochs: z.number().int().min(0).max(Number.MAX_SAFE_INTEGER),
        chain: hex64,
      })
      .strict()
      .nullable(),
    config: z.record(z.string(), z.unknown(), { error: "the run's config as an object" }),
    model: z.record(z.string(), z.unknown(), { error: "a model file object" }),
    trainer: z.record(z.string(), z.unknown(), { error: "a trainer state object" }),
  })
  .strict();

/**
 * Validates a checkpoint given as data and rebuilds its network (see the module notes for the checks).
 * @param data - The parsed checkpoint.
 * @param where - The file's name, put before every error path (`checkpoint.json: trainer.epoch`).
 * @param options - Where to build the network (kernels, allocation).
 * @returns The network, the trainer state and the run's record.
 * @throws `EbbflowError` `parse_error` naming the field, or the checksum when only it disagrees.
 * @category Files
 */
export function checkpointFromData(data: unknown, where: string, options: BuildOptions = {}, resultsText?: string): LoadedCheckpoint {
  const named = (issues: readonly Issue[]) => new EbbflowError(issues.map((i) => ({ ...i, code: i.code === "invalid_config" ? ("parse_error" as const) : i.code, path: `${where}: ${i.path}` })));
  if (data === null || typeof data !== "object" || Array.isArray(data)) throw named([issueText("parse_error", "(root)", "a checkpoint object", data === null ? "null" : Array.isArray(data) ? "an array" : typeof data)]);
  const shape = inputShapeIssues(data);
  if (shape.length > 0) throw named(shape);
  const r = checkpointSchema.safeParse(data);
  if (!r.success) {
    throw named(savedDataIssues(r.error.issues, data));
  }
  const c = r.data;
  let net: Network;
  try {
    net = modelFromData(c.model, options);
  } catch (e) {
    if (e instanceof EbbflowError) throw named(e.issues.map((i) => ({ ...i, path: i.path === "" ? "model" : `model.${i.path}` })));
    throw e;
  }
  let trainer: Record<string, unknown> = c.trainer;
  const fits = { layers: net.layers, examples: 0, persistentStates: false };
  if (c.history !== null) {
    // the state's own fields first (its history is checked once read from the results file)
    const own = trainerStateIssues(trainer, fits).filter((i) => !i.path.startsWith("trainer.history"));
    if (own.length > 0) throw named(own);
    const ref = c.history;
    if (!Array.isArray(trainer.history) || trainer.history.length > 0) throw named([issueText("parse_error", "trainer.history", "[] (the history is in the results file)", describeValue(trainer.history))]);
    if (ref.epochs !== trainer.epoch) throw named([issueText("parse_error", "history.epochs", `the trainer's epoch (${describeValue(trainer.epoch)})`, String(ref.epochs))]);
    if (resultsText === undefined) throw named([issueText("parse_error", "history", "the results file it refers to", "none given")]);
    trainer = { ...trainer, history: historyFromResults(resultsText, ref, ref.file) };
  }
  const problems = trainerStateIssues(trainer, fits);
  if (problems.length > 0) throw named(problems);
  const identity = configHashOf(c.config);
  if (identity !== c.configHash) throw named([issueText("parse_error", "configHash", `the hash of config (${identity.slice(0, 12)}...)`, `${c.configHash.slice(0, 12)}...`)]);
  const bad = checksumIssue(data as Record<string, unknown>, "checksum");
  if (bad !== null) throw named([bad]);
  return { net, state: trainer as unknown as TrainerState, config: c.config, configHash: c.configHash, started: c.started, stopped: c.stopped, changes: c.changes };
}

/**
 * Reads a checkpoint: the rebuilt network (bit-exact weights), the trainer state and the run's record.
 * The trainer state is checked again, against the trainer, by `Trainer.loadState`.
 * @param file - The checkpoint file.
 * @param options - Where to build the network.
 * @returns The checkpoint.
 * @throws `EbbflowError` `io_error` when unreadable, `parse_error` naming the damaged field.
 * @category Files
 */
export async function loadCheckpoint(file: string, options: BuildOptions = {}): Promise<LoadedCheckpoint> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return ioFail(e, file, "a readable checkpoint");
  }
  let data: unknown;
  try {
    data = JSON.parse(text) as unknown;
  } catch (e) {
    return fail("parse_error", file, "JSON text", (e as Error).message);
  }
  // a checkpoint whose history is in the results file beside it: read that file too
  const ref = (data as { history?: { file?: unknown } } | null)?.history?.file;
  let results: string | undefined;
  if (typeof ref === "string" && /^[^/\\\0]+$/.test(ref) && ref !== "." && ref !== "..") {
    const resultsFile = path.join(path.dirname(file), ref);
    try {
      results = await fs.readFile(resultsFile, "utf8");
    } catch (e) {
      return ioFail(e, resultsFile, "the results file holding the checkpoint's history");
    }
  }
  return checkpointFromData(data, file, options, results);
}
