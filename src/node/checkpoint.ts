/**
 * Checkpoints and results files of training runs (Node only). Both are written atomically.
 * @module
 */
import { promises as fs } from "node:fs";
import { fail } from "../errors/index.js";
import { modelFromData, modelToData, type ModelFile } from "../config/modelFile.js";
import type { BuildOptions, Network } from "../network/network.js";
import type { EpochRecord, StopReason, Trainer, TrainerState } from "../train/loop.js";
import { writeFileAtomic } from "./files.js";
import type { ResultsHeaderLine } from "./plot/results.js";

/** Identifier in a checkpoint file's `format` field. @category Files */
export const CHECKPOINT_FORMAT = "ebbflow-checkpoint";

/** A checkpoint: the model (declaration and weights), the trainer's state and the run's config. @category Files */
export interface CheckpointFile {
  readonly format: typeof CHECKPOINT_FORMAT;
  readonly version: 1;
  readonly config: unknown;
  readonly model: ModelFile;
  readonly trainer: TrainerState;
}

/** Writes a checkpoint of `trainer` atomically (temporary file, then rename). @category Files */
export async function saveCheckpoint(file: string, trainer: Trainer, config: unknown): Promise<void> {
  const data: CheckpointFile = { format: CHECKPOINT_FORMAT, version: 1, config, model: modelToData(trainer.net), trainer: trainer.saveState() };
  await writeFileAtomic(file, JSON.stringify(data) + "\n");
}

/** Reads a checkpoint: the rebuilt network (bit-exact weights), the trainer state and the config. @category Files */
export async function loadCheckpoint(file: string, options: BuildOptions = {}): Promise<{ net: Network; state: TrainerState; config: unknown }> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return fail("io_error", file, "a readable checkpoint", (e as Error).message);
  }
  let data: Partial<CheckpointFile>;
  try {
    data = JSON.parse(text) as Partial<CheckpointFile>;
  } catch (e) {
    return fail("parse_error", file, "JSON text", (e as Error).message);
  }
  if (data.format !== CHECKPOINT_FORMAT) fail("parse_error", `${file}: format`, JSON.stringify(CHECKPOINT_FORMAT), data.format);
  if (data.trainer === undefined || data.model === undefined) fail("parse_error", `${file}: trainer`, "a trainer state and a model", "missing");
  return { net: modelFromData(data.model, options), state: data.trainer, config: data.config };
}

/**
 * Results as JSON Lines: a header with the config and seed, one object per epoch, an end line.
 * The whole file is rewritten atomically after every epoch, so it always matches a finished epoch.
 * @category Files
 */
export class ResultsWriter {
  readonly file: string;
  private readonly lines: string[];

  constructor(file: string, header: ResultsHeaderLine, history: readonly EpochRecord[] = []) {
    this.file = file;
    this.lines = [JSON.stringify(header), ...history.map((r) => JSON.stringify(r))];
  }

  /** Appends an epoch and rewrites the file. */
  async epoch(record: EpochRecord): Promise<void> {
    this.lines.push(JSON.stringify(record));
    await writeFileAtomic(this.file, this.lines.join("\n") + "\n");
  }

  /** Appends the end line and rewrites the file. */
  async end(reason: StopReason, epochs: number, seconds: number): Promise<void> {
    this.lines.push(JSON.stringify({ kind: "end", epochs, stopped: reason, seconds }));
    await writeFileAtomic(this.file, this.lines.join("\n") + "\n");
  }
}
