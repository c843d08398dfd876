/**
 * Outer-product accumulation on a flat row-major typed array.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { ReadonlyFloatArray } from "./types.js";

/**
 * Outer-product accumulation (rank-one update) `A += alpha * x yᵀ`, that is
 * `A[i*n + j] += alpha * x[i] * y[j]` for an m×n row-major `A`.
 *
 * `alpha = 0` leaves `A` untouched without reading `x` or `y`; otherwise NaN
 * and infinities propagate. Nothing is checked (see `checkGer`).
 *
 * Aliasing: `out` must not share memory with `x` or `y`; `x` and `y` may be
 * the same array.
 *
 * Definition: level-2 BLAS xGER (Dongarra, Du Croz, Hammarling & Hanson, 1988,
 * ACM Trans. Math. Softw. 14(1):1-17), row-major.
 *
 * @param out - A, m×n row-major, updated in place.
 * @param x - column factor, m entries.
 * @param y - row factor, n entries.
 * @param m - rows of A.
 * @param n - columns of A.
 * @param alpha - scale of the outer product.
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * ger(new Float64Array(6), Float64Array.of(1, 2), Float64Array.of(1, 10, 100), 2, 3, 0.5);
 * // Float64Array [0.5, 5, 50, 1, 10, 100]
 * ```
 */
export function ger<T extends FloatArray>(
  out: T,
  x: ReadonlyFloatArray,
  y: ReadonlyFloatArray,
  m: number,
  n: number,
  alpha: number,
): T {
  if (alpha === 0) return out;
  const m2 = m - (m & 1);
  let i = 0;
  for (; i < m2; i += 2) {
    const s = alpha * x[i]!;
    const t = alpha * x[i + 1]!;
    const r0 = i * n;
    const r1 = r0 + n;
    for (let j = 0; j < n; j++) {
      const v = y[j]!;
      out[r0 + j] = out[r0 + j]! + s * v;
      out[r1 + j] = out[r1 + j]! + t * v;
    }
  }
  if (i < m) {
    const s = alpha * x[i]!;
    const r0 = i * n;
    for (let j = 0; j < n; j++) out[r0 + j] = out[r0 + j]! + s * y[j]!;
  }
  return out;
}
