/**
 * Reductions used by the stop rule and the divergence check of settling.
 *
 * None of them skips NaN: a NaN anywhere in the inputs gives NaN (or `false`
 * for {@link allFinite}), so a diverging state can never look converged.
 * `n` (optional, last) is the number of leading elements; it defaults to the
 * length of the first array. Nothing is checked (see `kernelsChecked`).
 * @module
 */
import type { ReadonlyFloatArray } from "./types.js";

/**
 * Largest absolute difference `max_i |a[i] - b[i]|` (0 when `n = 0`).
 *
 * Returns NaN as soon as a difference is NaN (a NaN in either input, or the
 * same infinity in both, since `Infinity - Infinity` is NaN); an infinity
 * facing a finite value gives `Infinity`.
 * @param a - first array.
 * @param b - second array.
 * @param n - elements to compare (default `a.length`).
 * @returns the largest absolute difference, or NaN.
 * @category Kernels
 * @example
 * ```ts
 * maxAbsDiff(Float64Array.of(1, 2, 3), Float64Array.of(1, 2.5, 2)); // 1
 * maxAbsDiff(Float64Array.of(1, NaN), Float64Array.of(1, 2)); // NaN
 * ```
 */
export function maxAbsDiff(a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = a.length): number {
  let best = 0;
  for (let i = 0; i < n; i++) {
    const d = Math.abs(a[i]! - b[i]!);
    if (d > best) best = d;
    else if (d !== d) return NaN;
  }
  return best;
}

/**
 * Whether every one of the first `n` elements is finite (no NaN, no ±Infinity).
 * Returns `true` for `n = 0`.
 * @param a - array to scan.
 * @param n - elements to scan (default `a.length`).
 * @returns `true` when all are finite.
 * @category Kernels
 * @example
 * ```ts
 * allFinite(Float64Array.of(1, -Infinity)); // false
 * ```
 */
export function allFinite(a: ReadonlyFloatArray, n: number = a.length): boolean {
  for (let i = 0; i < n; i++) {
    const v = a[i]!;
    // v - v is 0 for every finite v and NaN for NaN and ±Infinity
    if (v - v !== 0) return false;
  }
  return true;
}

/**
 * Largest magnitude `max_i |a[i]|` (0 when `n = 0`); NaN if any element is NaN.
 * @param a - array to scan.
 * @param n - elements to scan (default `a.length`).
 * @returns the largest magnitude, or NaN.
 * @category Kernels
 * @example
 * ```ts
 * maxAbs(Float64Array.of(1, -3, 2)); // 3
 * ```
 */
export function maxAbs(a: ReadonlyFloatArray, n: number = a.length): number {
  let best = 0;
  for (let i = 0; i < n; i++) {
    const d = Math.abs(a[i]!);
    if (d > best) best = d;
    else if (d !== d) return NaN;
  }
  return best;
}

/**
 * Inner product `sum_i a[i] * b[i]`, summed in float64 with four interleaved
 * partial sums (BLAS xDOT: Lawson, Hanson, Kincaid & Krogh, 1979, ACM Trans.
 * Math. Softw. 5(3):308-323).
 * @param a - first array.
 * @param b - second array.
 * @param n - elements to use (default `a.length`).
 * @returns the inner product (0 when `n = 0`).
 * @category Kernels
 * @example
 * ```ts
 * dot(Float64Array.of(1, 2, 3), Float64Array.of(4, 5, 6)); // 32
 * ```
 */
export function dot(a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = a.length): number {
  const n4 = n - (n & 3);
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let i = 0;
  for (; i < n4; i += 4) {
    s0 += a[i]! * b[i]!;
    s1 += a[i + 1]! * b[i + 1]!;
    s2 += a[i + 2]! * b[i + 2]!;
    s3 += a[i + 3]! * b[i + 3]!;
  }
  for (; i < n; i++) s0 += a[i]! * b[i]!;
  return s0 + s1 + (s2 + s3);
}

/**
 * Sum of squares `sum_i a[i]^2`, summed in float64 with four interleaved
 * partial sums.
 * @param a - array.
 * @param n - elements to use (default `a.length`).
 * @returns the sum of squares (0 when `n = 0`).
 * @category Kernels
 * @example
 * ```ts
 * sumSquares(Float64Array.of(3, 4)); // 25
 * ```
 */
export function sumSquares(a: ReadonlyFloatArray, n: number = a.length): number {
  const n4 = n - (n & 3);
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let i = 0;
  for (; i < n4; i += 4) {
    const x0 = a[i]!;
    const x1 = a[i + 1]!;
    const x2 = a[i + 2]!;
    const x3 = a[i + 3]!;
    s0 += x0 * x0;
    s1 += x1 * x1;
    s2 += x2 * x2;
    s3 += x3 * x3;
  }
  for (; i < n; i++) {
    const x = a[i]!;
    s0 += x * x;
  }
  return s0 + s1 + (s2 + s3);
}
