/**
 * Training results as JSON Lines: the record types, a validating reader and a
 * file loader.
 *
 * Format (one JSON object per line, UTF-8):
 *
 * 1. a header: `{"kind":"header","ebbflow":"0.1.0","seed":7,"config":{...},"started":"2025-01-31T12:00:00.000Z"}`
 * 2. one line per epoch: `{"kind":"epoch","epoch":1,"seconds":0.12,"rate":0.05,"train":{"sse":0.8,"accuracy":0.5},"test":{...}}`
 * 3. optionally a last line: `{"kind":"end","epochs":30,"stopped":"max-epochs","seconds":3.6}`
 *
 * Whitespace-only lines are skipped (a trailing newline is normal); unknown
 * fields are ignored, so that newer writers stay readable.
 * @module
 */
import { promises as fs } from "node:fs";
import { EbbflowError, fail, issueText, describeValue, type Issue } from "../../errors/index.js";

/**
 * Metrics measured on one split in one epoch. The four named keys are the
 * ones the training loop reports; any key may be missing and further keys are
 * allowed. Every present value is a finite number. Per-layer metrics (a network with several output
 * layers) are read as the keys `layers.<layer>.<metric>`.
 * @category Plots
 */
export interface ResultsMetrics {
  /** Sum of squared errors over the split (>= 0). */
  readonly sse?: number;
  /** Binary cross-entropy over the split (>= 0). */
  readonly binaryCrossEntropy?: number;
  /** Softmax (categorical) cross-entropy over the split (>= 0). */
  readonly softmaxCrossEntropy?: number;
  /** Binary cross-entropy, as files written before the binary and softmax forms were told apart name it (>= 0). */
  readonly crossEntropy?: number;
  /** Fraction of patterns classified correctly, in [0, 1]. */
  readonly accuracy?: number;
  /** Mean cosine between output and target, in [-1, 1]. */
  readonly cosine?: number;
  /** Further metrics by name. */
  readonly [name: string]: number | undefined;
}

/** First line of a results file: what was run, with which seed, when. @category Plots */
export interface ResultsHeaderLine {
  readonly kind: "header";
  /** Version of ebbflow that wrote the file. */
  readonly ebbflow: string;
  /** Seed of the run. */
  readonly seed: number | string;
  /** The experiment: network declaration, rule config and training options. */
  readonly config: Readonly<Record<string, unknown>>;
  /** Start time as an ISO 8601 date-time. */
  readonly started: string;
  /** Hash of the config (the run's identity; SHA-256 of its canonical JSON), when the writer recorded it. */
  readonly configHash?: string | undefined;
  /** Changes of experiment accepted when the run was resumed (see `ConfigChange`), oldest first. */
  readonly changes?: readonly Readonly<Record<string, unknown>>[] | undefined;
}

/** One epoch of training. @category Plots */
export interface ResultsEpochLine {
  readonly kind: "epoch";
  /** Epoch number (integer >= 1, strictly increasing through the file). */
  readonly epoch: number;
  /** Wall-clock seconds spent on this epoch (>= 0). */
  readonly seconds: number;
  /** Learning rate used in this epoch (>= 0). */
  readonly rate: number;
  /** Metrics on the training split (absent when the run did not evaluate it). */
  readonly train?: ResultsMetrics | undefined;
  /** Metrics on the test split, when measured this epoch. */
  readonly test?: ResultsMetrics | undefined;
}

/**
 * Metrics as a results file reader gives them, from the metrics of an evaluation (per-layer metrics as `layers.<layer>.<metric>`).
 * @category Plots
 */
export function resultsMetrics(m: { readonly [name: string]: unknown } | undefined): ResultsMetrics | undefined {
  if (m === undefined) return undefined;
  const out: Record<string, number> = {};
  for (const [k, v] of Object.entries(m)) {
    if (typeof v === "number") out[k] = v;
    else if (k === "layers" && isObject(v)) for (const [layer, inner] of Object.entries(v)) for (const [name, x] of Object.entries(resultsMetrics(inner as Record<string, unknown>) ?? {})) out[`layers.${layer}.${name}`] = x as number;
  }
  return out;
}

