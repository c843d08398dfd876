/**
 * Data sets of sequences: patterns in order, grouped into sequences, built from arrays, from CSV with a
 * sequence column, or from JSON. A sequence data set is a {@link Dataset} (every pattern an example, in
 * order) with `sequenceStarts`: sequence s holds examples `[starts[s], starts[s + 1])`.
 * @module
 */
import { describeValue, fail } from "../../errors/index.js";
import { checkOptions, resolveColumns, tokenize, type CsvDatasetOptions } from "./csv.js";
import { parseCsvDataset } from "./csv.js";
import { createDataset, makeDataset, type Dataset } from "./dataset.js";
import { IssueList } from "./issues.js";
import { createRandom } from "../../random/index.js";
import { jsonObjectOf, parseJsonDataset } from "./json.js";

/** A data set whose examples form sequences. @category Data */
export interface SequenceDataset extends Dataset {
  /** S + 1 offsets: sequence s holds examples `[sequenceStarts[s], sequenceStarts[s + 1])`; every sequence has at least one pattern. */
  readonly sequenceStarts: Int32Array;
}

/** Does `ds` carry sequences? @category Data */
export function isSequenceDataset(ds: Dataset): ds is SequenceDataset {
  return (ds as Partial<SequenceDataset>).sequenceStarts instanceof Int32Array;
}

/** Number of sequences of a sequence data set. @category Data */
export function sequenceCount(ds: SequenceDataset): number {
  return ds.sequenceStarts.length - 1;
}

/** Checks sequence offsets against a data set's size. */
function checkStarts(starts: Int32Array, size: number, path: string): void {
  if (starts.length < 2 || starts[0] !== 0 || starts[starts.length - 1] !== size) fail("invalid_parameter", path, `offsets from 0 to ${size} (the number of patterns)`, Array.from(starts.slice(0, 5)).join(", "));
  for (let s = 0; s + 1 < starts.length; s++) {
    if (!((starts[s + 1] as number) > (starts[s] as number))) fail("invalid_parameter", `${path}[${s + 1}]`, "increasing offsets (every sequence has at least one pattern)", starts[s + 1]);
  }
}

/**
 * Gives a data set's examples, in order, a grouping into sequences.
 * @param ds - The examples in order.
 * @param starts - S + 1 increasing offsets from 0 to `ds.size`.
 * @throws {@link EbbflowError} `invalid_parameter` (path `starts`).
 * @category Data
 */
export function withSequences(ds: Dataset, starts: Int32Array | readonly number[]): SequenceDataset {
  const s = Int32Array.from(starts as ArrayLike<number>);
  checkStarts(s, ds.size, "starts");
  return Object.freeze({ ...ds, sequenceStarts: s });
}

/** One sequence given as rows: `inputs[t]` and `targets[t]` for position t. @category Data */
export interface SequenceRows {
  readonly inputs: readonly (readonly number[])[];
  readonly targets: readonly (readonly number[])[];
}

/**
 * A sequence data set from arrays: one `{ inputs, targets }` of rows per sequence.
 * @throws {@link EbbflowError} `invalid_parameter` / `shape_mismatch` with paths like `sequences[2].inputs[1][0]`.
 * @category Data
 * @example
 * ```ts
 * const ds = createSequenceDataset("two", [{ inputs: [[1], [0]], targets: [[0], [1]] }, { inputs: [[0]], targets: [[0]] }]);
 * ds.sequenceStarts; // Int32Array [0, 2, 3]
 * ```
 */
export function createSequenceDataset(name: string, sequences: readonly SequenceRows[]): SequenceDataset {
  if (!Array.isArray(sequences) || sequences.length === 0) fail("invalid_parameter", "sequences", "a non-empty array of { inputs, targets }", sequences);
  const inputs: (readonly number[])[] = [];
  const targets: (readonly number[])[] = [];
  const starts = [0];
  sequences.forEach((sq, k) => {
    if (sq === null || typeof sq !== "object" || !Array.isArray(sq.inputs) || !Array.isArray(sq.targets)) fail("invalid_parameter", `sequences[${k}]`, "{ inputs: rows, targets: rows }", sq);
    if (sq.inputs.length === 0) fail("invalid_parameter", `sequences[${k}].inputs`, "at least one pattern", "none");
    if (sq.targets.length !== sq.inputs.length) fail("shape_mismatch", `sequences[${k}].targets`, `${sq.inputs.length} rows (one per input row)`, `${sq.targets.length} rows`);
    inputs.push(...sq.inputs);
    targets.push(...sq.targets);
    starts.push(inputs.length);
  });
  let ds: Dataset;
  try {
    ds = createDataset(name, inputs as number[][], targets as number[][]);
  } catch (e) {
    // name the sequence and position of a bad row
    const issue = (e as { issues?: { path: string }[] }).issues?.[0];
    const m = issue?.path.match(/^(inputs|targets)\[(\d+)\](.*)$/);
    if (m === null || m === undefined) throw e;
    const row = Number(m[2]);
    const s = starts.findIndex((v, i) => i + 1 < starts.length && row >= v && row < (starts[i + 1] as number));
    return fail("shape_mismatch", `sequences[${s}].${m[1]}[${row - (starts[s] as number)}]${m[3]}`, "a row like the first sequence's first row, of finite numbers", describeValue((s >= 0 ? (m[1] === "inputs" ? sequences[s]!.inputs : sequences[s]!.targets)[row - (starts[s] as number)] : undefined)));
  }
  return withSequences(ds, starts);
}

