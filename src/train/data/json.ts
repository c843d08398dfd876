/**
 * ebbflow's own JSON data-set format, read and written.
 *
 * ```json
 * {
 *   "name": "four corners",
 *   "inputs": [[0, 0], [0, 1], [1, 0], [1, 1]],
 *   "targets": [[1, 0], [0, 1], [0, 1], [1, 0]],
 *   "labels": [0, 1, 1, 0],
 *   "classNames": ["same", "different"],
 *   "inputNames": ["left", "right"]
 * }
 * ```
 *
 * - `inputs` (required): one array per example, all of the same length >= 1, finite numbers.
 * - `targets`: rows like `inputs`, one per example. Optional when `labels` are given.
 * - `labels`: class index per example (integers from 0). Without `targets` the targets are
 *   their one-hot coding, with `classNames.length` classes (or the largest label + 1).
 *   With `targets`, each label must be the position of the unique largest value of its row.
 * - `classNames`: one distinct name per class. With `targets` and no `labels`, the targets
 *   must be one-hot rows (one 1, zeros elsewhere) and the labels are read from them.
 * - `name` (default: the source), `inputNames` (one per input column).
 * - No other keys (a misspelt key is an error, not silently ignored).
 *
 * Several input and output layers: `inputs` and `targets` are objects of rows per layer name, and a
 * target row may be `null` (that layer is not observed for that example; see {@link createLayeredDataset}):
 *
 * ```json
 * { "name": "lamp", "inputs": { "colour": [[1, 0], [0, 1]], "switch": [[1], [0]] },
 *   "targets": { "light": [[1], [0]], "report": [[1, 0], null] } }
 * ```
 *
 * Error paths: `<source>:<key>[row][column]`, indices from 0 as in the JSON
 * arrays, e.g. `digits.json:inputs[3][2]`. Up to 20 problems are reported in one error.
 * @module
 */
import { describeValue, fail, requireInteger } from "../../errors/index.js";
import { checkLabels, makeDataset, type Dataset } from "./dataset.js";
import { requireBytes } from "../../limits/index.js";
import { IssueList } from "./issues.js";
import { createLayeredDataset, layerValues, type LayeredValues } from "./layered.js";

const KEYS = ["name", "inputs", "targets", "labels", "classNames", "inputNames"] as const;

/** Reads rows of finite numbers of equal width into a flat array; returns undefined after adding issues. */
function readRows(value: unknown, key: string, source: string, issues: IssueList): { flat: Float64Array; rows: number; width: number } | undefined {
  const path = `${source}:${key}`;
  if (!Array.isArray(value) || value.length === 0) {
    issues.add("parse_error", path, "a non-empty array of rows (arrays of numbers)", describeValue(value));
    return undefined;
  }
  // targets may start with rows that are not observed (null): the width comes from the first array
  const at = key === "targets" ? Math.max(0, value.findIndex((r: unknown) => r !== null)) : 0;
  const first: unknown = value[at];
  if (!Array.isArray(first) || first.length === 0) {
    issues.add("parse_error", `${path}[${at}]`, "a non-empty array of numbers", describeValue(first));
    return undefined;
  }
  const width = first.length;
  const flat = new Float64Array(value.length * width);
  let ok = true;
  for (let r = 0; r < value.length && !issues.full; r++) {
    const row: unknown = value[r];
    if (row === null && key === "targets") {
      // a target row not observed
      flat.fill(Number.NaN, r * width, (r + 1) * width);
      continue;
    }
    if (!Array.isArray(row)) {
      ok = false;
      issues.add("parse_error", `${path}[${r}]`, `an array of ${width} numbers`, describeValue(row));
      continue;
    }
    if (row.length !== width) {
      ok = false;
      issues.add("shape_mismatch", `${path}[${r}]`, `a row of ${width} numbers (the width of ${key}[0])`, `a row of ${row.length}`);
      continue;
    }
    for (let c = 0; c < width; c++) {
      const v: unknown = row[c];
      if (typeof v !== "number" || !Number.isFinite(v)) {
        ok = false;
        if (!issues.add("parse_error", `${path}[${r}][${c}]`, "a finite number", describeValue(v))) break;
      } else {
        flat[r * width + c] = v;
      }
    }
  }
  return ok ? { flat, rows: value.length, width } : undefined;
}

/** Reads a list of distinct non-empty names; returns undefined after adding issues. */
function readNames(value: unknown, key: string, source: string, issues: IssueList, length?: number): string[] | undefined {
  const path = `${source}:${key}`;
  if (!Array.isArray(value) || value.length === 0) {
    issues.add("parse_error", path, "a non-empty array of strings", describeValue(value));
    return undefined;
  }
  if (length !== undefined && value.length !== length) {
    issues.add("shape_mismatch", path, `${length} names`, `${value.length} names`);
    return undefined;
  }
  const seen = new Set<string>();
  let ok = true;
  value.forEach((n: unknown, k) => {
    if (typeof n !== "string" || n === "" || seen.has(n)) {
      ok = false;
      issues.add("parse_error", `${path}[${k}]`, "a non-empty name not used before in the list", describeValue(n));
    } else {
      seen.add(n);
    }
  });
  return ok ? (value as string[]) : undefined;
}

