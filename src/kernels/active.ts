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
 *
 * Tied feedback, `C = alpha·X·W + beta·C` (W not transposed), has its own kernel ({@link activeProductNN} here,
 * `activeProductNN` in assembly/active.ts) over single listed entries, following the other order of summation
 * that the dense kernel uses for that product (groups of eight terms on TypeScript, packed blocks of 256 steps
 * on WebAssembly).
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
  /**
   * Lists, for each of the `rows` rows of `x` (rows × k), the single entries that are non-zero (NaN counts, −0
   * does not) in `index[start[r] .. start[r + 1])`, ascending, and returns how many were listed (room for
   * `rows · k` entries). On TypeScript this is `listActive` (whose blocks are single entries).
   */
  listEntries(x: ReadonlyFloatArray, rows: number, k: number, index: Int32Array, start: Int32Array): number;
  /**
   * `out (m × n) = alpha·X·W + beta·out` with X m × k and W k × n row-major (tied feedback: X the receiving
   * layer's activities, W stored receiving × sending), over the entries `listEntries` listed for X. `out`
   * must not share memory with `x` or `w`.
   */
  activeProductNN<T extends FloatArray>(out: T, x: ReadonlyFloatArray, w: ReadonlyFloatArray, m: number, n: number, k: number, index: Int32Array, start: Int32Array, alpha: number, beta: number): T;
  /** Whether `activeProductNN` gives the backend's `gemm(out, x, w, m, n, k, false, false, alpha, beta)` bit for bit (finite weights) at this shape. */
  exactNN(m: number, k: number): boolean;
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
 * Fraction of non-zero entries of the receiving layer below which the settler runs tied feedback
 * (`eta_from += gain·X_to·W`) as {@link ActiveKernels.activeProductNN} instead of the dense product, per
 * backend. Measured with `npm run bench -- active` (feedback 10→500 and 500→500 at batch 20 and 64, entries
 * non-zero at random, listing included; see docs/guide/speed.md): dense / active fell through 1 at 35–45 %
 * (TypeScript), 40–60 % (SIMD) and 40–55 % (relaxed SIMD) of the entries; the WebAssembly active product
 * costs about 2× the dense one per computed term (one pattern per tile: each load of the weights feeds one
 * multiply-add instead of four).
 * @category Kernels
 */
export const ACTIVE_FEEDBACK_CROSSOVER: Readonly<Record<BackendName, number>> = Object.freeze({
  typescript: 0.4,
  "wasm-simd": 0.45,
  "wasm-relaxed-simd": 0.4,
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
 * `out = alpha·X·W + beta·out` (X m × k, W k × n) over the entries {@link listActive} listed: the TypeScript
 * kernels' {@link ActiveKernels.activeProductNN}, bit for bit {@link gemm} without transposes (finite weights
 * and alpha). Exactness: gemm adds to each entry of `out`, in ascending order, the sum of each group of eight
 * terms `(alpha·x_p)·w_pj` as the tree ((t0 + t1) + (t2 + t3)) + ((t4 + t5) + (t6 + t7)), then the last k mod 8
 * terms one by one. Here a group runs as that tree with its zero leaves left out (with one, two or three
 * listed entries; whole otherwise), the tail and the other groups over the listed entries only. Leaving out
 * a leaf `±0` changes a node's value at most in the sign of a zero (IEEE 754-2019 §6.3: s + (±0) = s for
 * s ≠ −0), so every partial value of an entry equals gemm's up to the sign of a zero, and equals it exactly
 * unless it is zero; a zero entry differs only if it started at −0 (beta ≠ 0): those few entries are
 * settled afterwards from the signs of all their terms, as gemm's additions would (−0 only if every term
 * is −0).
 * @category Kernels
 */
