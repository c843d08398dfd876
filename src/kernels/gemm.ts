/**
 * General matrix-matrix product on flat row-major typed arrays.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { ReadonlyFloatArray } from "./types.js";

/**
 * Matrix-matrix product `C = alpha * op(A) * op(B) + beta * C` on flat
 * row-major arrays, with `op(X)` either `X` or its transpose.
 *
 * Shapes: `C` is m×n; `op(A)` is m×k, so `A` is stored m×k (or k×m when
 * `transA`); `op(B)` is k×n, so `B` is stored k×n (or n×k when `transB`).
 * The first `m*n`, `m*k` and `k*n` elements are used; nothing is checked
 * (see `checkGemm` and `kernelsChecked` for the validating edge).
 *
 * Special values follow the BLAS convention: `beta = 0` overwrites `C` without
 * reading it (NaN or garbage in `out` does not leak into the result);
 * `alpha = 0` or `k = 0` scales `C` by `beta` without reading `A` or `B`.
 * Otherwise NaN and infinities propagate as IEEE arithmetic gives them.
 *
 * Loop orders: when `B` is not transposed, rows of `C` are updated by
 * contiguous multiply-adds over rows of `B` (i-k-j order), two rows of `C`
 * and eight terms of the sum at a time; when `B` is transposed, each entry is a
 * dot product of two contiguous rows, computed in blocks of 2×4 entries with
 * eight independent accumulators (register blocking after Goto & van de Geijn,
 * 2008, ACM Trans. Math. Softw. 34(3):12). The dot-product path sums in
 * float64 whatever the storage; the row path rounds to the storage type of
 * `out` after every eight terms.
 *
 * Aliasing: `out` must not share memory with `a` or `b` (the result would be
 * wrong); `a` and `b` may be the same array.
 *
 * Definition and argument semantics: level-3 BLAS xGEMM (Dongarra, Du Croz,
 * Hammarling & Duff, 1990, ACM Trans. Math. Softw. 16(1):1-17), row-major.
 *
 * @param out - C, length ≥ m*n; overwritten (beta = 0) or updated in place.
 * @param a - A, m×k row-major (k×m if `transA`).
 * @param b - B, k×n row-major (n×k if `transB`).
 * @param m - rows of C and of op(A).
 * @param n - columns of C and of op(B).
 * @param k - inner dimension: columns of op(A), rows of op(B).
 * @param transA - use the transpose of A.
 * @param transB - use the transpose of B.
 * @param alpha - scale of the product.
 * @param beta - scale of the previous C (0: overwrite).
 * @returns `out`.
 * @category Kernels
 * @example
 * ```ts
 * // [1 2; 3 4] * [5 6; 7 8]
 * gemm(new Float64Array(4), Float64Array.of(1, 2, 3, 4), Float64Array.of(5, 6, 7, 8), 2, 2, 2, false, false, 1, 0);
 * // Float64Array [19, 22, 43, 50]
 * ```
 */
export function gemm<T extends FloatArray>(
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
  if (m <= 0 || n <= 0) return out;
  if (alpha === 0 || k <= 0) {
    scaleMatrix(out, m * n, beta);
    return out;
  }
  // op(A)(i, p) = a[i * rowStride + p * colStride]
  const rowStride = transA ? 1 : k;
  const colStride = transA ? m : 1;
  if (transB) {
    dotBlocks(out, a, b, m, n, k, rowStride, colStride, alpha, beta);
  } else {
    scaleMatrix(out, m * n, beta);
    rowUpdates(out, a, b, m, n, k, rowStride, colStride, alpha);
  }
  return out;
}

/** c[0..len) *= beta, with beta = 0 writing zeros (never reading c). */
function scaleMatrix(c: FloatArray, len: number, beta: number): void {
  if (beta === 0) c.fill(0, 0, len);
  else if (beta !== 1) for (let q = 0; q < len; q++) c[q] = beta * c[q]!;
}

/**
 * C += alpha * op(A) * B with B k×n row-major: each row of C receives
 * multiples of rows of B. Two rows of C and eight rows of B per pass, so every
 * load of C and of B feeds eight (or sixteen) multiply-adds.
 */