/**
 * The JSON object in `text` (a leading byte-order mark skipped), read from `source`.
 * @throws {@link EbbflowError} `invalid_parameter` for a bad source or text; `parse_error` (path `source`) for
 *   invalid JSON or a top level that is not an object (`what` says what was expected).
 * @internal
 */
export function jsonObjectOf(text: string, source: string, what: string): Record<string, unknown> {
  if (typeof source !== "string" || source === "") fail("invalid_parameter", "source", "a non-empty string (a file name)", source);
  if (typeof text !== "string") fail("invalid_parameter", "text", "a string", text);
  let data: unknown;
  try {
    data = JSON.parse(text.charCodeAt(0) === 0xfeff ? text.slice(1) : text);
  } catch (e) {
    return fail("parse_error", source, "valid JSON", (e as Error).message);
  }
  if (typeof data !== "object" || data === null || Array.isArray(data)) return fail("parse_error", source, what, describeValue(data));
  return data as Record<string, unknown>;
}

/**
 * Reads a data set written in ebbflow's JSON format (described in this
 * module's notes: `inputs`, `targets` and/or `labels`, optional `classNames`,
 * `inputNames`, `name`).
 * @category Data
 * @param text - The JSON text.
 * @param source - Where the text came from (a file name); used in error paths and as the default name.
 * @returns The examples in file order.
 * @throws {@link EbbflowError} `parse_error` (path `source`) for invalid JSON or a top level that is not an
 *   object; `parse_error` / `shape_mismatch` with paths like `source:inputs[3][2]` for bad values, rows of the
 *   wrong width, unknown keys, labels that disagree with the targets.
 * @example
 * ```ts
 * const ds = parseJsonDataset('{"inputs": [[0], [1]], "labels": [1, 0], "classNames": ["off", "on"]}', "flip.json");
 * ds.targets; // Float64Array [0, 1, 1, 0]
 * ```
 */
export function parseJsonDataset(text: string, source: string): Dataset {
  const obj = jsonObjectOf(text, source, "a JSON object with inputs and targets or labels");
  if (obj.inputs !== null && typeof obj.inputs === "object" && !Array.isArray(obj.inputs)) {
    // values per layer name
    for (const key of Object.keys(obj)) if (key !== "name" && key !== "inputs" && key !== "targets") fail("parse_error", `${source}:${key}`, "only the keys name, inputs, targets (inputs given per layer)", "an unknown key");
    if (obj.name !== undefined && (typeof obj.name !== "string" || obj.name === "")) fail("parse_error", `${source}:name`, "a non-empty string", describeValue(obj.name));
    return createLayeredDataset((obj.name as string | undefined) ?? source, { inputs: obj.inputs as LayeredValues["inputs"], targets: obj.targets as LayeredValues["targets"] }, `${source}:`);
  }
  const issues = new IssueList();
  for (const key of Object.keys(obj)) {
    if (!(KEYS as readonly string[]).includes(key)) issues.add("parse_error", `${source}:${key}`, `only the keys ${KEYS.join(", ")}`, "an unknown key");
  }
  let name = source;
  if (obj.name !== undefined) {
    if (typeof obj.name === "string" && obj.name !== "") name = obj.name;
    else issues.add("parse_error", `${source}:name`, "a non-empty string", describeValue(obj.name));
  }
  const x = readRows(obj.inputs, "inputs", source, issues);
  if (obj.targets === undefined && obj.labels === undefined) {
    issues.add("parse_error", `${source}:targets`, "targets (rows of numbers) or labels (class indices)", "neither");
  }
  const y = obj.targets === undefined ? undefined : readRows(obj.targets, "targets", source, issues);
  const classNames = obj.classNames === undefined ? undefined : readNames(obj.classNames, "classNames", source, issues);
  const inputNames = obj.inputNames === undefined ? undefined : readNames(obj.inputNames, "inputNames", source, issues, x?.width);
  let rawLabels: number[] | undefined;
  if (obj.labels !== undefined) {
    const l = obj.labels;
    if (!Array.isArray(l)) issues.add("parse_error", `${source}:labels`, "an array of class indices", describeValue(l));
    else {
      rawLabels = [];
      l.forEach((v: unknown, k) => {
        if (typeof v !== "number" || !Number.isInteger(v) || v < 0) issues.add("parse_error", `${source}:labels[${k}]`, "an integer >= 0", describeValue(v));
        else (rawLabels as number[]).push(v);
      });
    }
  }
  issues.throwIfAny();
  const inputs = x as NonNullable<typeof x>;
  const n = inputs.rows;

  if (y !== undefined && y.rows !== n) fail("shape_mismatch", `${source}:targets`, `${n} rows (as many as inputs)`, `${y.rows} rows`);
  if (rawLabels !== undefined && rawLabels.length !== n) fail("shape_mismatch", `${source}:labels`, `${n} labels (one per example)`, `${rawLabels.length} labels`);

  let targets: Float64Array;
  let targetSize: number;
  let labels: Int32Array | undefined;
  if (y === undefined) {
    const lab = rawLabels as number[];
    const classes = classNames?.length ?? lab.reduce((m, v) => Math.max(m, v), 0) + 1;
    targetSize = classes;
    requireBytes(`${source}:labels`, `one-hot targets of ${n} examples × ${classes} classes (the largest label + 1)`, n * classes * 8);
    targets = new Float64Array(n * classes);
    labels = new Int32Array(n);
    for (let i = 0; i < n; i++) {
      const v = lab[i] as number;
      if (v >= classes) fail("parse_error", `${source}:labels[${i}]`, `a class index in [0, ${classes - 1}] (classNames has ${classes} names)`, v);
      labels[i] = v;
      targets[i * classes + v] = 1;
    }
  } else {
    targets = y.flat;
    targetSize = y.width;
    if (rawLabels !== undefined) {
      labels = checkLabels(rawLabels, targets, n, targetSize, `${source}:labels`);
    } else if (classNames !== undefined) {
      labels = new Int32Array(n);
      for (let i = 0; i < n; i++) {
        let hot = -1;
        for (let c = 0; c < targetSize; c++) {
          const v = targets[i * targetSize + c] as number;
          if (v === 1 && hot < 0) hot = c;
          else if (v !== 0) {
            fail("parse_error", `${source}:targets[${i}]`, "a one-hot row (one 1, zeros elsewhere) when classNames are given without labels", `targets[${i}][${c}] = ${v}`);
          }
        }
        if (hot < 0) fail("parse_error", `${source}:targets[${i}]`, "a one-hot row (one 1, zeros elsewhere) when classNames are given without labels", "no 1 in the row");
        labels[i] = hot;
      }
    }
  }
  if (classNames !== undefined && classNames.length !== targetSize) {
    fail("shape_mismatch", `${source}:classNames`, `${targetSize} names (one per target unit)`, `${classNames.length} names`);
  }
  if (labels === undefined && classNames !== undefined) fail("parse_error", `${source}:classNames`, "labels or one-hot targets", "classNames without labels");
  return makeDataset({ name, size: n, inputSize: inputs.width, targetSize, inputs: inputs.flat, targets, labels, classNames, inputNames });
}

