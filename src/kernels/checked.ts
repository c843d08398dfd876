/**
 * Validation of kernel arguments, for use at API edges (network build,
 * config loading, user calls): the hot kernels themselves check nothing.
 *
 * Every problem found is collected before one `EbbflowError` is thrown:
 * - `invalid_parameter` for a size that is not an integer ≥ 0, a scale that is
 *   not finite, a flag that is not a boolean, an argument that is not a
 *   `Float32Array`/`Float64Array`, or an output that overlaps an input it may
 *   not alias (path `out`);
 * - `shape_mismatch` for an array whose length disagrees with the sizes (path
 *   = the argument name, `expected` and `received` give both lengths).
 *
 * Matrix arguments must have exactly the length the sizes give (pass a
 * `subarray` view to use the front of a larger buffer).
 * @module
 */
import { EbbflowError, describeValue, issue, issueText, type Issue } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import { add, axpby, axpy, copy, fill, mul, scale, sub } from "./elementwise.js";
import { gemm } from "./gemm.js";
import { gemv } from "./gemv.js";
import { ger } from "./ger.js";
import { allFinite, dot, maxAbs, maxAbsDiff, sumSquares } from "./reductions.js";
import { addRowVector, sumRows } from "./rows.js";
import type { ReadonlyFloatArray } from "./types.js";

type AnyFloatArray = FloatArray | ReadonlyFloatArray;

function isFloatArray(x: unknown): x is AnyFloatArray {
  return x instanceof Float32Array || x instanceof Float64Array;
}

function throwIfAny(issues: readonly Issue[]): void {
  if (issues.length > 0) throw new EbbflowError(issues);
}

/** A size argument: an integer ≥ 0. Returns whether it is usable. */
function size(issues: Issue[], fn: string, path: string, v: unknown): v is number {
  if (typeof v === "number" && Number.isInteger(v) && v >= 0) return true;
  issues.push(issue("invalid_parameter", path, "an integer >= 0", v, fn));
  return false;
}

/** A scale argument: a finite number. */
function finite(issues: Issue[], fn: string, path: string, v: unknown): void {
  if (typeof v !== "number" || !Number.isFinite(v)) issues.push(issue("invalid_parameter", path, "a finite number", v, fn));
}

/** A flag argument: a boolean. */
function flag(issues: Issue[], fn: string, path: string, v: unknown): void {
  if (typeof v !== "boolean") issues.push(issue("invalid_parameter", path, "a boolean", v, fn));
}

/** An array argument; when `length` is given it must match exactly (or at least, if `atLeast`). */
function array(
  issues: Issue[],
  fn: string,
  path: string,
  x: unknown,
  length: number | undefined,
  how: string,
  atLeast = false,
): x is AnyFloatArray {
  if (!isFloatArray(x)) {
    issues.push(issue("invalid_parameter", path, "a Float32Array or Float64Array", x, fn));
    return false;
  }
  if (length !== undefined && (atLeast ? x.length < length : x.length !== length)) {
    issues.push(issueText("shape_mismatch", path, `length ${atLeast ? ">= " : ""}${length} (${how})`, `length ${x.length}`, fn));
  }
  return true;
}

function overlaps(x: AnyFloatArray, y: AnyFloatArray): boolean {
  return (
    x.buffer === y.buffer &&
    x.byteLength > 0 &&
    y.byteLength > 0 &&
    x.byteOffset < y.byteOffset + y.byteLength &&
    y.byteOffset < x.byteOffset + x.byteLength
  );
}

/** Same memory, same element type, same start: the one aliasing elementwise kernels allow. */
function identical(x: AnyFloatArray, y: AnyFloatArray): boolean {
  return x.buffer === y.buffer && x.byteOffset === y.byteOffset && x.BYTES_PER_ELEMENT === y.BYTES_PER_ELEMENT;
}

