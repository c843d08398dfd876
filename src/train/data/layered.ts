/**
 * Data sets with several input and output layers: values given per layer name, stored as one block per
 * layer in each row (see {@link DataBlock}), with NaN rows for targets that are not observed.
 * @module
 */
import { describeValue, fail } from "../../errors/index.js";
import { isNdArrayLike, rowMajorValues, type NdArrayLike } from "../../interop/ndarray.js";
import { requireBytes } from "../../limits/index.js";
import { checkUnobservedRows, makeDataset, type DataBlock, type Dataset } from "./dataset.js";

/**
 * One layer's values for every example: rows of numbers (for targets, a row may be `null` or all NaN: not
 * observed), or an `ndarray`-like matrix `[examples, size]`.
 * @category Data
 */
export type LayerRows = readonly (readonly number[] | null)[] | NdArrayLike;

/**
 * The values of a data set by layer name: `inputs` for each input layer, `targets` for each output layer.
 * Object key order is the block order of the rows.
 * @category Data
 */
export interface LayeredValues {
  readonly inputs: Readonly<Record<string, LayerRows>>;
  readonly targets: Readonly<Record<string, LayerRows>>;
}

/** One layer's values as a flat n × size array; `null` rows (targets only) become NaN. */
function readLayer(values: LayerRows, path: string, targets: boolean): { flat: Float64Array; rows: number; size: number } {
  if (isNdArrayLike(values)) {
    if (values.shape.length !== 2) fail("shape_mismatch", `${path}.shape`, "[examples, size]", JSON.stringify(values.shape));
    const [n, size] = values.shape as [number, number];
    const flat = Float64Array.from(rowMajorValues(values, path, [[n, size]]));
    return { flat: check(flat, size, path, targets), rows: n, size };
  }
  if (!Array.isArray(values) || values.length === 0) fail("invalid_parameter", path, "a non-empty array of rows (arrays of numbers) or an ndarray-like [examples, size]", describeValue(values));
  const firstRow = values.find((r) => r !== null);
  if (!Array.isArray(firstRow) || firstRow.length === 0) fail("invalid_parameter", path, targets ? "at least one observed row of numbers" : "rows of at least one number", describeValue(firstRow));
  const size = firstRow.length;
  requireBytes(path, `${values.length} rows × ${size} values`, values.length * size * 8);
  const flat = new Float64Array(values.length * size);
  for (let r = 0; r < values.length; r++) {
    const row: unknown = values[r];
    if (row === null && targets) {
      flat.fill(Number.NaN, r * size, (r + 1) * size);
      continue;
    }
    if (!Array.isArray(row)) fail("invalid_parameter", `${path}[${r}]`, targets ? `an array of ${size} numbers, or null (not observed)` : `an array of ${size} numbers`, describeValue(row));
    if (row.length !== size) fail("shape_mismatch", `${path}[${r}]`, `a row of ${size} numbers (the width of the layer's first row)`, `a row of ${row.length}`);
    for (let c = 0; c < size; c++) {
      const v: unknown = row[c];
      if (typeof v !== "number") fail("invalid_parameter", `${path}[${r}][${c}]`, "a number", describeValue(v));
      flat[r * size + c] = v;
    }
  }
  return { flat: check(flat, size, path, targets), rows: values.length, size };
}

/** Inputs finite; targets finite or NaN for whole rows. */
function check(flat: Float64Array, size: number, path: string, targets: boolean): Float64Array {
  for (let k = 0; k < flat.length; k++) {
    const v = flat[k] as number;
    if (Number.isFinite(v) || (targets && Number.isNaN(v))) continue;
    fail("invalid_parameter", `${path}[${Math.floor(k / size)}][${k % size}]`, targets ? "a finite number, or NaN for the whole row (not observed)" : "a finite number", v);
  }
  if (targets) checkUnobservedRows(flat, size, [{ layer: "", size }], path);
  return flat;
}

/** Interleaves per-layer blocks into rows. */
function join(parts: { name: string; flat: Float64Array; size: number }[], n: number): { flat: Float64Array; width: number; blocks: DataBlock[] } {
  const width = parts.reduce((s, p) => s + p.size, 0);
  const flat = new Float64Array(n * width);
  let off = 0;
  for (const p of parts) {
    for (let r = 0; r < n; r++) flat.set(p.flat.subarray(r * p.size, (r + 1) * p.size), r * width + off);
    off += p.size;
  }
  return { flat, width, blocks: parts.map((p) => ({ layer: p.name, size: p.size })) };
}