/**
 * Writes a data set in ebbflow's JSON format; {@link parseJsonDataset} reads it
 * back with every value equal (`JSON.stringify` writes the shortest decimal that
 * round-trips a double; only the sign of a zero is lost, `-0` becomes `0`).
 * @category Data
 * @param ds - The data set (at least one example).
 * @param indent - Spaces of indentation, an integer in [0, 10]; default 0 (one line).
 * @returns The JSON text.
 * @throws {@link EbbflowError} `invalid_parameter` for an empty set (path `ds.size`) or a bad `indent`.
 * @example
 * ```ts
 * datasetToJson(xorDataset()); // '{"name":"xor","inputs":[[0,0],[0,1],[1,0],[1,1]],"targets":[[0],[1],[1],[0]]}'
 * ```
 */
export function datasetToJson(ds: Dataset, indent = 0): string {
  requireInteger("ds.size", ds.size, 1);
  if (!Number.isInteger(indent) || indent < 0 || indent > 10) fail("invalid_parameter", "indent", "an integer in [0, 10]", indent);
  const rows = (flat: Float64Array, width: number): number[][] => {
    const out: number[][] = [];
    for (let i = 0; i < ds.size; i++) out.push(Array.from(flat.subarray(i * width, (i + 1) * width)));
    return out;
  };
  if (ds.inputLayers !== undefined || ds.targetLayers !== undefined) {
    // per layer name; a target row not observed is written as null
    const group = (what: "inputs" | "targets", blocks: readonly { layer: string; size: number }[] | undefined, flat: Float64Array, width: number, single: string) => {
      const out: Record<string, (number[] | null)[]> = {};
      for (const b of blocks ?? [{ layer: single, size: width }]) {
        const v = blocks === undefined ? flat : layerValues(ds, what, b.layer);
        const r: (number[] | null)[] = [];
        for (let i = 0; i < ds.size; i++) {
          const row = Array.from(v.subarray(i * b.size, (i + 1) * b.size));
          r.push(row.length > 0 && Number.isNaN(row[0] as number) ? null : row);
        }
        out[b.layer] = r;
      }
      return out;
    };
    return JSON.stringify({ name: ds.name, inputs: group("inputs", ds.inputLayers, ds.inputs, ds.inputSize, "inputs"), targets: group("targets", ds.targetLayers, ds.targets, ds.targetSize, "targets") }, null, indent);
  }
  const nullRows = (r: number[][]): (number[] | null)[] => r.map((row) => (row.length > 0 && Number.isNaN(row[0] as number) ? null : row));
  const obj: Record<string, unknown> = { name: ds.name, inputs: rows(ds.inputs, ds.inputSize), targets: nullRows(rows(ds.targets, ds.targetSize)) };
  if (ds.labels !== undefined) obj.labels = Array.from(ds.labels);
  if (ds.classNames !== undefined) obj.classNames = ds.classNames;
  if (ds.inputNames !== undefined) obj.inputNames = ds.inputNames;
  return JSON.stringify(obj, null, indent);
}
