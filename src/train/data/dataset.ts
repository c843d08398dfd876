/**
 * The data set type shared by training, evaluation and the loaders: flat,
 * row-major `Float64Array`s of inputs and targets, validated once when built.
 * @module
 */
import { refuseUnknownOptions } from "../../errors/options.js";
import { describeValue, fail, requireInteger } from "../../errors/index.js";
import { isNdArrayLike, rowMajorValues, type NdArrayLike } from "../../interop/ndarray.js";
import { requireBytes } from "../../limits/index.js";

/**
 * A block of a data set's rows that belongs to one layer of a network: `size` consecutive values, named by
 * the layer. A data set's `inputLayers` (or `targetLayers`) list its blocks in row order.
 * @category Data
 */
export interface DataBlock {
  /** The layer's name. */
  readonly layer: string;
  /** Values per example (the layer's size). */
  readonly size: number;
}

/**
 * A set of examples: `size` rows of `inputSize` inputs and `targetSize` targets.
 *
 * Layout: example `i` has inputs `inputs[i * inputSize .. (i + 1) * inputSize)` and
 * targets `targets[i * targetSize .. (i + 1) * targetSize)` (row = example), the
 * same batch-major layout a network's layers use. Every input is finite; a target is finite or NaN, NaN
 * only for a whole block of a row (every target of one layer, or of the whole row without blocks): that
 * layer is not observed for that example (partial clamping).
 *
 * With `inputLayers` / `targetLayers`, a row is the concatenation of one block per layer, and training
 * maps each block to the network layer of that name; without them the whole row belongs to the network's
 * single input (or output) layer.
 * A data set never changes after it is built; functions that select or rescale
 * examples return a new one.
 * @category Data
 */
export interface Dataset {
  /** Name shown in reports (file name, generator name, or a derived name such as `iris/train`). */
  readonly name: string;
  /** Number of examples n (may be 0 for a derived subset). */
  readonly size: number;
  /** Number of input values per example (>= 1). */
  readonly inputSize: number;
  /** Number of target values per example (>= 1). */
  readonly targetSize: number;
  /** n × inputSize inputs, row = example. */
  readonly inputs: Float64Array;
  /** n × targetSize targets, row = example. */
  readonly targets: Float64Array;
  /**
   * Class index per example, present for classification sets: `labels[i]` is in
   * `[0, targetSize)` and is the position of the unique largest value of target row `i`
   * (for one-hot targets, the position of the 1). Used for accuracy and stratified splits.
   */
  readonly labels?: Int32Array | undefined;
  /** Names of the classes, `classNames[c]` for label `c`; length `targetSize`. Only with `labels`. */
  readonly classNames?: readonly string[] | undefined;
  /** Names of the input columns (for example a CSV header); length `inputSize`. */
  readonly inputNames?: readonly string[] | undefined;
  /** The input layers, block by block in row order (sizes summing to `inputSize`); absent: one block for the single input layer. */
  readonly inputLayers?: readonly DataBlock[] | undefined;
  /** The output layers, block by block in row order (sizes summing to `targetSize`); absent: one block for the single output layer. */
  readonly targetLayers?: readonly DataBlock[] | undefined;
}

/**
 * Options of {@link createDataset}.
 * @category Data
 */
export interface DatasetOptions {
  /** Inputs per example. Required when `inputs` is a flat `Float64Array` or an empty row list; checked otherwise. */
  readonly inputSize?: number | undefined;
  /** Targets per example. Required when `targets` is a flat `Float64Array` or an empty row list; checked otherwise. */
  readonly targetSize?: number | undefined;
  /** Class index per example (see {@link Dataset.labels}); copied. */
  readonly labels?: Int32Array | readonly number[] | undefined;
  /** Class names, one per target unit; needs `labels`. */
  readonly classNames?: readonly string[] | undefined;
  /** Input column names, one per input. */
  readonly inputNames?: readonly string[] | undefined;
}