export function activeProductNN<T extends FloatArray>(out: T, x: ReadonlyFloatArray, w: ReadonlyFloatArray, m: number, n: number, k: number, index: Int32Array, start: Int32Array, alpha: number, beta: number): T {
  if (m <= 0 || n <= 0) return out;
  if (alpha === 0 || k <= 0 || !Number.isFinite(alpha)) return gemm(out, x, w, m, n, k, false, false, alpha, beta);
  const len = m * n;
  if (beta === 0) out.fill(0, 0, len);
  else if (beta !== 1) for (let q = 0; q < len; q++) out[q] = beta * out[q]!;
  const k8 = k - (k & 7);
  for (let i = 0; i < m; i++) {
    const a0 = i * k;
    const c0 = i * n;
    const q1 = start[i + 1]!;
    let q = start[i]!;
    while (q < q1) {
      const p = index[q]!;
      const g = p - (p & 7);
      let e = q + 1;
      // gemm's last k mod 8 terms are added one at a time: each is a group of one
      if (p < k8) while (e < q1 && index[e]! < g + 8) e++;
      const count = e - q;
      if (count === 1) {
        const s = alpha * x[a0 + p]!;
        const b0 = p * n;
        for (let j = 0; j < n; j++) out[c0 + j] = out[c0 + j]! + s * w[b0 + j]!;
      } else if (count === 2) {
        const p1 = index[q + 1]!;
        const s0 = alpha * x[a0 + p]!;
        const s1 = alpha * x[a0 + p1]!;
        const b0 = p * n;
        const b1 = p1 * n;
        for (let j = 0; j < n; j++) out[c0 + j] = out[c0 + j]! + (s0 * w[b0 + j]! + s1 * w[b1 + j]!);
      } else if (count === 3) {
        const p1 = index[q + 1]!;
        const p2 = index[q + 2]!;
        const s0 = alpha * x[a0 + p]!;
        const s1 = alpha * x[a0 + p1]!;
        const s2 = alpha * x[a0 + p2]!;
        const b0 = p * n;
        const b1 = p1 * n;
        const b2 = p2 * n;
        // the first two meet lower in gemm's tree than the last two when they differ in a lower bit
        if ((p ^ p1) < (p1 ^ p2)) {
          for (let j = 0; j < n; j++) out[c0 + j] = out[c0 + j]! + (s0 * w[b0 + j]! + s1 * w[b1 + j]! + s2 * w[b2 + j]!);
        } else {
          for (let j = 0; j < n; j++) out[c0 + j] = out[c0 + j]! + (s0 * w[b0 + j]! + (s1 * w[b1 + j]! + s2 * w[b2 + j]!));
        }
      } else {
        // four or more: the whole group, as gemm runs it
        const s0 = alpha * x[a0 + g]!;
        const s1 = alpha * x[a0 + g + 1]!;
        const s2 = alpha * x[a0 + g + 2]!;
        const s3 = alpha * x[a0 + g + 3]!;
        const s4 = alpha * x[a0 + g + 4]!;
        const s5 = alpha * x[a0 + g + 5]!;
        const s6 = alpha * x[a0 + g + 6]!;
        const s7 = alpha * x[a0 + g + 7]!;
        const b0 = g * n;
        const b1 = b0 + n;
        const b2 = b1 + n;
        const b3 = b2 + n;
        const b4 = b3 + n;
        const b5 = b4 + n;
        const b6 = b5 + n;
        const b7 = b6 + n;
        for (let j = 0; j < n; j++) {
          out[c0 + j] =
            out[c0 + j]! +
            (s0 * w[b0 + j]! + s1 * w[b1 + j]! + (s2 * w[b2 + j]! + s3 * w[b3 + j]!) + (s4 * w[b4 + j]! + s5 * w[b5 + j]! + (s6 * w[b6 + j]! + s7 * w[b7 + j]!)));
        }
      }
      q = e;
    }
  }
  if (beta !== 0) {
    // an entry left at −0 started at −0 and received only zeros here; gemm's additions keep −0 only if every term is −0
    for (let c = 0; c < len; c++) {
      const v = out[c]!;
      if (v !== 0 || 1 / v > 0) continue;
      const i = Math.floor(c / n);
      const j = c - i * n;
      for (let p = 0; p < k; p++) {
        const t = alpha * x[i * k + p]! * w[p * n + j]!;
        if (t !== 0 || 1 / t > 0) {
          out[c] = 0;
          break;
        }
      }
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
  listEntries: listActive,
  activeProductNN,
  exactNN: () => true,
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