/** Why a run stopped. @category Plots */
export type ResultsStopReason = "max-epochs" | "early-stopping" | "target-reached" | "callback" | "non-finite-loss" | "outputs-tied";

/** Optional last line of a results file. @category Plots */
export interface ResultsEndLine {
  readonly kind: "end";
  /** Number of the last epoch run (equals the last epoch line when there is one). */
  readonly epochs: number;
  /** Why the run stopped. */
  readonly stopped: ResultsStopReason;
  /** Total wall-clock seconds (>= 0). */
  readonly seconds: number;
}

/** A parsed, validated results file. @category Plots */
export interface Results {
  /** Where the text came from (file name); set by {@link readResults}, optional for results built in code. */
  readonly source?: string | undefined;
  readonly header: ResultsHeaderLine;
  /** Epoch lines in file order (epochs strictly increasing). */
  readonly epochs: readonly ResultsEpochLine[];
  /** The end line, absent while a run is still going (or if it crashed). */
  readonly end?: ResultsEndLine | undefined;
}

const STOP_REASONS: readonly ResultsStopReason[] = ["max-epochs", "early-stopping", "target-reached", "callback", "non-finite-loss", "outputs-tied"];
const ISO_DATE = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:\d{2})$/;
/** Slack on the bounds of accuracy and cosine, for rounding in the writer. */
const BOUND_SLACK = 1e-9;

type Obj = Record<string, unknown>;