/** Fields of a data set before freezing. */
interface DatasetFields {
  name: string;
  size: number;
  inputSize: number;
  targetSize: number;
  inputs: Float64Array;
  targets: Float64Array;
  labels?: Int32Array | undefined;
  classNames?: readonly string[] | undefined;
  inputNames?: readonly string[] | undefined;
  inputLayers?: readonly DataBlock[] | undefined;
  targetLayers?: readonly DataBlock[] | undefined;
}

/**
 * Freezes already validated fields into a {@link Dataset} (no checks, no copies).
 * @internal
 */
export function makeDataset(fields: DatasetFields): Dataset {
  const ds: DatasetFields = {
    name: fields.name,
    size: fields.size,
    inputSize: fields.inputSize,
    targetSize: fields.targetSize,
    inputs: fields.inputs,
    targets: fields.targets,
  };
  if (fields.labels !== undefined) ds.labels = fields.labels;
  if (fields.classNames !== undefined) ds.classNames = Object.freeze(fields.classNames.slice());
  if (fields.inputNames !== undefined) ds.inputNames = Object.freeze(fields.inputNames.slice());
  if (fields.inputLayers !== undefined) ds.inputLayers = Object.freeze(fields.inputLayers.map((b) => Object.freeze({ layer: b.layer, size: b.size })));
  if (fields.targetLayers !== undefined) ds.targetLayers = Object.freeze(fields.targetLayers.map((b) => Object.freeze({ layer: b.layer, size: b.size })));
  return Object.freeze(ds);
}

/** Copies a list of rows into a flat array, checking widths and finiteness. */
function flattenRows(
  rows: readonly (readonly number[])[],
  what: "inputs" | "targets",
  width: number | undefined,
): { flat: Float64Array; width: number } {
  if (!Array.isArray(rows)) fail("invalid_parameter", what, "an array of rows or a Float64Array", rows);
  let w = width;
  if (w === undefined) {
    if (rows.length === 0) fail("invalid_parameter", `${what}Size`, `an integer >= 1 (needed when ${what} is an empty row list)`, w);
    const first = rows[0];
    if (!Array.isArray(first)) fail("invalid_parameter", `${what}[0]`, "an array of numbers", first);
    w = first.length;
    if (w < 1) fail("shape_mismatch", `${what}[0]`, "a row of at least 1 number", "an empty row");
  }
  const flat = new Float64Array(rows.length * w);
  for (let r = 0; r < rows.length; r++) {
    const row = rows[r];
    if (!Array.isArray(row)) fail("invalid_parameter", `${what}[${r}]`, `an array of ${w} numbers`, row);
    if (row.length !== w) fail("shape_mismatch", `${what}[${r}]`, `a row of ${w} numbers (the width of ${what}[0])`, `a row of ${row.length}`);
    for (let c = 0; c < w; c++) {
      const v: unknown = row[c];
      if (what === "targets" && typeof v === "number" && Number.isNaN(v)) {
        flat[r * w + c] = v;
        continue;
      }
      if (typeof v !== "number" || !Number.isFinite(v)) fail("invalid_parameter", `${what}[${r}][${c}]`, what === "targets" ? "a finite number, or NaN for every target of the row (not observed)" : "a finite number", v);
      flat[r * w + c] = v;
    }
  }
  if (what === "targets") checkUnobservedRows(flat, w, [{ layer: "", size: w }], "targets");
  return { flat, width: w };
}

/** Copies a flat array, checking its length against the width and finiteness. */
function copyFlat(values: ArrayLike<number>, what: "inputs" | "targets", width: number | undefined): { flat: Float64Array; width: number } {
  if (width === undefined) fail("invalid_parameter", `${what}Size`, `an integer >= 1 (needed when ${what} is a flat Float64Array)`, width);
  if (values.length % width !== 0) {
    fail("shape_mismatch", what, `a length that is a multiple of ${what}Size (${width})`, `length ${values.length}`);
  }
  for (let i = 0; i < values.length; i++) {
    const v = values[i] as number;
    if (what === "targets" && Number.isNaN(v)) continue;
    if (!Number.isFinite(v)) fail("invalid_parameter", `${what}[${Math.floor(i / width)}][${i % width}]`, what === "targets" ? "a finite number, or NaN for every target of the row (not observed)" : "a finite number", v);
  }
  const flat = Float64Array.from(values);
  if (what === "targets") checkUnobservedRows(flat, width, [{ layer: "", size: width }], "targets");
  return { flat, width };
}

