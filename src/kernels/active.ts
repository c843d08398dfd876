/**
 * Activity-sparse products: `C = alpha·X·Wᵀ + beta·C` (X the presynaptic activities, one row per pattern;
 * W a weight matrix stored receiving × sending) computed only over the presynaptic units that are active
 * in each pattern, listed once per call by {@link listActive}.
 *
 * Exactness: an entry is formed as the dense kernel `gemm(out, x, w, m, n, k, false, true, alpha, beta)`
 * forms it, in the same order of summation, with the zero terms left out. A left-out term adds
 * `x·w = ±0` (w finite) to a partial sum that starts at +0; in round-to-nearest such a sum is never −0
 * (IEEE 754-2019 §6.3: an exact zero sum is −0 only when both terms are −0), and `s + (±0) = s` for every
 * `s ≠ −0`, so no bit changes (Goldberg, "What every computer scientist should know about floating-point
 * arithmetic", ACM Computing Surveys 23(1), 1991, on signed zero). The result therefore equals the dense
 * kernel's bit for bit whenever the weights paired with the skipped zeros are finite (an infinite or NaN
 * weight times 0 is NaN in the dense product and absent here).
 *
 * Granularity: the TypeScript kernels list single entries; the WebAssembly kernels list vector blocks
 * (4 float32 or 2 float64 entries at offsets 0, L, 2L, … of a row; the last k mod L entries are always
 * added), since their dense product keeps one accumulator lane per offset mod L.
 * @module
 */
import type { Dtype, FloatArray } from "../types/index.js";
import type { BackendName } from "./backend.js";
import { gemm } from "./gemm.js";
import type { ReadonlyFloatArray } from "./types.js";

/**
 * The activity-sparse product kernels of a backend.
 * @category Kernels
 */
export interface ActiveKernels {
  /** Entries per listed block for arrays of this dtype: 1 (TypeScript), 4 (float32) or 2 (float64) on WebAssembly. */
  blockWidth(dtype: Dtype): number;
  /**
   * Lists, for each of the `rows` rows of `x` (rows × k), the blocks with a non-zero entry (NaN counts, −0 does
   * not) in `index[start[r] .. start[r + 1])`, ascending, and returns how many were listed. `index` needs room
   * for `rows · floor(k / width)` blocks, `start` for `rows + 1` offsets.
   */
  listActive(x: ReadonlyFloatArray, rows: number, k: number, index: Int32Array, start: Int32Array): number;
  /**
   * `out (m × n) = alpha·X·Wᵀ + beta·out` with X m × k and W n × k row-major, over the blocks `listActive` listed
   * for X. `out` must not share memory with `x` or `w`.
   */
  activeProduct<T extends FloatArray>(out: T, x: ReadonlyFloatArray, w: ReadonlyFloatArray, m: number, n: number, k: number, index: Int32Array, start: Int32Array, alpha: number, beta: number): T;
  /** Whether `activeProduct` gives the backend's `gemm(out, x, w, m, n, k, false, true, alpha, beta)` bit for bit (finite weights) at this shape. */
  exact(m: number, k: number): boolean;
  /** A zeroed index array the kernels read without a copy. */
  indices(n: number): Int32Array;
}

/**
 * Fraction of listed blocks (active entries on TypeScript, active vector blocks on WebAssembly) below which the
 * settler runs {@link ActiveKernels.activeProduct} instead of the dense product, per backend: `wide` for
 * products into 64 or more receiving units, `narrow` for fewer (the listing, paid on every call, is then
 * shared by fewer outputs). Measured with `npm run bench -- active` (784→500, 500→500 and 500→10 at batch 20
 * and 64, listing included; see docs/guide/speed.md): the active product costs about 1.3–2× the dense one per
 * computed term (one row of X per tile instead of two, gathered blocks of W), so it pays below about half the
 * blocks, and less with relaxed SIMD, whose dense tiles gain more from fused multiply-adds.
 * @category Kernels
 */
export const ACTIVE_PRODUCT_CROSSOVER: Readonly<Record<BackendName, { readonly wide: number; readonly narrow: number }>> = Object.freeze({
  typescript: { wide: 0.5, narrow: 0.3 },
  "wasm-simd": { wide: 0.5, narrow: 0.35 },
  "wasm-relaxed-simd": { wide: 0.4, narrow: 0.2 },
});