function rowUpdates(
  c: FloatArray,
  a: ReadonlyFloatArray,
  b: ReadonlyFloatArray,
  m: number,
  n: number,
  k: number,
  rs: number,
  cs: number,
  alpha: number,
): void {
  const k8 = k - (k & 7);
  const m2 = m - (m & 1);
  let i = 0;
  for (; i < m2; i += 2) {
    const c0 = i * n;
    const c1 = c0 + n;
    const a0 = i * rs;
    const a1 = a0 + rs;
    let p = 0;
    for (; p < k8; p += 8) {
      const q0 = p * cs;
      const q1 = q0 + cs;
      const q2 = q1 + cs;
      const q3 = q2 + cs;
      const q4 = q3 + cs;
      const q5 = q4 + cs;
      const q6 = q5 + cs;
      const q7 = q6 + cs;
      const s0 = alpha * a[a0 + q0]!;
      const s1 = alpha * a[a0 + q1]!;
      const s2 = alpha * a[a0 + q2]!;
      const s3 = alpha * a[a0 + q3]!;
      const s4 = alpha * a[a0 + q4]!;
      const s5 = alpha * a[a0 + q5]!;
      const s6 = alpha * a[a0 + q6]!;
      const s7 = alpha * a[a0 + q7]!;
      const t0 = alpha * a[a1 + q0]!;
      const t1 = alpha * a[a1 + q1]!;
      const t2 = alpha * a[a1 + q2]!;
      const t3 = alpha * a[a1 + q3]!;
      const t4 = alpha * a[a1 + q4]!;
      const t5 = alpha * a[a1 + q5]!;
      const t6 = alpha * a[a1 + q6]!;
      const t7 = alpha * a[a1 + q7]!;
      const b0 = p * n;
      const b1 = b0 + n;
      const b2 = b1 + n;
      const b3 = b2 + n;
      const b4 = b3 + n;
      const b5 = b4 + n;
      const b6 = b5 + n;
      const b7 = b6 + n;
      for (let j = 0; j < n; j++) {
        const x0 = b[b0 + j]!;
        const x1 = b[b1 + j]!;
        const x2 = b[b2 + j]!;
        const x3 = b[b3 + j]!;
        const x4 = b[b4 + j]!;
        const x5 = b[b5 + j]!;
        const x6 = b[b6 + j]!;
        const x7 = b[b7 + j]!;
        c[c0 + j] = c[c0 + j]! + (s0 * x0 + s1 * x1 + (s2 * x2 + s3 * x3) + (s4 * x4 + s5 * x5 + (s6 * x6 + s7 * x7)));
        c[c1 + j] = c[c1 + j]! + (t0 * x0 + t1 * x1 + (t2 * x2 + t3 * x3) + (t4 * x4 + t5 * x5 + (t6 * x6 + t7 * x7)));
      }
    }
    for (; p < k; p++) {
      const s = alpha * a[a0 + p * cs]!;
      const t = alpha * a[a1 + p * cs]!;
      const bp = p * n;
      for (let j = 0; j < n; j++) {
        const x = b[bp + j]!;
        c[c0 + j] = c[c0 + j]! + s * x;
        c[c1 + j] = c[c1 + j]! + t * x;
      }
    }
  }
  if (i < m) {
    // last row when m is odd
    const c0 = i * n;
    const a0 = i * rs;
    let p = 0;
    for (; p < k8; p += 8) {
      const q0 = a0 + p * cs;
      const s0 = alpha * a[q0]!;
      const s1 = alpha * a[q0 + cs]!;
      const s2 = alpha * a[q0 + 2 * cs]!;
      const s3 = alpha * a[q0 + 3 * cs]!;
      const s4 = alpha * a[q0 + 4 * cs]!;
      const s5 = alpha * a[q0 + 5 * cs]!;
      const s6 = alpha * a[q0 + 6 * cs]!;
      const s7 = alpha * a[q0 + 7 * cs]!;
      const b0 = p * n;
      const b1 = b0 + n;
      const b2 = b1 + n;
      const b3 = b2 + n;
      const b4 = b3 + n;
      const b5 = b4 + n;
      const b6 = b5 + n;
      const b7 = b6 + n;
      for (let j = 0; j < n; j++) {
        c[c0 + j] =
          c[c0 + j]! +
          (s0 * b[b0 + j]! + s1 * b[b1 + j]! + (s2 * b[b2 + j]! + s3 * b[b3 + j]!) +
            (s4 * b[b4 + j]! + s5 * b[b5 + j]! + (s6 * b[b6 + j]! + s7 * b[b7 + j]!)));
      }
    }
    for (; p < k; p++) {
      const s = alpha * a[a0 + p * cs]!;
      const bp = p * n;
      for (let j = 0; j < n; j++) c[c0 + j] = c[c0 + j]! + s * b[bp + j]!;
    }
  }
}

