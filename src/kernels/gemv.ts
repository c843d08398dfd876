/**
 * Matrix-vector product on a flat row-major typed array.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { ReadonlyFloatArray } from "./types.js";

/**
 * Matrix-vector product `y = alpha * op(A) x + beta * y`.
 *
 * `rows` and `cols` always describe `A` as stored (rows×cols, row-major),
 * whatever `trans` says (the BLAS convention):
 * - `trans = false`: `y = alpha * A x + beta * y`, `x` has `cols` entries,
 *   `out` has `rows`;
 * - `trans = true`: `y = alpha * Aᵀ x + beta * y`, `x` has `rows` entries,
 *   `out` has `cols`.
 *
 * `beta = 0` overwrites `out` without reading it; `alpha = 0` scales `out` by
 * `beta` without reading `A` or `x`. Nothing is checked (see
 * `checkGemv`).
 *
 * Aliasing: `out` must not share memory with `a` or `x`.
 *
 * Definition: level-2 BLAS xGEMV (Dongarra, Du Croz, Hammarling & Hanson,
 * 1988, ACM Trans. Math. Softw. 14(1):1-17), row-major.
 *
 * @param out - y: `rows` entries (`cols` if `trans`).
 * @param a - A, rows×cols row-major.
 * @param x - x: `cols` entries (`rows` if `trans`).
 * @param rows - rows of A as stored.
 * @param cols - columns of A as stored.
 * @param trans - multiply by the transpose of A.
 * @param alpha - scale of the product.
 * @param beta - scale of the previous y (0: overwrite).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * const A = Float64Array.of(1, 2, 3, 4, 5, 6); // 2×3
 * gemv(new Float64Array(2), A, Float64Array.of(1, 1, 1), 2, 3, false, 1, 0); // Float64Array [6, 15]
 * gemv(new Float64Array(3), A, Float64Array.of(1, 1), 2, 3, true, 1, 0); // Float64Array [5, 7, 9]
 * ```
 */
export function gemv<T extends FloatArray>(
  out: T,
  a: ReadonlyFloatArray,
  x: ReadonlyFloatArray,
  rows: number,
  cols: number,
  trans: boolean,
  alpha: number,
  beta: number,
): T {
  if (trans) {
    transposedProduct(out, a, x, rows, cols, alpha, beta);
  } else {
    rowProducts(out, a, x, rows, cols, alpha, beta);
  }
  return out;
}

/** y[i] = alpha * (row i of A) · x + beta * y[i], four rows per pass over x. */
function rowProducts(
  y: FloatArray,
  a: ReadonlyFloatArray,
  x: ReadonlyFloatArray,
  rows: number,
  cols: number,
  alpha: number,
  beta: number,
): void {
  if (rows <= 0) return;
  if (alpha === 0 || cols <= 0) {
    scaleVector(y, rows, beta);
    return;
  }
  const r4 = rows - (rows & 3);
  let i = 0;
  for (; i < r4; i += 4) {
    const a0 = i * cols;
    const a1 = a0 + cols;
    const a2 = a1 + cols;
    const a3 = a2 + cols;
    let s0 = 0;
    let s1 = 0;
    let s2 = 0;
    let s3 = 0;
    for (let j = 0; j < cols; j++) {
      const v = x[j]!;
      s0 += a[a0 + j]! * v;
      s1 += a[a1 + j]! * v;
      s2 += a[a2 + j]! * v;
      s3 += a[a3 + j]! * v;
    }
    if (beta === 0) {
      y[i] = alpha * s0;
      y[i + 1] = alpha * s1;
      y[i + 2] = alpha * s2;
      y[i + 3] = alpha * s3;
    } else {
      y[i] = alpha * s0 + beta * y[i]!;
      y[i + 1] = alpha * s1 + beta * y[i + 1]!;
      y[i + 2] = alpha * s2 + beta * y[i + 2]!;
      y[i + 3] = alpha * s3 + beta * y[i + 3]!;
    }
  }
  for (; i < rows; i++) {
    const a0 = i * cols;
    let s = 0;
    for (let j = 0; j < cols; j++) s += a[a0 + j]! * x[j]!;
    y[i] = beta === 0 ? alpha * s : alpha * s + beta * y[i]!;
  }
}

/** y = alpha * Aᵀ x + beta * y: y receives multiples of rows of A, four rows per pass over y. */
function transposedProduct(
  y: FloatArray,
  a: ReadonlyFloatArray,
  x: ReadonlyFloatArray,
  rows: number,
  cols: number,
  alpha: number,
  beta: number,
): void {
  if (cols <= 0) return;
  scaleVector(y, cols, beta);
  if (alpha === 0) return;
  const r4 = rows - (rows & 3);
  let i = 0;
  for (; i < r4; i += 4) {
    const s0 = alpha * x[i]!;
    const s1 = alpha * x[i + 1]!;
    const s2 = alpha * x[i + 2]!;
    const s3 = alpha * x[i + 3]!;
    const a0 = i * cols;
    const a1 = a0 + cols;
    const a2 = a1 + cols;
    const a3 = a2 + cols;
    for (let j = 0; j < cols; j++) {
      y[j] = y[j]! + (s0 * a[a0 + j]! + s1 * a[a1 + j]! + (s2 * a[a2 + j]! + s3 * a[a3 + j]!));
    }
  }
  for (; i < rows; i++) {
    const s = alpha * x[i]!;
    const a0 = i * cols;
    for (let j = 0; j < cols; j++) y[j] = y[j]! + s * a[a0 + j]!;
  }
}

/** y[0..len) *= beta, with beta = 0 writing zeros (never reading y). */
function scaleVector(y: FloatArray, len: number, beta: number): void {
  if (beta === 0) y.fill(0, 0, len);
  else if (beta !== 1) for (let q = 0; q < len; q++) y[q] = beta * y[q]!;
}