/** Copies an `ndarray`-like matrix (shape [n, width]; read in row-major order, one copy), checking it as `copyFlat`. */
function copyMatrix(values: NdArrayLike, what: "inputs" | "targets", width: number | undefined): { flat: Float64Array; width: number } {
  const w = values.shape[1];
  const flat = rowMajorValues(values, what, values.shape.length === 2 && w !== undefined ? [[values.shape[0] as number, width ?? w]] : [[values.shape[0] ?? 0, width ?? 1]]);
  return copyFlat(flat, what, width ?? w);
}

/**
 * Checks that NaN targets fill whole blocks of a row (a layer not observed for that example).
 * @throws {@link EbbflowError} `invalid_parameter` naming the row, the block's layer and the first mixed value.
 * @internal
 */
export function checkUnobservedRows(targets: Float64Array, width: number, blocks: readonly DataBlock[], path: string): void {
  const rows = width === 0 ? 0 : targets.length / width;
  for (let r = 0; r < rows; r++) {
    let off = r * width;
    for (const b of blocks) {
      const first = Number.isNaN(targets[off] as number);
      for (let k = 1; k < b.size; k++) {
        if (Number.isNaN(targets[off + k] as number) !== first) {
          const column = off + k - r * width;
          fail("invalid_parameter", `${path}[${r}][${column}]`, `targets${b.layer === "" ? "" : ` of layer ${JSON.stringify(b.layer)}`} that are all numbers (observed) or all NaN (not observed) in a row`, targets[off + k], "a row mixing NaN and numbers");
        }
      }
      off += b.size;
    }
  }
}

/** Checks a list of distinct non-empty names of the given length. */
function checkNames(names: readonly string[], path: string, length: number, lengthName: string): void {
  if (!Array.isArray(names)) fail("invalid_parameter", path, "an array of strings", names);
  if (names.length !== length) fail("shape_mismatch", path, `${length} names (${lengthName})`, `${names.length} names`);
  const seen = new Set<string>();
  for (let i = 0; i < names.length; i++) {
    const n: unknown = names[i];
    if (typeof n !== "string" || n === "") fail("invalid_parameter", `${path}[${i}]`, "a non-empty string", n);
    if (seen.has(n)) fail("invalid_parameter", `${path}[${i}]`, "a name not used before in the list", n);
    seen.add(n);
  }
}

/**
 * Checks that `labels` has one integer per example in [0, targetSize) naming
 * the position of the unique largest value of its target row; returns a copy.
 * @internal
 */
export function checkLabels(
  labels: Int32Array | readonly number[],
  targets: Float64Array,
  size: number,
  targetSize: number,
  path = "labels",
): Int32Array {
  if (!(labels instanceof Int32Array) && !Array.isArray(labels)) fail("invalid_parameter", path, "an Int32Array or an array of integers", labels);
  if (labels.length !== size) fail("shape_mismatch", path, `${size} labels (one per example)`, `${labels.length} labels`);
  const out = new Int32Array(size);
  for (let i = 0; i < size; i++) {
    const l: unknown = labels[i];
    if (typeof l !== "number" || !Number.isInteger(l) || l < 0 || l >= targetSize) {
      fail("invalid_parameter", `${path}[${i}]`, `an integer in [0, ${targetSize - 1}]`, l);
    }
    const base = i * targetSize;
    const top = targets[base + l] as number;
    // a row not observed has no largest value to agree with
    if (Number.isNaN(top)) {
      out[i] = l;
      continue;
    }
    for (let c = 0; c < targetSize; c++) {
      if (c !== l && (targets[base + c] as number) >= top) {
        fail("shape_mismatch", `${path}[${i}]`, `the position of the unique largest value of target row ${i}`, l,
          `targets[${i}][${c}] = ${describeValue(targets[base + c])} >= targets[${i}][${l}] = ${describeValue(top)}`);
      }
    }
    out[i] = l;
  }
  return out;
}

