/**
 * Row broadcasts and column sums on batch-major arrays (row = pattern).
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { ReadonlyFloatArray } from "./types.js";

/**
 * Adds a vector to every row: `out[r*cols + j] += bias[j]` for each of `rows`
 * rows (for example a bias added to the net input of every pattern in a batch).
 *
 * Aliasing: `out` must not share memory with `bias`.
 * @param out - rows×cols row-major, updated in place.
 * @param bias - `cols` entries.
 * @param rows - number of rows (patterns).
 * @param cols - number of columns (units).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * addRowVector(Float64Array.of(1, 2, 3, 4), Float64Array.of(10, 20), 2, 2); // Float64Array [11, 22, 13, 24]
 * ```
 */
export function addRowVector<T extends FloatArray>(out: T, bias: ReadonlyFloatArray, rows: number, cols: number): T {
  for (let r = 0; r < rows; r++) {
    const base = r * cols;
    for (let j = 0; j < cols; j++) out[base + j] = out[base + j]! + bias[j]!;
  }
  return out;
}

/**
 * Column sums `out[j] = alpha * sum_r a[r*cols + j] + beta * out[j]` (for
 * example a bias update summed over the patterns of a batch).
 *
 * `beta = 0` overwrites `out` without reading it; `alpha = 0` scales `out` by
 * `beta` without reading `a`. Rows are added four at a time, so the sum is
 * `alpha` times a sum of 4-row partial sums (float64 arithmetic, rounded to
 * the storage type of `out` once per four rows).
 *
 * Aliasing: `out` must not share memory with `a`.
 * @param out - `cols` entries.
 * @param a - rows×cols row-major.
 * @param rows - number of rows summed.
 * @param cols - number of columns.
 * @param alpha - scale of the sum.
 * @param beta - scale of the previous `out` (0: overwrite).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * sumRows(new Float64Array(2), Float64Array.of(1, 2, 3, 4, 5, 6), 3, 2, 1, 0); // Float64Array [9, 12]
 * ```
 */
export function sumRows<T extends FloatArray>(
  out: T,
  a: ReadonlyFloatArray,
  rows: number,
  cols: number,
  alpha: number,
  beta: number,
): T {
  if (beta === 0) out.fill(0, 0, cols);
  else if (beta !== 1) for (let j = 0; j < cols; j++) out[j] = beta * out[j]!;
  if (alpha === 0) return out;
  const r4 = rows - (rows & 3);
  let r = 0;
  for (; r < r4; r += 4) {
    const a0 = r * cols;
    const a1 = a0 + cols;
    const a2 = a1 + cols;
    const a3 = a2 + cols;
    for (let j = 0; j < cols; j++) {
      out[j] = out[j]! + alpha * (a[a0 + j]! + a[a1 + j]! + (a[a2 + j]! + a[a3 + j]!));
    }
  }
  for (; r < rows; r++) {
    const a0 = r * cols;
    for (let j = 0; j < cols; j++) out[j] = out[j]! + alpha * a[a0 + j]!;
  }
  return out;
}