/** Options of {@link parseCsvSequences}: those of `parseCsvDataset` plus the sequence column. @category Data */
export interface CsvSequenceOptions extends CsvDatasetOptions {
  /** The column naming each row's sequence (index or header name): consecutive rows with the same value form one sequence. */
  readonly sequenceColumn: number | string;
}

/**
 * Reads sequences from CSV: the rows in file order, a sequence column naming each row's sequence (its
 * rows must be consecutive); every other column as in `parseCsvDataset`.
 * @throws {@link EbbflowError} as `parseCsvDataset`; `parse_error` at `<source>:row N` for a sequence
 *   whose rows are not consecutive or an empty sequence cell.
 * @category Data
 */
export function parseCsvSequences(text: string, options: CsvSequenceOptions): SequenceDataset {
  if (options === null || typeof options !== "object") fail("invalid_parameter", "options", "an options object with source, targetColumns and sequenceColumn", options);
  const { sequenceColumn, ...rest } = options;
  if (typeof sequenceColumn !== "number" && typeof sequenceColumn !== "string") fail("invalid_parameter", "sequenceColumn", "a column index or header name", sequenceColumn);
  const header = rest.header ?? (typeof sequenceColumn === "string" || rest.targetColumns?.some((c) => typeof c === "string") || (rest.ignoreColumns ?? []).some((c) => typeof c === "string"));
  const ds = parseCsvDataset(text, { ...rest, header, ignoreColumns: [...(rest.ignoreColumns ?? []), sequenceColumn] });
  const { delimiter } = checkOptions({ ...rest, header });
  const issues = new IssueList();
  let col = -1;
  let first = true;
  const starts = [0];
  const seen = new Set<string>();
  let current: string | null = null;
  let rows = 0;
  tokenize(text, delimiter, rest.source, issues, (record) => {
    if (record.blank) return true;
    if (first) {
      first = false;
      const names = header ? record.fields.map((f) => f.trim()) : undefined;
      col = resolveColumns([sequenceColumn], "sequenceColumn", record.fields.length, names)[0] as number;
      if (header) return true;
    }
    const id = (record.fields[col] ?? "").trim();
    if (id === "") return issues.add("parse_error", `${rest.source}:row ${record.row}, column ${col + 1}`, "a sequence name", "an empty cell");
    if (id !== current) {
      if (seen.has(id)) return issues.add("parse_error", `${rest.source}:row ${record.row}, column ${col + 1}`, `the rows of sequence ${JSON.stringify(id)} together (consecutive)`, `${JSON.stringify(id)} again after other sequences`);
      if (current !== null) starts.push(rows);
      seen.add(id);
      current = id;
    }
    rows++;
    return true;
  });
  issues.throwIfAny();
  starts.push(rows);
  return withSequences(ds, starts);
}

/**
 * Reads sequences in ebbflow's JSON format: `{ "name"?, "sequences": [ <data set>, ... ] }`, each sequence
 * an object of the JSON data-set format (`inputs`, `targets` or `labels`, ...), all of the same widths.
 * @throws {@link EbbflowError} `parse_error` with paths like `<source>:sequences[1]:inputs[0][2]`.
 * @category Data
 */
