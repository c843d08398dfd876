/**
 * Elementwise kernels on flat typed arrays, output first.
 *
 * Every kernel here reads element `i` of its inputs before writing element `i`
 * of `out` and never looks at another index, so `out` may be the very same
 * array as any input (`add(x, x, y)` adds `y` into `x`). What is not allowed is
 * a partial overlap: two different views into one buffer at different offsets.
 *
 * `n` (optional, last) is the number of leading elements to process; it
 * defaults to `out.length`. Nothing is checked (see `kernelsChecked`).
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { ReadonlyFloatArray } from "./types.js";

/**
 * Elementwise sum `out[i] = a[i] + b[i]`.
 *
 * Aliasing: `out` may be `a`, `b`, or both.
 * @param out - destination.
 * @param a - first summand.
 * @param b - second summand.
 * @param n - elements to process (default `out.length`).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * add(new Float64Array(2), Float64Array.of(1, 2), Float64Array.of(10, 20)); // Float64Array [11, 22]
 * ```
 */
export function add<T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = out.length): T {
  for (let i = 0; i < n; i++) out[i] = a[i]! + b[i]!;
  return out;
}

/**
 * Elementwise difference `out[i] = a[i] - b[i]`.
 *
 * Aliasing: `out` may be `a`, `b`, or both.
 * @param out - destination.
 * @param a - minuend.
 * @param b - subtrahend.
 * @param n - elements to process (default `out.length`).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * sub(new Float64Array(2), Float64Array.of(1, 2), Float64Array.of(10, 20)); // Float64Array [-9, -18]
 * ```
 */
export function sub<T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = out.length): T {
  for (let i = 0; i < n; i++) out[i] = a[i]! - b[i]!;
  return out;
}

/**
 * Elementwise (Hadamard) product `out[i] = a[i] * b[i]`.
 *
 * Aliasing: `out` may be `a`, `b`, or both (`mul(x, x, x)` squares `x`).
 * @param out - destination.
 * @param a - first factor.
 * @param b - second factor.
 * @param n - elements to process (default `out.length`).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * mul(new Float64Array(2), Float64Array.of(1, 2), Float64Array.of(10, 20)); // Float64Array [10, 40]
 * ```
 */
export function mul<T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = out.length): T {
  for (let i = 0; i < n; i++) out[i] = a[i]! * b[i]!;
  return out;
}

/**
 * Scaled accumulation `out[i] = alpha * a[i] + out[i]` (BLAS xAXPY: Lawson,
 * Hanson, Kincaid & Krogh, 1979, ACM Trans. Math. Softw. 5(3):308-323).
 *
 * Aliasing: `out` may be `a` (then `out[i] = alpha * out[i] + out[i]`).
 * @param out - accumulator, updated in place.
 * @param a - increment.
 * @param alpha - scale of the increment.
 * @param n - elements to process (default `out.length`).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * axpy(Float64Array.of(1, 1), Float64Array.of(2, 4), 0.5); // Float64Array [2, 3]
 * ```
 */
export function axpy<T extends FloatArray>(out: T, a: ReadonlyFloatArray, alpha: number, n: number = out.length): T {
  for (let i = 0; i < n; i++) out[i] = alpha * a[i]! + out[i]!;
  return out;
}

/**
 * Linear combination `out[i] = alpha * a[i] + beta * b[i]`. Both terms are
 * always evaluated (`beta = 0` with `b[i] = NaN` gives NaN).
 *
 * Aliasing: `out` may be `a`, `b`, or both.
 * @param out - destination.
 * @param a - first term.
 * @param b - second term.
 * @param alpha - scale of `a`.
 * @param beta - scale of `b`.
 * @param n - elements to process (default `out.length`).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * axpby(new Float64Array(2), Float64Array.of(1, 2), Float64Array.of(10, 20), 2, 0.5); // Float64Array [7, 14]
 * ```
 */
export function axpby<T extends FloatArray>(
  out: T,
  a: ReadonlyFloatArray,
  b: ReadonlyFloatArray,
  alpha: number,
  beta: number,
  n: number = out.length,
): T {
  for (let i = 0; i < n; i++) out[i] = alpha * a[i]! + beta * b[i]!;
  return out;
}

/**
 * Scaling `out[i] = alpha * a[i]`.
 *
 * Aliasing: `out` may be `a` (scaling in place).
 * @param out - destination.
 * @param a - source.
 * @param alpha - factor.
 * @param n - elements to process (default `out.length`).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * const x = Float64Array.of(1, -2);
 * scale(x, x, 3); // Float64Array [3, -6]
 * ```
 */
export function scale<T extends FloatArray>(out: T, a: ReadonlyFloatArray, alpha: number, n: number = out.length): T {
  for (let i = 0; i < n; i++) out[i] = alpha * a[i]!;
  return out;
}

/**
 * Fills the first `n` elements: `out[i] = value`.
 *
 * Aliasing: no array input.
 * @param out - destination.
 * @param value - value to write (stored with the precision of `out`).
 * @param n - elements to write (default `out.length`).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * fill(new Float64Array(3), 0.5, 2); // Float64Array [0.5, 0.5, 0]
 * ```
 */
export function fill<T extends FloatArray>(out: T, value: number, n: number = out.length): T {
  out.fill(value, 0, n);
  return out;
}

/**
 * Copies `out[i] = a[i]` (rounded to the precision of `out`).
 *
 * Aliasing: `out` may be `a` (nothing changes).
 * @param out - destination.
 * @param a - source.
 * @param n - elements to copy (default `out.length`).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * copy(new Float32Array(2), Float64Array.of(0.5, 1 / 3)); // Float32Array [0.5, 0.3333333432674408]
 * ```
 */
export function copy<T extends FloatArray>(out: T, a: ReadonlyFloatArray, n: number = out.length): T {
  if ((out as ReadonlyFloatArray) === a) return out;
  if (n === a.length) out.set(a);
  else for (let i = 0; i < n; i++) out[i] = a[i]!;
  return out;
}