/**
 * Builds a validated {@link Dataset} from rows (`number[][]`, one row per
 * example), from flat row-major `Float64Array`s (then `inputSize` and
 * `targetSize` are required) or from `ndarray`-like matrices of shape
 * `[examples, width]` (any strides; see {@link NdArrayLike}). The values are
 * copied, once.
 *
 * Checks: inputs and targets have the same number of examples, every row has
 * the width of the first (or the given width), every value is a finite number,
 * labels (if any) fit the targets, names have the right lengths.
 * @category Data
 * @param name - Name of the set (non-empty).
 * @param inputs - Input rows, a flat n × inputSize array or an `ndarray`-like [n, inputSize] matrix.
 * @param targets - Target rows, a flat n × targetSize array or an `ndarray`-like [n, targetSize] matrix.
 * @param options - Widths for flat arrays, labels, class and input names.
 * @returns A frozen data set.
 * @throws {@link EbbflowError} `invalid_parameter` naming the value, e.g. path `inputs[3][2]` (row 3, column 2, from 0)
 *   for a non-finite number; `shape_mismatch` for a row of the wrong width (`targets[5]`), different example counts
 *   (`targets`), or labels that disagree with their target rows (`labels[i]`).
 * @example
 * ```ts
 * const ds = createDataset("and", [[0, 0], [0, 1], [1, 0], [1, 1]], [[0], [0], [0], [1]]);
 * ds.size; // 4
 * ds.inputs; // Float64Array [0, 0, 0, 1, 1, 0, 1, 1]
 * ```
 */
export function createDataset(
  name: string,
  inputs: readonly (readonly number[])[] | Float64Array | NdArrayLike,
  targets: readonly (readonly number[])[] | Float64Array | NdArrayLike,
  options: DatasetOptions = {},
): Dataset {
  if (typeof name !== "string" || name === "") fail("invalid_parameter", "name", "a non-empty string", name);
  refuseUnknownOptions(options, ["inputSize", "targetSize", "labels", "classNames", "inputNames"]);
  if (options.inputSize !== undefined) requireInteger("inputSize", options.inputSize, 1);
  if (options.targetSize !== undefined) requireInteger("targetSize", options.targetSize, 1);
  const x = isNdArrayLike(inputs) ? copyMatrix(inputs, "inputs", options.inputSize) : inputs instanceof Float64Array ? copyFlat(inputs, "inputs", options.inputSize) : flattenRows(inputs, "inputs", options.inputSize);
  const y = isNdArrayLike(targets) ? copyMatrix(targets, "targets", options.targetSize) : targets instanceof Float64Array ? copyFlat(targets, "targets", options.targetSize) : flattenRows(targets, "targets", options.targetSize);
  const n = x.flat.length / x.width;
  const m = y.flat.length / y.width;
  if (n !== m) fail("shape_mismatch", "targets", `${n} examples (as many as inputs)`, `${m} examples`);
  let labels: Int32Array | undefined;
  if (options.labels !== undefined) labels = checkLabels(options.labels, y.flat, n, y.width);
  if (options.classNames !== undefined) {
    if (labels === undefined) fail("invalid_parameter", "classNames", "to be given together with labels", "classNames without labels");
    checkNames(options.classNames, "classNames", y.width, "targetSize");
  }
  if (options.inputNames !== undefined) checkNames(options.inputNames, "inputNames", x.width, "inputSize");
  return makeDataset({
    name,
    size: n,
    inputSize: x.width,
    targetSize: y.width,
    inputs: x.flat,
    targets: y.flat,
    labels,
    classNames: options.classNames,
    inputNames: options.inputNames,
  });
}

