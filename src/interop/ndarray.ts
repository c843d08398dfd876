/**
 * Strided views in the layout of the `ndarray` package (data, shape, stride,
 * offset): ebbflow's weights, biases, states and activity records as views
 * other array code can read, and such views accepted as inputs.
 *
 * ebbflow does not depend on `ndarray`. Its views are plain objects
 * `{ data, shape, stride, offset, dtype }` — the four arguments of the
 * `ndarray(data, shape, stride, offset)` constructor plus the name of the
 * element type (the `ndarray` package's own `dtype` strings) — so
 * `ndarray(v.data, v.shape, v.stride, v.offset)` wraps one without a copy. Why
 * not the package itself: it is CommonJS, builds its classes with
 * `new Function` (refused by pages whose Content Security Policy forbids
 * `unsafe-eval`, where the core must still run), and the views need none of
 * its methods. Inputs are taken by shape, not by class: anything with `data`,
 * `shape`, `stride` and `offset` (an `ndarray` object, one of these views, a
 * hand-made object) is read as row-major values, without a copy when its
 * elements are contiguous in row-major order.
 * @module
 */
import { EbbflowError, fail, issueText, type Issue } from "../errors/index.js";
import type { Dtype, FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import type { Snapshot } from "../network/settle.js";

/**
 * Anything laid out like an `ndarray` object: element `(i0, i1, ...)` is
 * `data[offset + i0 * stride[0] + i1 * stride[1] + ...]`.
 * @category Interop
 */
export interface NdArrayLike {
  readonly data: ArrayLike<number>;
  readonly shape: readonly number[];
  readonly stride: readonly number[];
  readonly offset: number;
}

/**
 * A view of ebbflow's data in the `ndarray` layout, with the element type.
 * `data` is the array ebbflow computes on (no copy) unless a function says otherwise.
 * @category Interop
 */
export interface NdView<T extends ArrayLike<number> = FloatArray> extends NdArrayLike {
  readonly data: T;
  readonly shape: number[];
  readonly stride: number[];
  readonly offset: number;
  /** Element type, as the `ndarray` package names it (`"float32"`, `"float64"`, `"int32"`, ...). */
  readonly dtype: string;
}

/** Whether a value is laid out like an `ndarray` object (has `data`, `shape`, `stride` and `offset`). @category Interop */
export function isNdArrayLike(value: unknown): value is NdArrayLike {
  if (value === null || typeof value !== "object") return false;
  const v = value as Partial<NdArrayLike>;
  return (
    v.data !== null && typeof v.data === "object" && typeof (v.data as ArrayLike<number>).length === "number" &&
    Array.isArray(v.shape) && Array.isArray(v.stride) && typeof v.offset === "number"
  );
}

/** Row-major (C-order) strides of a shape. @category Interop */
export function rowMajorStrides(shape: readonly number[]): number[] {
  const stride = new Array<number>(shape.length);
  let s = 1;
  for (let d = shape.length - 1; d >= 0; d--) {
    stride[d] = s;
    s *= shape[d] as number;
  }
  return stride;
}

/** Number of elements of a shape (1 for a scalar's empty shape). */
export function elementCount(shape: readonly number[]): number {
  let n = 1;
  for (const s of shape) n *= s;
  return n;
}

/** The `ndarray` package's name of a typed array's element type. */
export function dtypeName(data: ArrayLike<number>): string {
  if (data instanceof Float64Array) return "float64";
  if (data instanceof Float32Array) return "float32";
  if (data instanceof Int32Array) return "int32";
  if (data instanceof Uint32Array) return "uint32";
  if (data instanceof Int16Array) return "int16";
  if (data instanceof Uint16Array) return "uint16";
  if (data instanceof Int8Array) return "int8";
  if (data instanceof Uint8ClampedArray) return "uint8_clamped";
  if (data instanceof Uint8Array) return "uint8";
  return "array";
}

/**
 * A row-major view of `data` with the given shape (strides computed, offset 0).
 * @param data - The values, row-major; used as is (no copy).
 * @param shape - Sizes of the axes; their product must equal `data.length`.
 * @throws {@link EbbflowError} `shape_mismatch` (path `data`) when the length does not fit the shape.
 * @category Interop
 */
export function ndView<T extends ArrayLike<number>>(data: T, shape: readonly number[]): NdView<T> {
  for (let d = 0; d < shape.length; d++) {
    const s = shape[d];
    if (typeof s !== "number" || !Number.isInteger(s) || s < 0) fail("invalid_parameter", `shape[${d}]`, "an integer >= 0", s);
  }
  const n = elementCount(shape);
  if (data.length !== n) fail("shape_mismatch", "data", `${n} values (shape [${shape.join(", ")}])`, `${data.length} values`);
  return { data, shape: shape.slice(), stride: rowMajorStrides(shape), offset: 0, dtype: dtypeName(data) };
}

/** Whether the view's elements are contiguous in row-major order (size-1 axes ignore their stride). */
export function isRowMajor(v: NdArrayLike): boolean {
  let s = 1;
  for (let d = v.shape.length - 1; d >= 0; d--) {
    const n = v.shape[d] as number;
    if (n !== 1 && v.stride[d] !== s) return n === 0;
    s *= n;
  }
  return true;
}

/** Checks the structure of an `ndarray`-like value; returns the issue, or undefined when it is well formed. */
function structureIssue(v: NdArrayLike, path: string): Issue | undefined {
  if (v.shape.length !== v.stride.length) return issueText("shape_mismatch", `${path}.stride`, `${v.shape.length} strides (one per axis)`, `${v.stride.length}`);
  if (!Number.isInteger(v.offset) || v.offset < 0) return issueText("invalid_parameter", `${path}.offset`, "an integer >= 0", String(v.offset));
  let lo = v.offset;
  let hi = v.offset;
  for (let d = 0; d < v.shape.length; d++) {
    const n = v.shape[d];
    const s = v.stride[d];
    if (typeof n !== "number" || !Number.isInteger(n) || n < 0) return issueText("invalid_parameter", `${path}.shape[${d}]`, "an integer >= 0", String(n));
    if (typeof s !== "number" || !Number.isInteger(s)) return issueText("invalid_parameter", `${path}.stride[${d}]`, "an integer", String(s));
    if (n === 0) return undefined; // no elements: nothing is read
    if (s >= 0) hi += s * (n - 1);
    else lo += s * (n - 1);
  }
  if (lo < 0 || hi >= v.data.length) {
    return issueText("shape_mismatch", `${path}.data`, `elements up to index ${hi} (offset, shape and stride)`, `${v.data.length} elements`);
  }
  return undefined;
}

/**
 * The values of an `ndarray`-like value in row-major order, checked against
 * the shape a caller expects. No copy when the elements are contiguous in
 * row-major order and the storage is a typed array (a `subarray` view) or a
 * plain array starting at its beginning; otherwise one copy (a `Float64Array`).
 * @param value - An `ndarray`-like value.
 * @param path - Path of the value in error messages.
 * @param shapes - Accepted shapes (e.g. `[[batch, units], [batch * units]]`); any shape when omitted.
 * @returns The values, row-major.
 * @throws {@link EbbflowError} `shape_mismatch` (path `PATH.shape`, or `PATH.data` when the strides reach
 *   past the data) or `invalid_parameter` (`PATH.offset`, `PATH.stride[d]`, `PATH.shape[d]`).
 * @category Interop
 * @example
 * ```ts
 * const t = { data: new Float64Array([1, 2, 3, 4]), shape: [2, 2], stride: [1, 2], offset: 0 }; // transposed
 * rowMajorValues(t, "x"); // Float64Array [1, 3, 2, 4]
 * ```
 */
export function rowMajorValues(value: NdArrayLike, path: string, shapes?: readonly (readonly number[])[]): ArrayLike<number> {
  const r = tryRowMajor(value, path, shapes);
  if (isIssue(r)) throw new EbbflowError(r);
  return r;
}

/** Calls `visit(index into data, k)` for each element, in row-major order (k = 0, 1, ...). */
export function forEachRowMajor(v: NdArrayLike, visit: (at: number, k: number) => void): void {
  const n = elementCount(v.shape);
  const rank = v.shape.length;
  const idx = new Array<number>(rank).fill(0);
  let at = v.offset;
  for (let k = 0; k < n; k++) {
    visit(at, k);
    for (let d = rank - 1; d >= 0; d--) {
      idx[d]!++;
      at += v.stride[d] as number;
      if (idx[d]! < (v.shape[d] as number)) break;
      at -= (v.stride[d] as number) * (v.shape[d] as number);
      idx[d] = 0;
    }
  }
}

/** Checks that offset, shape and strides stay inside the data. @throws {@link EbbflowError} as {@link rowMajorValues}. */
export function checkLayout(value: NdArrayLike, path: string): void {
  const bad = structureIssue(value, path);
  if (bad !== undefined) throw new EbbflowError(bad);
}

/** {@link rowMajorValues}, returning the issue instead of throwing. */
function tryRowMajor(value: NdArrayLike, path: string, shapes?: readonly (readonly number[])[]): ArrayLike<number> | Issue {
  const bad = structureIssue(value, path);
  if (bad !== undefined) return bad;
  if (shapes !== undefined && !shapes.some((s) => s.length === value.shape.length && s.every((n, d) => n === value.shape[d]))) {
    return issueText("shape_mismatch", `${path}.shape`, shapes.map((s) => `[${s.join(", ")}]`).join(" or "), `[${value.shape.join(", ")}]`);
  }
  const n = elementCount(value.shape);
  const data = value.data;
  if (isRowMajor(value)) {
    if (ArrayBuffer.isView(data)) return (data as unknown as Float64Array).subarray(value.offset, value.offset + n);
    if (value.offset === 0 && data.length === n) return data;
  }
  const out = new Float64Array(n);
  forEachRowMajor(value, (at, k) => (out[k] = data[at] as number));
  return out;
}

/**
 * Per-layer values (layer name → B×N values) where an entry may be `ndarray`-like.
 * @category Interop
 */
export type LayerInputs = Readonly<Record<string, ArrayLike<number> | NdArrayLike>>;

/**
 * Per-layer values as flat row-major arrays: `ndarray`-like entries are read
 * with {@link rowMajorValues} (shape `[batch, size]` or `[batch * size]`, the
 * batch taken from the first axis when not given); other entries are passed
 * through. The record itself is returned when it has no `ndarray`-like entry.
 * Keys whose entry is malformed are listed in `failed` with their issues.
 * @internal
 */
export function flatLayerValues(
  values: LayerInputs,
  sizes: ReadonlyMap<string, number>,
  batch: number | undefined,
  path: string,
): { values: Readonly<Record<string, ArrayLike<number>>>; issues: readonly Issue[]; failed: ReadonlySet<string> } {
  let out: Record<string, ArrayLike<number> | NdArrayLike> | undefined;
  let issues: Issue[] | undefined;
  let failed: Set<string> | undefined;
  for (const key in values) {
    const v = values[key];
    if (!Object.hasOwn(values, key) || !isNdArrayLike(v)) continue;
    out ??= { ...values };
    const size = sizes.get(key);
    const first = v.shape[0];
    const b = batch ?? (size === undefined || first === undefined ? undefined : v.shape.length === 2 ? first : first / size);
    const shapes = size === undefined || b === undefined || !Number.isInteger(b) ? undefined : [[b, size], [b * size]];
    const r = tryRowMajor(v, `${path}.${key}`, shapes);
    if (isIssue(r)) {
      (issues ??= []).push(r);
      (failed ??= new Set()).add(key);
    } else out[key] = r;
  }
  // the common case (no ndarray-like entry) allocates nothing
  return { values: (out ?? values) as Readonly<Record<string, ArrayLike<number>>>, issues: issues ?? NO_ISSUES, failed: failed ?? NO_KEYS };
}

const NO_ISSUES: readonly Issue[] = Object.freeze([]);
const NO_KEYS: ReadonlySet<string> = new Set();

/** Layer sizes by name, per network (for flatBatch, once per network). */
const layerSizes = new WeakMap<Network, ReadonlyMap<string, number>>();

/** Each layer's size by layer name. @internal */
export function sizesByName(net: Network): ReadonlyMap<string, number> {
  let m = layerSizes.get(net);
  if (m === undefined) {
    m = new Map(net.layers.map((l) => [l.name, l.size] as const));
    layerSizes.set(net, m);
  }
  return m;
}

function isIssue(r: ArrayLike<number> | Issue): r is Issue {
  return typeof (r as Issue).code === "string" && typeof (r as Issue).path === "string";
}

/**
 * A batch whose per-layer values may be `ndarray`-like (`[batch, units]` each), as `rule.step` takes it.
 * A target row of NaN (every value of a layer for one pattern) marks that layer as not observed for that
 * pattern; `observed` says the same as a mask (see `ObservedTargets`).
 * @category Interop
 */
export interface BatchInput {
  readonly inputs: LayerInputs;
  readonly targets: LayerInputs;
  /**
   * Per output layer: `true`, `false`, or one flag per pattern (non-zero: observed); a layer not named is
   * observed wherever its targets are not NaN. An unobserved output is free in the clamped phase and takes
   * no nudging and no loss.
   */
  readonly observed?: Readonly<Record<string, boolean | ArrayLike<number | boolean>>> | undefined;
}

/**
 * The targets with the `observed` mask written in as NaN rows (copies of the masked layers only).
 * @throws {@link EbbflowError} `unknown_name` for a mask on a layer that is not an output layer, `shape_mismatch` for a mask of the wrong length.
 */
function maskTargets(net: Network, targets: Readonly<Record<string, ArrayLike<number>>>, observed: NonNullable<BatchInput["observed"]>, batchSize: number | undefined): Readonly<Record<string, ArrayLike<number>>> {
  if (observed === null || typeof observed !== "object") fail("invalid_parameter", "observed", "an object mapping output layer names to true, false or one flag per pattern", observed);
  const out: Record<string, ArrayLike<number>> = { ...targets };
  for (const name of Object.keys(observed)) {
    const layer = net.outputLayers.find((l) => l.name === name);
    if (layer === undefined) fail("unknown_name", `observed.${name}`, `an output layer name (${net.outputLayers.map((l) => l.name).join(", ")})`, JSON.stringify(name));
    const mask: unknown = observed[name];
    if (mask === true) continue;
    const t = targets[name];
    const B = batchSize ?? (t !== undefined && t !== null && typeof t.length === "number" ? Math.floor(t.length / layer.size) : 0);
    const masked = new Float64Array(B * layer.size);
    if (mask === false) {
      masked.fill(Number.NaN);
      out[name] = masked;
      continue;
    }
    if (mask === null || typeof mask !== "object" || typeof (mask as ArrayLike<unknown>).length !== "number" || (mask as ArrayLike<unknown>).length !== B) {
      fail("shape_mismatch", `observed.${name}`, `true, false or ${B} flags (one per pattern)`, mask);
    }
    if (t === undefined || t === null || t.length !== B * layer.size) fail("shape_mismatch", `targets.${name}`, `${B * layer.size} values`, t === undefined ? "missing" : t);
    for (let p = 0; p < B; p++) {
      const f = (mask as ArrayLike<unknown>)[p];
      if (typeof f !== "number" && typeof f !== "boolean") fail("invalid_parameter", `observed.${name}[${p}]`, "a flag: true/false or a number (non-zero: observed)", f);
      for (let k = 0; k < layer.size; k++) masked[p * layer.size + k] = f ? (t[p * layer.size + k] as number) : Number.NaN;
    }
    out[name] = masked;
  }
  return out;
}

/**
 * The batch with `ndarray`-like entries read as flat row-major arrays (no copy
 * when contiguous; see {@link rowMajorValues}) and an `observed` mask written into
 * the targets as NaN rows; a batch without either is returned as is.
 * @throws {@link EbbflowError} `shape_mismatch` / `invalid_parameter` naming the entry (e.g. `inputs.touch.shape`).
 * @internal
 */
export function flatBatch(net: Network, batch: BatchInput): { readonly inputs: Readonly<Record<string, ArrayLike<number>>>; readonly targets: Readonly<Record<string, ArrayLike<number>>> } {
  if (batch === null || typeof batch !== "object") return fail("invalid_parameter", "batch", "an object with inputs and targets", batch);
  const sizes = sizesByName(net);
  const inputs = batch.inputs !== null && typeof batch.inputs === "object" ? flatLayerValues(batch.inputs, sizes, undefined, "inputs") : undefined;
  const targets = batch.targets !== null && typeof batch.targets === "object" ? flatLayerValues(batch.targets, sizes, undefined, "targets") : undefined;
  const issues = [...(inputs?.issues ?? []), ...(targets?.issues ?? [])];
  if (issues.length > 0) throw new EbbflowError(issues);
  if (batch.observed !== undefined && targets !== undefined) {
    const first = net.inputLayers[0];
    const x = first === undefined ? undefined : inputs?.values[first.name];
    const B = first !== undefined && x !== undefined && x !== null && typeof x.length === "number" ? x.length / first.size : undefined;
    return { inputs: inputs?.values ?? (batch.inputs as Readonly<Record<string, ArrayLike<number>>>), targets: maskTargets(net, targets.values, batch.observed, B !== undefined && Number.isInteger(B) ? B : undefined) };
  }
  if (inputs?.values === batch.inputs && targets?.values === batch.targets) return batch as ReturnType<typeof flatBatch>;
  return { inputs: inputs?.values ?? (batch.inputs as Readonly<Record<string, ArrayLike<number>>>), targets: targets?.values ?? (batch.targets as Readonly<Record<string, ArrayLike<number>>>) };
}

/** The dtype of a float array, as the `ndarray` package names it. */
function floatDtype(a: FloatArray): Dtype {
  return a instanceof Float32Array ? "float32" : "float64";
}

/**
 * The weights of a connection as a `[post, pre]` view (rows = receiving units,
 * columns = sending units), on the network's own array (no copy: writes go to
 * the network).
 * @param net - The network.
 * @param label - The connection's label, `"from->to"`.
 * @throws {@link EbbflowError} `unknown_name` (path `connection`) for an unknown label.
 * @category Interop
 * @example
 * ```ts
 * const w = weightView(net, "touch->hidden"); // shape [3, 2]
 * ndarray(w.data, w.shape, w.stride, w.offset).get(0, 1); // weight from touch unit 1 to hidden unit 0
 * ```
 */
export function weightView(net: Network, label: string): NdView {
  const c = net.connections.find((x) => x.label === label);
  if (c === undefined) return fail("unknown_name", "connection", `a connection label (${net.connections.map((x) => x.label).join(", ")})`, label);
  const post = net.layers[c.to]!.size;
  const pre = net.layers[c.from]!.size;
  return { data: c.weights, shape: [post, pre], stride: [pre, 1], offset: 0, dtype: floatDtype(c.weights) };
}

/**
 * The separate feedback matrix of a connection as a `[pre, post]` view (rows =
 * units of the sending layer, which the feedback reaches), on the network's array.
 * @throws {@link EbbflowError} `unknown_name` for an unknown label; `invalid_parameter` (path `connection`)
 *   when the connection has no separate feedback matrix.
 * @category Interop
 */
export function feedbackView(net: Network, label: string): NdView {
  const c = net.connections.find((x) => x.label === label);
  if (c === undefined) return fail("unknown_name", "connection", `a connection label (${net.connections.map((x) => x.label).join(", ")})`, label);
  if (c.feedback.kind !== "separate") return fail("invalid_parameter", "connection", "a connection with a separate feedback matrix", `${label} (feedback ${c.feedback.kind})`);
  const post = net.layers[c.to]!.size;
  const pre = net.layers[c.from]!.size;
  return { data: c.feedback.weights, shape: [pre, post], stride: [post, 1], offset: 0, dtype: floatDtype(c.feedback.weights) };
}

/**
 * The biases of a layer as a `[units]` view on the network's array.
 * @throws {@link EbbflowError} `unknown_name` (path `layer`) for an unknown layer.
 * @category Interop
 */
export function biasView(net: Network, layer: string): NdView {
  const l = net.layer(layer);
  return { data: l.bias, shape: [l.size], stride: [1], offset: 0, dtype: floatDtype(l.bias) };
}

/**
 * A layer's activity (or, with `which: "state"`, its dynamical state) in a
 * settled snapshot as a `[batch, units]` view on the snapshot's array.
 * @throws {@link EbbflowError} `unknown_name` (path `layer`) for an unknown layer.
 * @category Interop
 */
export function stateView(net: Network, snapshot: Snapshot, layer: string, which: "activity" | "state" = "activity"): NdView {
  const l = net.layer(layer);
  const a = (which === "state" ? snapshot.state : snapshot.activity)[l.index] as FloatArray;
  return { data: a, shape: [snapshot.batch, l.size], stride: [l.size, 1], offset: 0, dtype: floatDtype(a) };
}

/**
 * A layer's recorded activity (a phase settled with `record: true`) as a
 * `[steps, batch, units]` view. The record keeps one array per step, so the
 * view's data is a new array holding them in order (a copy).
 * @throws {@link EbbflowError} `invalid_parameter` (path `snapshot.record`) when the phase was not recorded;
 *   `unknown_name` (path `layer`) for an unknown layer.
 * @category Interop
 */
export function recordView(net: Network, snapshot: Snapshot, layer: string): NdView {
  const l = net.layer(layer);
  const rec = snapshot.record;
  if (rec === null) return fail("invalid_parameter", "snapshot.record", "a snapshot settled with record: true", "no record");
  const per = snapshot.batch * l.size;
  const data = net.dtype === "float32" ? new Float32Array(rec.length * per) : new Float64Array(rec.length * per);
  rec.forEach((step, s) => data.set((step[l.index] as FloatArray).subarray(0, per), s * per));
  return { data, shape: [rec.length, snapshot.batch, l.size], stride: [per, l.size, 1], offset: 0, dtype: net.dtype };
}