/**
 * Lists the non-zero entries of each row of `x` (rows × k): the TypeScript kernels' {@link ActiveKernels.listActive}.
 * @category Kernels
 */
export function listActive(x: ReadonlyFloatArray, rows: number, k: number, index: Int32Array, start: Int32Array): number {
  let count = 0;
  for (let r = 0; r < rows; r++) {
    start[r] = count;
    const o = r * k;
    for (let p = 0; p < k; p++) if (x[o + p] !== 0) index[count++] = p;
  }
  start[rows] = count;
  return count;
}

/**
 * `out = alpha·X·Wᵀ + beta·out` over the entries {@link listActive} listed: the TypeScript kernels'
 * {@link ActiveKernels.activeProduct}, bit for bit {@link gemm} with `transB` (sums in float64 in ascending
 * order, four rows of W at a time) when the skipped weights are finite.
 * @category Kernels
 */
export function activeProduct<T extends FloatArray>(out: T, x: ReadonlyFloatArray, w: ReadonlyFloatArray, m: number, n: number, k: number, index: Int32Array, start: Int32Array, alpha: number, beta: number): T {
  if (m <= 0 || n <= 0) return out;
  if (alpha === 0 || k <= 0) return gemm(out, x, w, m, n, k, false, true, alpha, beta);
  const n4 = n - (n & 3);
  for (let i = 0; i < m; i++) {
    const a0 = i * k;
    const c0 = i * n;
    const q0 = start[i]!;
    const q1 = start[i + 1]!;
    let j = 0;
    for (; j < n4; j += 4) {
      const b0 = j * k;
      const b1 = b0 + k;
      const b2 = b1 + k;
      const b3 = b2 + k;
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      for (let q = q0; q < q1; q++) {
        const p = index[q]!;
        const v = x[a0 + p]!;
        s0 += v * w[b0 + p]!;
        s1 += v * w[b1 + p]!;
        s2 += v * w[b2 + p]!;
        s3 += v * w[b3 + p]!;
      }
      const c = c0 + j;
      if (beta === 0) {
        out[c] = alpha * s0;
        out[c + 1] = alpha * s1;
        out[c + 2] = alpha * s2;
        out[c + 3] = alpha * s3;
      } else {
        out[c] = alpha * s0 + beta * out[c]!;
        out[c + 1] = alpha * s1 + beta * out[c + 1]!;
        out[c + 2] = alpha * s2 + beta * out[c + 2]!;
        out[c + 3] = alpha * s3 + beta * out[c + 3]!;
      }
    }
    for (; j < n; j++) {
      const b0 = j * k;
      let s = 0;
      for (let q = q0; q < q1; q++) {
        const p = index[q]!;
        s += x[a0 + p]! * w[b0 + p]!;
      }
      const c = c0 + j;
      out[c] = beta === 0 ? alpha * s : alpha * s + beta * out[c]!;
    }
  }
  return out;
}

/**
 * The TypeScript backend's activity-sparse kernels (entries listed one by one; exact at every shape).
 * @category Kernels
 */
export const typescriptActiveKernels: ActiveKernels = Object.freeze({
  blockWidth: () => 1,
  listActive,
  activeProduct,
  exact: () => true,
  indices: (n: number) => new Int32Array(n),
});

/**
 * Lists the non-zero vector blocks of width `width` of each row (the WebAssembly kernels' listing, for arrays
 * outside their memory). @internal
 */
export function listActiveBlocks(x: ReadonlyFloatArray, rows: number, k: number, width: number, index: Int32Array, start: Int32Array): number {
  const kb = Math.floor(k / width);
  let count = 0;
  for (let r = 0; r < rows; r++) {
    start[r] = count;
    const o = r * k;
    for (let q = 0; q < kb; q++) {
      const e = o + q * width;
      for (let l = 0; l < width; l++) {
        if (x[e + l] !== 0) {
          index[count++] = q;
          break;
        }
      }
    }
  }
  start[rows] = count;
  return count;
}