/**
 * C = alpha * op(A) * Bᵀ + beta * C with B n×k row-major: entry (i, j) is the
 * dot product of row i of op(A) and row j of B. Blocks of 2×4 entries keep
 * eight accumulators in registers; each step loads 2 values of A and 4 of B.
 */
function dotBlocks(
  c: FloatArray,
  a: ReadonlyFloatArray,
  b: ReadonlyFloatArray,
  m: number,
  n: number,
  k: number,
  rs: number,
  cs: number,
  alpha: number,
  beta: number,
): void {
  const m2 = m - (m & 1);
  const n4 = n - (n & 3);
  let i = 0;
  for (; i < m2; i += 2) {
    const a0 = i * rs;
    const a1 = a0 + rs;
    const c0 = i * n;
    const c1 = c0 + n;
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
      let t0 = 0;
      let t1 = 0;
      let t2 = 0;
      let t3 = 0;
      let pa = a0;
      let pz = a1;
      for (let p = 0; p < k; p++) {
        const x = a[pa]!;
        const z = a[pz]!;
        pa += cs;
        pz += cs;
        const y0 = b[b0 + p]!;
        const y1 = b[b1 + p]!;
        const y2 = b[b2 + p]!;
        const y3 = b[b3 + p]!;
        s0 += x * y0;
        s1 += x * y1;
        s2 += x * y2;
        s3 += x * y3;
        t0 += z * y0;
        t1 += z * y1;
        t2 += z * y2;
        t3 += z * y3;
      }
      const q = c0 + j;
      const r = c1 + j;
      if (beta === 0) {
        c[q] = alpha * s0;
        c[q + 1] = alpha * s1;
        c[q + 2] = alpha * s2;
        c[q + 3] = alpha * s3;
        c[r] = alpha * t0;
        c[r + 1] = alpha * t1;
        c[r + 2] = alpha * t2;
        c[r + 3] = alpha * t3;
      } else {
        c[q] = alpha * s0 + beta * c[q]!;
        c[q + 1] = alpha * s1 + beta * c[q + 1]!;
        c[q + 2] = alpha * s2 + beta * c[q + 2]!;
        c[q + 3] = alpha * s3 + beta * c[q + 3]!;
        c[r] = alpha * t0 + beta * c[r]!;
        c[r + 1] = alpha * t1 + beta * c[r + 1]!;
        c[r + 2] = alpha * t2 + beta * c[r + 2]!;
        c[r + 3] = alpha * t3 + beta * c[r + 3]!;
      }
    }
    for (; j < n; j++) {
      // remaining columns: one row of B against the two rows of op(A)
      const b0 = j * k;
      let s = 0;
      let t = 0;
      let pa = a0;
      let pz = a1;
      for (let p = 0; p < k; p++) {
        const y = b[b0 + p]!;
        s += a[pa]! * y;
        t += a[pz]! * y;
        pa += cs;
        pz += cs;
      }
      const q = c0 + j;
      const r = c1 + j;
      c[q] = beta === 0 ? alpha * s : alpha * s + beta * c[q]!;
      c[r] = beta === 0 ? alpha * t : alpha * t + beta * c[r]!;
    }
  }
  if (i < m) {
    // last row when m is odd: four rows of B at a time
    const a0 = i * rs;
    const c0 = i * n;
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
      let pa = a0;
      for (let p = 0; p < k; p++) {
        const x = a[pa]!;
        pa += cs;
        s0 += x * b[b0 + p]!;
        s1 += x * b[b1 + p]!;
        s2 += x * b[b2 + p]!;
        s3 += x * b[b3 + p]!;
      }
      const q = c0 + j;
      if (beta === 0) {
        c[q] = alpha * s0;
        c[q + 1] = alpha * s1;
        c[q + 2] = alpha * s2;
        c[q + 3] = alpha * s3;
      } else {
        c[q] = alpha * s0 + beta * c[q]!;
        c[q + 1] = alpha * s1 + beta * c[q + 1]!;
        c[q + 2] = alpha * s2 + beta * c[q + 2]!;
        c[q + 3] = alpha * s3 + beta * c[q + 3]!;
      }
    }
    for (; j < n; j++) {
      const b0 = j * k;
      let s = 0;
      let pa = a0;
      for (let p = 0; p < k; p++) {
        s += a[pa]! * b[b0 + p]!;
        pa += cs;
      }
      const q = c0 + j;
      c[q] = beta === 0 ? alpha * s : alpha * s + beta * c[q]!;
    }
  }
}