/**
 * Builds a data set from values per layer name: any number of input and output layers, each example's row
 * holding one block per layer (in the objects' key order). A target row that is `null` or all NaN marks
 * that output layer as not observed for that example: training leaves it free in the clamped phase and
 * counts no loss or metric for it. Every layer must have the same number of rows.
 * @category Data
 * @param name - Name of the set (non-empty).
 * @param values - `{ inputs: { layer: rows }, targets: { layer: rows } }`.
 * @param prefix - Prefix of error paths (a file name for the JSON reader); default none.
 * @returns A frozen data set with `inputLayers` and `targetLayers`.
 * @throws {@link EbbflowError} `invalid_parameter` naming the value (e.g. `targets.response[3][0]`), `shape_mismatch`
 *   for rows of the wrong width or layers with different numbers of examples.
 * @example
 * ```ts
 * const ds = createLayeredDataset("lamp", {
 *   inputs: { colour: [[1, 0], [0, 1]], switch: [[1], [0]] },
 *   targets: { light: [[1], [0]], report: [[1, 0], null] }, // the report is not observed for example 1
 * });
 * ds.targetLayers; // [{ layer: "light", size: 1 }, { layer: "report", size: 2 }]
 * ```
 */
export function createLayeredDataset(name: string, values: LayeredValues, prefix = ""): Dataset {
  if (typeof name !== "string" || name === "") fail("invalid_parameter", "name", "a non-empty string", name);
  if (values === null || typeof values !== "object") fail("invalid_parameter", `${prefix}values`, "{ inputs: { layer: rows }, targets: { layer: rows } }", values);
  for (const key of Object.keys(values)) if (key !== "inputs" && key !== "targets") fail("invalid_parameter", `${prefix}${key}`, "only the keys inputs and targets", key);
  const read = (what: "inputs" | "targets") => {
    const group: unknown = values[what];
    if (group === null || typeof group !== "object" || Array.isArray(group) || Object.keys(group).length === 0) {
      fail("invalid_parameter", `${prefix}${what}`, "an object mapping at least one layer name to its rows", describeValue(group));
    }
    return Object.entries(group as Record<string, LayerRows>).map(([layer, rows]) => ({ name: layer, ...readLayer(rows, `${prefix}${what}.${layer}`, what === "targets") }));
  };
  const ins = read("inputs");
  const outs = read("targets");
  const n = (ins[0] as { rows: number }).rows;
  for (const [what, parts] of [["inputs", ins], ["targets", outs]] as const) {
    for (const p of parts) if (p.rows !== n) fail("shape_mismatch", `${prefix}${what}.${p.name}`, `${n} rows (as many as inputs.${(ins[0] as { name: string }).name})`, `${p.rows} rows`);
  }
  for (const p of outs) if (ins.some((q) => q.name === p.name)) fail("invalid_parameter", `${prefix}targets.${p.name}`, "a layer that is not also an input layer", p.name);
  const x = join(ins, n);
  const y = join(outs, n);
  return makeDataset({ name, size: n, inputSize: x.width, targetSize: y.width, inputs: x.flat, targets: y.flat, inputLayers: x.blocks, targetLayers: y.blocks });
}

/**
 * One layer's block of a data set's inputs or targets as a new flat array (n × size): the values of layer
 * `layer`, example by example.
 * @category Data
 * @throws {@link EbbflowError} `unknown_name` when the set has no such block.
 */
export function layerValues(ds: Dataset, what: "inputs" | "targets", layer: string): Float64Array {
  const blocks = what === "inputs" ? ds.inputLayers : ds.targetLayers;
  const width = what === "inputs" ? ds.inputSize : ds.targetSize;
  const all = what === "inputs" ? ds.inputs : ds.targets;
  let off = 0;
  for (const b of blocks ?? []) {
    if (b.layer === layer) {
      const out = new Float64Array(ds.size * b.size);
      for (let r = 0; r < ds.size; r++) out.set(all.subarray(r * width + off, r * width + off + b.size), r * b.size);
      return out;
    }
    off += b.size;
  }
  return fail("unknown_name", `${what}.${layer}`, `one of the data set's ${what} layers (${(blocks ?? []).map((b) => b.layer).join(", ") || "none named"})`, JSON.stringify(layer));
}
