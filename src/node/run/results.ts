/**
 * Writing `results.jsonl` by appending: the header and the epochs a run resumes with are written once
 * (atomically, replacing any previous file), then each epoch is one appended line and the end line is
 * appended last and flushed. Time per epoch stays constant however long the run (the file used to be
 * rewritten in full after every epoch, which made runs quadratic in their length).
 *
 * A crash can leave a torn last line (a line cut short); {@link inspectResults} finds it, and a resumed run
 * repairs the file by writing it again from its checkpoint (whose history holds every epoch's record).
 * @module
 */
import { promises as fs } from "node:fs";
import type { EpochRecord, StopReason } from "../../train/loop.js";
import { readResults, type Results, type ResultsHeaderLine } from "../plot/results.js";
import { writeFileAtomic } from "../files.js";
import { ioFail } from "../io.js";
import { chainHistory, HISTORY_CHAIN_START } from "./history.js";

/**
 * Results as JSON Lines: a header with the config and seed, one object per epoch, an end line (see the
 * module notes). The first write puts the header and the given history in place atomically; later ones append.
 * @category Files
 */
export class ResultsWriter {
  readonly file: string;
  private readonly first: string;
  private handle: fs.FileHandle | null = null;
  private opened = false;
  private chainValue: string;
  private count: number;

  /**
   * @param file - The results file.
   * @param header - The header line.
   * @param history - Epochs already run (a resumed run's history), written after the header.
   */
  constructor(file: string, header: ResultsHeaderLine, history: readonly EpochRecord[] = []) {
    this.file = file;
    const lines = history.map((r) => JSON.stringify(r));
    this.first = [JSON.stringify(header), ...lines].join("\n") + "\n";
    this.chainValue = lines.reduce(chainHistory, HISTORY_CHAIN_START);
    this.count = lines.length;
  }

  /** The history chain over the epoch lines written so far (see `chainHistory`). */
  get chain(): string {
    return this.chainValue;
  }

  /** Epoch lines written so far. */
  get epochs(): number {
    return this.count;
  }

  /** Flushes the appended lines to disk (before a checkpoint refers to them). */
  async sync(): Promise<void> {
    await this.start();
    try {
      await this.handle?.sync();
    } catch (e) {
      ioFail(e, this.file, "a results file that can be flushed to disk");
    }
  }

  /** Writes the header and history (replacing the file atomically) and opens it for appending; called by the first write if not before. */
  async start(): Promise<void> {
    if (this.opened) return;
    await writeFileAtomic(this.file, this.first);
    try {
      this.handle = await fs.open(this.file, "a");
    } catch (e) {
      ioFail(e, this.file, "a results file open for appending");
    }
    this.opened = true;
  }

  private async append(line: string, flush: boolean): Promise<void> {
    await this.start();
    const h = this.handle;
    if (h === null) return ioFail(new Error("closed"), this.file, "a results file open for appending");
    try {
      await h.appendFile(line + "\n");
      if (flush) await h.sync();
    } catch (e) {
      ioFail(e, this.file, "a writable results file");
    }
  }

  /** Appends an epoch's line. */
  async epoch(record: EpochRecord): Promise<void> {
    const line = JSON.stringify(record);
    await this.append(line, false);
    this.chainValue = chainHistory(this.chainValue, line);
    this.count++;
  }

  /** Appends the end line, flushes the file to disk and closes it. */
  async end(reason: StopReason, epochs: number, seconds: number): Promise<void> {
    await this.append(JSON.stringify({ kind: "end", epochs, stopped: reason, seconds }), true);
    await this.close();
  }

  /** Closes the file (safe to call more than once). */
  async close(): Promise<void> {
    const h = this.handle;
    this.handle = null;
    if (h !== null) await h.close().catch(() => undefined);
  }
}

/** What a results file on disk shows. @category Files */
export interface ResultsInspection {
  /** The file exists. */
  readonly exists: boolean;
  /** The last line was cut short (no newline, or not a JSON object): a crash during an append. */
  readonly torn: boolean;
  /** The file (without a torn last line) is a valid results file; null otherwise. */
  readonly results: Results | null;
}

/**
 * Reads a results file leniently: detects a torn last line, and validates the rest.
 * @param file - The results file.
 * @returns What it shows (never throws for a missing or damaged file).
 * @category Files
 */
export async function inspectResults(file: string): Promise<ResultsInspection> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch {
    return { exists: false, torn: false, results: null };
  }
  let torn = false;
  if (text.length > 0 && !text.endsWith("\n")) {
    torn = true;
    text = text.slice(0, text.lastIndexOf("\n") + 1);
  }
  let results: Results | null = null;
  try {
    results = readResults(text, file);
  } catch {
    results = null;
  }
  return { exists: true, torn, results };
}