function isObject(v: unknown): v is Obj {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

function isFiniteNumber(v: unknown): v is number {
  return typeof v === "number" && Number.isFinite(v);
}

/** Collects the issues of one line; every issue carries the line's path. */
class LineIssues {
  readonly list: Issue[] = [];
  constructor(readonly path: string) {}
  add(field: string, expected: string, received: unknown): void {
    this.list.push(issueText("parse_error", this.path, `"${field}" to be ${expected}`, describeValue(received)));
  }
}

function readNumber(line: LineIssues, obj: Obj, field: string, prefix: string, min: number): number | undefined {
  const v = obj[field];
  if (!isFiniteNumber(v) || v < min) {
    line.add(prefix + field, min === -Infinity ? "a finite number" : `a finite number >= ${min}`, v);
    return undefined;
  }
  return v;
}

/** Allowed range and its description for a metric, by name. */
function metricRange(name: string): [number, number, string] {
  switch (name) {
    case "sse":
    case "binaryCrossEntropy":
    case "softmaxCrossEntropy":
    case "crossEntropy":
      return [0, Infinity, "a finite number >= 0"];
    case "accuracy":
      return [-BOUND_SLACK, 1 + BOUND_SLACK, "a fraction in [0, 1]"];
    case "cosine":
      return [-1 - BOUND_SLACK, 1 + BOUND_SLACK, "a number in [-1, 1]"];
    default:
      return [-Infinity, Infinity, "a finite number"];
  }
}

function readMetrics(line: LineIssues, value: unknown, split: "train" | "test"): ResultsMetrics | undefined {
  if (!isObject(value)) {
    line.add(split, "an object of metrics (name: finite number)", value);
    return undefined;
  }
  const out: Record<string, number> = {};
  let ok = true;
  for (const [name, v] of Object.entries(value)) {
    if (name === "layers" && isObject(v)) {
      // per output layer metrics, read as the keys `layers.<layer>.<metric>`
      for (const [layer, m] of Object.entries(v)) {
        const inner = isObject(m) ? readMetrics(line, m, `${split}.layers.${layer}` as "train") : (line.add(`${split}.layers.${layer}`, "an object of metrics (name: finite number)", m), undefined);
        if (inner === undefined) ok = false;
        else for (const [k, x] of Object.entries(inner)) out[`layers.${layer}.${k}`] = x as number;
      }
      continue;
    }
    const [lo, hi, expected] = metricRange(name);
    if (!isFiniteNumber(v) || v < lo || v > hi) {
      line.add(`${split}.${name}`, expected, v);
      ok = false;
    } else out[name] = v;
  }
  return ok ? out : undefined;
}

function readHeader(line: LineIssues, obj: Obj): ResultsHeaderLine | undefined {
  const before = line.list.length;
  const { ebbflow, seed, config, started } = obj;
  if (typeof ebbflow !== "string" || ebbflow.length === 0) line.add("ebbflow", "the writer's version as a non-empty string", ebbflow);
  if (!(isFiniteNumber(seed) || typeof seed === "string")) line.add("seed", "a finite number or a string", seed);
  if (!isObject(config)) line.add("config", "an object (the experiment)", config);
  if (typeof started !== "string" || !ISO_DATE.test(started) || !Number.isFinite(Date.parse(started))) {
    line.add("started", "an ISO 8601 date-time such as 2025-01-31T12:00:00.000Z", started);
  }
  if (obj.configHash !== undefined && (typeof obj.configHash !== "string" || !/^[0-9a-f]{64}$/.test(obj.configHash))) line.add("configHash", "64 lowercase hexadecimal digits", obj.configHash);
  if (obj.changes !== undefined && (!Array.isArray(obj.changes) || !obj.changes.every(isObject))) line.add("changes", "an array of change records", obj.changes);
  if (line.list.length > before) return undefined;
  const header: ResultsHeaderLine = { kind: "header", ebbflow: ebbflow as string, seed: seed as number | string, config: config as Obj, started: started as string };
  return { ...header, ...(obj.configHash !== undefined ? { configHash: obj.configHash as string } : {}), ...(obj.changes !== undefined ? { changes: obj.changes as Obj[] } : {}) };
}

function readEpoch(line: LineIssues, obj: Obj): ResultsEpochLine | undefined {
  const before = line.list.length;
  const epoch = obj.epoch;
  if (typeof epoch !== "number" || !Number.isInteger(epoch) || epoch < 1) line.add("epoch", "an integer >= 1", epoch);
  const seconds = readNumber(line, obj, "seconds", "", 0);
  const rate = readNumber(line, obj, "rate", "", 0);
  const train = obj.train === undefined ? undefined : readMetrics(line, obj.train, "train");
  const test = obj.test === undefined ? undefined : readMetrics(line, obj.test, "test");
  if (line.list.length > before) return undefined;
  const record = { kind: "epoch" as const, epoch: epoch as number, seconds: seconds as number, rate: rate as number, ...(train === undefined ? {} : { train }) };
  return test === undefined ? record : { ...record, test };
}

function readEnd(line: LineIssues, obj: Obj): ResultsEndLine | undefined {
  const before = line.list.length;
  const epochs = obj.epochs;
  if (typeof epochs !== "number" || !Number.isInteger(epochs) || epochs < 0) line.add("epochs", "an integer >= 0", epochs);
  const stopped = obj.stopped;
  if (typeof stopped !== "string" || !(STOP_REASONS as readonly string[]).includes(stopped)) {
    line.add("stopped", `one of ${STOP_REASONS.map((s) => `"${s}"`).join(", ")}`, stopped);
  }
  const seconds = readNumber(line, obj, "seconds", "", 0);
  if (line.list.length > before) return undefined;
  return { kind: "end", epochs: epochs as number, stopped: stopped as ResultsStopReason, seconds: seconds as number };
}

function excerpt(text: string): string {
  return text.length > 60 ? `${text.slice(0, 57)}...` : text;
}

/**
 * Parses and validates a training results file (JSON Lines, see the module
 * notes for the format). All problems are collected before throwing.
 * @param text - The file's text.
 * @param source - Name of the file, used in error paths (`<source>:line N`).
 * @returns The header, the epoch records and the end record (if present).
 * @throws EbbflowError `parse_error` naming `<source>:line N`, with what was
 *   expected (e.g. `"train.sse" to be a finite number`) and what was found.
 *   JSON has no NaN: a writer that serialised NaN produced `null`, reported here.
 * @category Plots
 * @example
 * ```ts
 * const r = readResults(
 *   '{"kind":"header","ebbflow":"0.1.0","seed":1,"config":{},"started":"2025-01-31T12:00:00Z"}\n' +
 *   '{"kind":"epoch","epoch":1,"seconds":0.1,"rate":0.05,"train":{"sse":0.5}}\n', "run.jsonl");
 * r.epochs[0]?.train?.sse; // 0.5
 * ```
 */
export function readResults(text: string, source: string): Results {
  if (typeof text !== "string") fail("invalid_parameter", "text", "the results file's text as a string", text);
  if (typeof source !== "string") fail("invalid_parameter", "source", "the name of the results file as a string", source);
  const lines = text.split("\n");
  const issues: Issue[] = [];
  let header: ResultsHeaderLine | undefined;
  let end: ResultsEndLine | undefined;
  let endLine = 0;
  let lastEpoch = 0;
  const epochs: ResultsEpochLine[] = [];
  let seenFirst = false;
  for (let i = 0; i < lines.length; i++) {
    const raw = (lines[i] as string).replace(/\r$/, "");
    if (raw.trim() === "") continue;
    const line = new LineIssues(`${source}:line ${i + 1}`);
    const isFirst = !seenFirst;
    seenFirst = true;
    let value: unknown;
    try {
      value = JSON.parse(raw);
    } catch (e) {
      issues.push(issueText("parse_error", line.path, "one JSON object per line", `${JSON.stringify(excerpt(raw))} (${(e as Error).message})`));
      continue;
    }
    if (!isObject(value)) {
      issues.push(issueText("parse_error", line.path, "one JSON object per line", describeValue(value)));
      continue;
    }
    const kind = value.kind;
    if (end !== undefined) {
      line.add("kind", `nothing after the end line (line ${endLine})`, kind);
    } else if (isFirst) {
      if (kind !== "header") line.add("kind", '"header" on the first line', kind);
      else header = readHeader(line, value);
    } else if (kind === "epoch") {
      const record = readEpoch(line, value);
      if (record !== undefined) {
        if (record.epoch <= lastEpoch) line.add("epoch", `an epoch number > ${lastEpoch} (strictly increasing)`, record.epoch);
        else {
          lastEpoch = record.epoch;
          epochs.push(record);
        }
      }
    } else if (kind === "end") {
      const record = readEnd(line, value);
      if (record !== undefined) {
        if (epochs.length > 0 && record.epochs !== lastEpoch) line.add("epochs", `the last epoch number (${lastEpoch})`, record.epochs);
        end = record;
        endLine = i + 1;
      }
    } else {
      line.add("kind", kind === "header" ? '"epoch" or "end" (the header comes only once, first)' : '"epoch" or "end"', kind);
    }
    issues.push(...line.list);
  }
  if (!seenFirst) issues.push(issueText("parse_error", `${source}:line 1`, "a header line", "an empty file"));
  if (issues.length > 0) throw new EbbflowError(issues);
  const results = { source, header: header as ResultsHeaderLine, epochs };
  return end === undefined ? results : { ...results, end };
}

/**
 * Reads and validates a results file from disk.
 * @param file - Path of a JSON Lines results file.
 * @returns The parsed results; `source` is `file`.
 * @throws EbbflowError `io_error` if the file cannot be read, `parse_error` as {@link readResults}.
 * @category Plots
 */
export async function loadResults(file: string): Promise<Results> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return fail("io_error", file, "a readable results file", (e as Error).message);
  }
  return readResults(text, file);
}