/**
 * One-hot coding of class labels: row `i` has a 1 at column `labels[i]` and 0 elsewhere.
 * @category Data
 * @param labels - Class index per example, each an integer in [0, classes).
 * @param classes - Number of classes (integer >= 1).
 * @returns A new n × classes `Float64Array`.
 * @throws {@link EbbflowError} `invalid_parameter` with path `classes` or `labels[i]`.
 * @example
 * ```ts
 * oneHot([2, 0], 3); // Float64Array [0, 0, 1, 1, 0, 0]
 * ```
 */
export function oneHot(labels: ArrayLike<number>, classes: number): Float64Array {
  requireInteger("classes", classes, 1);
  requireBytes("classes", `one-hot targets of ${labels.length} examples × ${classes} classes`, labels.length * classes * 8);
  const out = new Float64Array(labels.length * classes);
  for (let i = 0; i < labels.length; i++) {
    const l: unknown = labels[i];
    if (typeof l !== "number" || !Number.isInteger(l) || l < 0 || l >= classes) {
      fail("invalid_parameter", `labels[${i}]`, `an integer in [0, ${classes - 1}]`, l);
    }
    out[i * classes + l] = 1;
  }
  return out;
}

/**
 * The examples at `indices`, in that order, as a new data set (rows copied;
 * an index may repeat, e.g. for bootstrap samples; an empty list gives an empty set).
 * @category Data
 * @param ds - Source set.
 * @param indices - Example indices, integers in [0, ds.size).
 * @param name - Name of the result; default `${ds.name}/subset`.
 * @returns The selected examples with their labels and names.
 * @throws {@link EbbflowError} `invalid_parameter` with path `indices[k]` for an index out of range.
 * @example
 * ```ts
 * subset(xorDataset(), [3, 0]).inputs; // Float64Array [1, 1, 0, 0]
 * ```
 */
export function subset(ds: Dataset, indices: Int32Array | readonly number[], name?: string): Dataset {
  if (!(indices instanceof Int32Array) && !Array.isArray(indices)) fail("invalid_parameter", "indices", "an Int32Array or an array of integers", indices);
  if (name !== undefined && (typeof name !== "string" || name === "")) fail("invalid_parameter", "name", "a non-empty string", name);
  for (let k = 0; k < indices.length; k++) {
    const i: unknown = indices[k];
    if (typeof i !== "number" || !Number.isInteger(i) || i < 0 || i >= ds.size) {
      fail("invalid_parameter", `indices[${k}]`, ds.size === 0 ? "no index (the set is empty)" : `an integer in [0, ${ds.size - 1}]`, i);
    }
  }
  return gather(ds, indices, name ?? `${ds.name}/subset`);
}

/**
 * Copies the rows at `indices` (already checked) into a new set.
 * @internal
 */
export function gather(ds: Dataset, indices: ArrayLike<number>, name: string): Dataset {
  const n = indices.length;
  const { inputSize: ni, targetSize: nt } = ds;
  const inputs = new Float64Array(n * ni);
  const targets = new Float64Array(n * nt);
  const labels = ds.labels === undefined ? undefined : new Int32Array(n);
  for (let k = 0; k < n; k++) {
    const i = indices[k] as number;
    inputs.set(ds.inputs.subarray(i * ni, (i + 1) * ni), k * ni);
    targets.set(ds.targets.subarray(i * nt, (i + 1) * nt), k * nt);
    if (labels !== undefined) labels[k] = (ds.labels as Int32Array)[i] as number;
  }
  return makeDataset({
    name,
    size: n,
    inputSize: ni,
    targetSize: nt,
    inputs,
    targets,
    labels,
    classNames: ds.classNames,
    inputNames: ds.inputNames,
    inputLayers: ds.inputLayers,
    targetLayers: ds.targetLayers,
  });
}