/** `out` may not share any memory with the input at `path`. */
function disjoint(issues: Issue[], fn: string, out: AnyFloatArray, path: string, x: AnyFloatArray): void {
  if (overlaps(out, x)) {
    issues.push(
      issueText("invalid_parameter", "out", `an array that shares no memory with ${path}`, `${describeValue(out)} overlapping ${path}`, fn),
    );
  }
}

/** `out` may be the input at `path` itself, or share no memory with it. */
function identicalOrDisjoint(issues: Issue[], fn: string, out: AnyFloatArray, path: string, x: AnyFloatArray): void {
  if (overlaps(out, x) && !identical(out, x)) {
    issues.push(
      issueText(
        "invalid_parameter",
        "out",
        `either the same array as ${path} or an array sharing no memory with it`,
        `${describeValue(out)} partly overlapping ${path}`,
        fn,
      ),
    );
  }
}

/**
 * Validates the arguments of {@link gemm}: sizes are integers ≥ 0, `alpha`
 * and `beta` finite, flags boolean, `out` has length m*n, `a` has m*k, `b`
 * has k*n, and `out` shares no memory with `a` or `b`.
 * @param out - C (m×n).
 * @param a - A (m×k, or k×m if `transA`).
 * @param b - B (k×n, or n×k if `transB`).
 * @param m - rows of C.
 * @param n - columns of C.
 * @param k - inner dimension.
 * @param transA - transpose A.
 * @param transB - transpose B.
 * @param alpha - scale of the product.
 * @param beta - scale of the previous C.
 * @throws `EbbflowError` with every problem found (`invalid_parameter`, `shape_mismatch`).
 * @category Kernels
 * @example
 * ```ts
 * checkGemm(new Float64Array(6), new Float64Array(6), new Float64Array(5), 2, 3, 3, false, false, 1, 0);
 * // throws EbbflowError: b: expected length 9 (k*n with k=3, n=3), received length 5 (gemm) [shape_mismatch]
 * ```
 */
export function checkGemm(
  out: FloatArray,
  a: ReadonlyFloatArray,
  b: ReadonlyFloatArray,
  m: number,
  n: number,
  k: number,
  transA: boolean,
  transB: boolean,
  alpha: number,
  beta: number,
): void {
  const fn = "gemm";
  const issues: Issue[] = [];
  const sizesOk = [size(issues, fn, "m", m), size(issues, fn, "n", n), size(issues, fn, "k", k)].every(Boolean);
  flag(issues, fn, "transA", transA);
  flag(issues, fn, "transB", transB);
  finite(issues, fn, "alpha", alpha);
  finite(issues, fn, "beta", beta);
  const aShape = transA ? `k*m with k=${k}, m=${m}` : `m*k with m=${m}, k=${k}`;
  const bShape = transB ? `n*k with n=${n}, k=${k}` : `k*n with k=${k}, n=${n}`;
  const okOut = array(issues, fn, "out", out, sizesOk ? m * n : undefined, `m*n with m=${m}, n=${n}`);
  const okA = array(issues, fn, "a", a, sizesOk ? m * k : undefined, aShape);
  const okB = array(issues, fn, "b", b, sizesOk ? k * n : undefined, bShape);
  if (okOut && okA) disjoint(issues, fn, out, "a", a);
  if (okOut && okB) disjoint(issues, fn, out, "b", b);
  throwIfAny(issues);
}

/**
 * Validates the arguments of {@link gemv}: `rows`, `cols` integers ≥ 0
 * describing A as stored, `alpha`, `beta` finite, `a` of length rows*cols,
 * `x` of length cols (rows if `trans`), `out` of length rows (cols if
 * `trans`), `out` sharing no memory with `a` or `x`.
 * @param out - y.
 * @param a - A, rows×cols.
 * @param x - x.
 * @param rows - rows of A as stored.
 * @param cols - columns of A as stored.
 * @param trans - multiply by the transpose.
 * @param alpha - scale of the product.
 * @param beta - scale of the previous y.
 * @throws `EbbflowError` with every problem found (`invalid_parameter`, `shape_mismatch`).
 * @category Kernels
 */