export function parseJsonSequences(text: string, source: string): SequenceDataset {
  const obj = jsonObjectOf(text, source, 'a JSON object { "sequences": [...] }');
  for (const k of Object.keys(obj)) if (k !== "name" && k !== "sequences") fail("parse_error", `${source}:${k}`, "no such key (name, sequences)", k);
  if (obj.name !== undefined && typeof obj.name !== "string") fail("parse_error", `${source}:name`, "a string", describeValue(obj.name));
  const seqs = obj.sequences;
  if (!Array.isArray(seqs) || seqs.length === 0) return fail("parse_error", `${source}:sequences`, "a non-empty array of data sets", describeValue(seqs));
  const parts = seqs.map((sq, k) => parseJsonDataset(JSON.stringify(sq), `${source}:sequences[${k}]`));
  const a = parts[0]!;
  parts.forEach((p, k) => {
    if (p.inputSize !== a.inputSize) fail("shape_mismatch", `${source}:sequences[${k}]:inputs`, `rows of ${a.inputSize} values (as sequences[0])`, `rows of ${p.inputSize}`);
    if (p.targetSize !== a.targetSize) fail("shape_mismatch", `${source}:sequences[${k}]:targets`, `rows of ${a.targetSize} values (as sequences[0])`, `rows of ${p.targetSize}`);
  });
  const size = parts.reduce((n, p) => n + p.size, 0);
  const inputs = new Float64Array(size * a.inputSize);
  const targets = new Float64Array(size * a.targetSize);
  const starts = new Int32Array(parts.length + 1);
  const sameClasses = parts.every((p) => p.labels !== undefined && JSON.stringify(p.classNames) === JSON.stringify(a.classNames));
  const labels = sameClasses ? new Int32Array(size) : undefined;
  let at = 0;
  parts.forEach((p, k) => {
    inputs.set(p.inputs, at * a.inputSize);
    targets.set(p.targets, at * a.targetSize);
    if (labels !== undefined && p.labels !== undefined) labels.set(p.labels, at);
    at += p.size;
    starts[k + 1] = at;
  });
  const ds = makeDataset({ name: (obj.name as string | undefined) ?? source, size, inputSize: a.inputSize, targetSize: a.targetSize, inputs, targets, labels, classNames: labels === undefined ? undefined : a.classNames, inputNames: a.inputNames });
  return withSequences(ds, starts);
}

/** Keeps the sequences `which` (in that order) of a sequence data set. */
function sequenceSubset(ds: SequenceDataset, which: readonly number[], name: string): SequenceDataset {
  const starts = [0];
  const rows: number[] = [];
  for (const s of which) {
    for (let e = ds.sequenceStarts[s] as number; e < (ds.sequenceStarts[s + 1] as number); e++) rows.push(e);
    starts.push(rows.length);
  }
  const inputs = new Float64Array(rows.length * ds.inputSize);
  const targets = new Float64Array(rows.length * ds.targetSize);
  rows.forEach((e, i) => {
    inputs.set(ds.inputs.subarray(e * ds.inputSize, (e + 1) * ds.inputSize), i * ds.inputSize);
    targets.set(ds.targets.subarray(e * ds.targetSize, (e + 1) * ds.targetSize), i * ds.targetSize);
  });
  const labels = ds.labels === undefined ? undefined : Int32Array.from(rows, (e) => ds.labels![e] as number);
  return withSequences(makeDataset({ name, size: rows.length, inputSize: ds.inputSize, targetSize: ds.targetSize, inputs, targets, labels, classNames: ds.classNames, inputNames: ds.inputNames }), starts);
}

/**
 * Holds out whole sequences: a seeded share `testFraction` of the sequences (at least one, and at least
 * one left for training) goes to the test set, each set keeping its sequences in file order.
 * @throws {@link EbbflowError} `invalid_parameter` for a fraction outside (0, 1) or fewer than 2 sequences.
 * @category Data
 */
export function splitSequences(ds: SequenceDataset, testFraction: number, seed: number | string): { train: SequenceDataset; test: SequenceDataset } {
  if (typeof testFraction !== "number" || !(testFraction > 0 && testFraction < 1)) fail("invalid_parameter", "testFraction", "a fraction in (0, 1)", testFraction);
  const S = sequenceCount(ds);
  if (S < 2) fail("invalid_parameter", "testFraction", "a data set of at least 2 sequences to split", `${S} sequence`);
  const k = Math.min(S - 1, Math.max(1, Math.round(S * testFraction)));
  const perm = createRandom(seed).child("split/sequences").permutation(S);
  const test = Array.from(perm.subarray(0, k)).sort((a, b) => a - b);
  const chosen = new Set(test);
  const train = Array.from({ length: S }, (_, i) => i).filter((i) => !chosen.has(i));
  return { train: sequenceSubset(ds, train, `${ds.name}/train`), test: sequenceSubset(ds, test, `${ds.name}/test`) };
}