export function checkGemv(
  out: FloatArray,
  a: ReadonlyFloatArray,
  x: ReadonlyFloatArray,
  rows: number,
  cols: number,
  trans: boolean,
  alpha: number,
  beta: number,
): void {
  const fn = "gemv";
  const issues: Issue[] = [];
  const sizesOk = [size(issues, fn, "rows", rows), size(issues, fn, "cols", cols)].every(Boolean);
  flag(issues, fn, "trans", trans);
  finite(issues, fn, "alpha", alpha);
  finite(issues, fn, "beta", beta);
  const outLen = trans ? cols : rows;
  const xLen = trans ? rows : cols;
  const okOut = array(issues, fn, "out", out, sizesOk ? outLen : undefined, trans ? `cols=${cols}, as trans is true` : `rows=${rows}`);
  const okA = array(issues, fn, "a", a, sizesOk ? rows * cols : undefined, `rows*cols with rows=${rows}, cols=${cols}`);
  const okX = array(issues, fn, "x", x, sizesOk ? xLen : undefined, trans ? `rows=${rows}, as trans is true` : `cols=${cols}`);
  if (okOut && okA) disjoint(issues, fn, out, "a", a);
  if (okOut && okX) disjoint(issues, fn, out, "x", x);
  throwIfAny(issues);
}

/**
 * Validates the arguments of {@link ger}: `m`, `n` integers ≥ 0, `alpha`
 * finite, `out` of length m*n, `x` of length m, `y` of length n, `out`
 * sharing no memory with `x` or `y`.
 * @param out - A (m×n).
 * @param x - column factor (m).
 * @param y - row factor (n).
 * @param m - rows of A.
 * @param n - columns of A.
 * @param alpha - scale.
 * @throws `EbbflowError` with every problem found (`invalid_parameter`, `shape_mismatch`).
 * @category Kernels
 */
export function checkGer(out: FloatArray, x: ReadonlyFloatArray, y: ReadonlyFloatArray, m: number, n: number, alpha: number): void {
  const fn = "ger";
  const issues: Issue[] = [];
  const sizesOk = [size(issues, fn, "m", m), size(issues, fn, "n", n)].every(Boolean);
  finite(issues, fn, "alpha", alpha);
  const okOut = array(issues, fn, "out", out, sizesOk ? m * n : undefined, `m*n with m=${m}, n=${n}`);
  const okX = array(issues, fn, "x", x, sizesOk ? m : undefined, `m=${m}`);
  const okY = array(issues, fn, "y", y, sizesOk ? n : undefined, `n=${n}`);
  if (okOut && okX) disjoint(issues, fn, out, "x", x);
  if (okOut && okY) disjoint(issues, fn, out, "y", y);
  throwIfAny(issues);
}

/**
 * Elementwise arguments: with `n` omitted every array has the length of the
 * first; with `n` given it is an integer ≥ 0 and every array has at least `n`
 * elements. The output (if any) is identical to or disjoint from each input.
 */
function checkVectors(
  fn: string,
  out: unknown,
  inputs: readonly (readonly [string, unknown])[],
  n: unknown,
  scalars: readonly (readonly [string, unknown])[] = [],
  issues: Issue[] = [],
): void {
  for (const [path, v] of scalars) finite(issues, fn, path, v);
  const nOk = n === undefined || size(issues, fn, "n", n);
  const all: (readonly [string, unknown])[] = out === undefined ? [...inputs] : [["out", out], ...inputs];
  const [firstPath, first] = all[0] as readonly [string, unknown];
  const firstOk = array(issues, fn, firstPath, first, nOk && typeof n === "number" ? n : undefined, `n=${String(n)}`, true);
  const expected: number | undefined =
    n === undefined ? (firstOk ? (first as AnyFloatArray).length : undefined) : nOk ? (n as number) : undefined;
  const how = n === undefined ? `the length of ${firstPath}` : `n=${String(n)}`;
  const ok: boolean[] = [];
  for (const [path, v] of all.slice(1)) ok.push(array(issues, fn, path, v, expected, how, n !== undefined));
  if (out !== undefined && firstOk) {
    inputs.forEach(([path, v], i) => {
      if (ok[i] === true) identicalOrDisjoint(issues, fn, out as AnyFloatArray, path, v as AnyFloatArray);
    });
  }
  throwIfAny(issues);
}

/**
 * Validating versions of every kernel, for calls at API edges: each member
 * checks its arguments (throwing an `EbbflowError` that lists every
 * problem, as `checkGemm` does) and then runs the kernel of the same
 * name. Elementwise members require equal lengths (or at least `n` when `n` is
 * given) and an `out` that is identical to or disjoint from each input; the
 * matrix members require exact lengths and an `out` disjoint from the inputs.
 * Reductions require finite-length float arrays only: NaN data is not an
 * argument error (the reductions report it).
 * @category Kernels
 * @example
 * ```ts
 * kernelsChecked.add(new Float64Array(3), new Float64Array(3), new Float64Array(2));
 * // throws EbbflowError: b: expected length 3 (the length of out), received length 2 (add) [shape_mismatch]
 * ```
 */
export const kernelsChecked = Object.freeze({
  /** {@link gemm} after `checkGemm`. */
  gemm<T extends FloatArray>(
    out: T,
    a: ReadonlyFloatArray,
    b: ReadonlyFloatArray,
    m: number,
    n: number,
    k: number,
    transA: boolean,
    transB: boolean,
    alpha: number,
    beta: number,
  ): T {
    checkGemm(out, a, b, m, n, k, transA, transB, alpha, beta);
    return gemm(out, a, b, m, n, k, transA, transB, alpha, beta);
  },
  /** {@link gemv} after `checkGemv`. */
  gemv<T extends FloatArray>(out: T, a: ReadonlyFloatArray, x: ReadonlyFloatArray, rows: number, cols: number, trans: boolean, alpha: number, beta: number): T {
    checkGemv(out, a, x, rows, cols, trans, alpha, beta);
    return gemv(out, a, x, rows, cols, trans, alpha, beta);
  },
  /** {@link ger} after `checkGer`. */
  ger<T extends FloatArray>(out: T, x: ReadonlyFloatArray, y: ReadonlyFloatArray, m: number, n: number, alpha: number): T {
    checkGer(out, x, y, m, n, alpha);
    return ger(out, x, y, m, n, alpha);
  },
  /** {@link add} with checked lengths and aliasing. */
  add<T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n?: number): T {
    checkVectors("add", out, [["a", a], ["b", b]], n);
    return add(out, a, b, n);
  },
  /** {@link sub} with checked lengths and aliasing. */
  sub<T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n?: number): T {
    checkVectors("sub", out, [["a", a], ["b", b]], n);
    return sub(out, a, b, n);
  },
  /** {@link mul} with checked lengths and aliasing. */
  mul<T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n?: number): T {
    checkVectors("mul", out, [["a", a], ["b", b]], n);
    return mul(out, a, b, n);
  },
  /** {@link axpy} with checked lengths, aliasing and a finite `alpha`. */
  axpy<T extends FloatArray>(out: T, a: ReadonlyFloatArray, alpha: number, n?: number): T {
    checkVectors("axpy", out, [["a", a]], n, [["alpha", alpha]]);
    return axpy(out, a, alpha, n);
  },
  /** {@link axpby} with checked lengths, aliasing and finite scales. */
  axpby<T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, alpha: number, beta: number, n?: number): T {
    checkVectors("axpby", out, [["a", a], ["b", b]], n, [["alpha", alpha], ["beta", beta]]);
    return axpby(out, a, b, alpha, beta, n);
  },
  /** {@link scale} with checked lengths, aliasing and a finite `alpha`. */
  scale<T extends FloatArray>(out: T, a: ReadonlyFloatArray, alpha: number, n?: number): T {
    checkVectors("scale", out, [["a", a]], n, [["alpha", alpha]]);
    return scale(out, a, alpha, n);
  },
  /** {@link fill} with a checked `n`; `value` may be any number (NaN included). */
  fill<T extends FloatArray>(out: T, value: number, n?: number): T {
    const issues: Issue[] = [];
    if (typeof value !== "number") issues.push(issue("invalid_parameter", "value", "a number", value, "fill"));
    checkVectors("fill", out, [], n, [], issues);
    return fill(out, value, n);
  },
  /** {@link copy} with checked lengths and aliasing. */
  copy<T extends FloatArray>(out: T, a: ReadonlyFloatArray, n?: number): T {
    checkVectors("copy", out, [["a", a]], n);
    return copy(out, a, n);
  },
  /** {@link maxAbsDiff} with checked lengths. */
  maxAbsDiff(a: ReadonlyFloatArray, b: ReadonlyFloatArray, n?: number): number {
    checkVectors("maxAbsDiff", undefined, [["a", a], ["b", b]], n);
    return maxAbsDiff(a, b, n);
  },
  /** {@link allFinite} with a checked `n`. */
  allFinite(a: ReadonlyFloatArray, n?: number): boolean {
    checkVectors("allFinite", undefined, [["a", a]], n);
    return allFinite(a, n);
  },
  /** {@link maxAbs} with a checked `n`. */
  maxAbs(a: ReadonlyFloatArray, n?: number): number {
    checkVectors("maxAbs", undefined, [["a", a]], n);
    return maxAbs(a, n);
  },
  /** {@link dot} with checked lengths. */
  dot(a: ReadonlyFloatArray, b: ReadonlyFloatArray, n?: number): number {
    checkVectors("dot", undefined, [["a", a], ["b", b]], n);
    return dot(a, b, n);
  },
  /** {@link sumSquares} with a checked `n`. */
  sumSquares(a: ReadonlyFloatArray, n?: number): number {
    checkVectors("sumSquares", undefined, [["a", a]], n);
    return sumSquares(a, n);
  },
  /** {@link addRowVector} with `out` of length rows*cols, `bias` of length cols, disjoint. */
  addRowVector<T extends FloatArray>(out: T, bias: ReadonlyFloatArray, rows: number, cols: number): T {
    const fn = "addRowVector";
    const issues: Issue[] = [];
    const sizesOk = [size(issues, fn, "rows", rows), size(issues, fn, "cols", cols)].every(Boolean);
    const okOut = array(issues, fn, "out", out, sizesOk ? rows * cols : undefined, `rows*cols with rows=${rows}, cols=${cols}`);
    const okBias = array(issues, fn, "bias", bias, sizesOk ? cols : undefined, `cols=${cols}`);
    if (okOut && okBias) disjoint(issues, fn, out, "bias", bias);
    throwIfAny(issues);
    return addRowVector(out, bias, rows, cols);
  },
  /** {@link sumRows} with `out` of length cols, `a` of length rows*cols, disjoint, finite scales. */
  sumRows<T extends FloatArray>(out: T, a: ReadonlyFloatArray, rows: number, cols: number, alpha: number, beta: number): T {
    const fn = "sumRows";
    const issues: Issue[] = [];
    const sizesOk = [size(issues, fn, "rows", rows), size(issues, fn, "cols", cols)].every(Boolean);
    finite(issues, fn, "alpha", alpha);
    finite(issues, fn, "beta", beta);
    const okOut = array(issues, fn, "out", out, sizesOk ? cols : undefined, `cols=${cols}`);
    const okA = array(issues, fn, "a", a, sizesOk ? rows * cols : undefined, `rows*cols with rows=${rows}, cols=${cols}`);
    if (okOut && okA) disjoint(issues, fn, out, "a", a);
    throwIfAny(issues);
    return sumRows(out, a, rows, cols, alpha, beta);
  },
});
