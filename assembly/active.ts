// Activity-sparse product C = alpha A Bᵀ + beta C (A m x k: presynaptic activities, one row per
// pattern; B n x k: a weight matrix stored to x from), skipping for each row of A the vector blocks
// (L = 4 lanes of f32, 2 of f64, at offsets 0, L, 2L, ... of the row) whose entries are all zero.
//
// Exactness: the entry (i, j) is formed exactly as the dot-product tiles of gemm-dot.ts form it
// (one vector accumulator over the blocks in increasing order, lane q holding the terms k ≡ q mod L,
// lanes added by hsum, the k mod L last terms added one by one, then alpha s + beta C in T), with the
// zero blocks left out. A left-out block would add x * b = ±0 to every lane (b finite); an
// accumulator that starts at +0 is never −0 in round-to-nearest (a sum is −0 only when both terms
// are), and s + (±0) = s for every s that is not −0, so leaving the block out changes no bit. The
// same holds with fused multiply-adds (relaxed build: fma(±0, b, s) = s). So the result is gemm's bit
// for bit wherever gemm takes the dot-product path (see useDotPath in gemm.ts) and the weights of the
// left-out blocks are finite.

import { VBYTES, hsum, lanes, vmadd } from "./simd";

/** Rows of B per block: a block is re-read from cache for every row of A (as in gemm-dot.ts). */
const NB: i32 = 64;

/**
 * Lists, for each row r of x (rows x k), the vector blocks with a non-zero entry (NaN counts as
 * non-zero, −0 as zero) in index[start[r] .. start[r + 1]); the k mod L last entries are not listed
 * (the product always adds them). Returns the number of blocks listed.
 */
export function activeBlocks<T>(x: usize, rows: i32, k: i32, index: usize, start: usize): i32 {
  const S = sizeof<T>();
  const L = lanes<T>();
  const kb = k / L;
  const row = <usize>k * S;
  const zero = v128.splat<T>(0);
  let count = 0;
  for (let r = 0; r < rows; r++) {
    store<i32>(start + (<usize>r << 2), count);
    const x0 = x + <usize>r * row;
    for (let q = 0; q < kb; q++) {
      // ne is true for NaN and false for −0
      if (v128.any_true(v128.ne<T>(v128.load(x0 + <usize>q * VBYTES), zero))) {
        store<i32>(index + (<usize>count << 2), q);
        count++;
      }
    }
  }
  store<i32>(start + (<usize>rows << 2), count);
  return count;
}

// @ts-ignore: decorator
@inline
function put<T>(c: usize, s: T, al: T, be: T, betaZero: bool): void {
  const v = al * s;
  store<T>(c, betaZero ? v : v + be * load<T>(c));
}

/**
 * One row of A (blocks list q0 .. q1) by 8 rows of B: eight independent accumulator chains, as many as the
 * dense 2 x 4 tile keeps (four chains left the multiply-add latency exposed: profiled at about 3x the dense
 * cost per block).
 */
function row1x8<T>(a0: usize, list: usize, q0: i32, q1: i32, b0: usize, ldb: usize, k: i32, c0: usize, al: T, be: T, betaZero: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  const b1 = b0 + ldb;
  const b2 = b1 + ldb;
  const b3 = b2 + ldb;
  const b4 = b3 + ldb;
  const b5 = b4 + ldb;
  const b6 = b5 + ldb;
  const b7 = b6 + ldb;
  const zero = v128.splat<T>(0);
  let s0 = zero, s1 = zero, s2 = zero, s3 = zero, s4 = zero, s5 = zero, s6 = zero, s7 = zero;
  for (let q = q0; q < q1; q++) {
    const o = <usize>load<i32>(list + (<usize>q << 2)) * VBYTES;
    const x0 = v128.load(a0 + o);
    s0 = vmadd<T>(x0, v128.load(b0 + o), s0);
    s1 = vmadd<T>(x0, v128.load(b1 + o), s1);
    s2 = vmadd<T>(x0, v128.load(b2 + o), s2);
    s3 = vmadd<T>(x0, v128.load(b3 + o), s3);
    s4 = vmadd<T>(x0, v128.load(b4 + o), s4);
    s5 = vmadd<T>(x0, v128.load(b5 + o), s5);
    s6 = vmadd<T>(x0, v128.load(b6 + o), s6);
    s7 = vmadd<T>(x0, v128.load(b7 + o), s7);
  }
  let r0 = hsum<T>(s0), r1 = hsum<T>(s1), r2 = hsum<T>(s2), r3 = hsum<T>(s3);
  let r4 = hsum<T>(s4), r5 = hsum<T>(s5), r6 = hsum<T>(s6), r7 = hsum<T>(s7);
  const ke = <usize>k * S;
  for (let o = <usize>(k - k % L) * S; o < ke; o += S) {
    const x0 = load<T>(a0 + o);
    r0 += x0 * load<T>(b0 + o);
    r1 += x0 * load<T>(b1 + o);
    r2 += x0 * load<T>(b2 + o);
    r3 += x0 * load<T>(b3 + o);
    r4 += x0 * load<T>(b4 + o);
    r5 += x0 * load<T>(b5 + o);
    r6 += x0 * load<T>(b6 + o);
    r7 += x0 * load<T>(b7 + o);
  }
  put<T>(c0, r0, al, be, betaZero);
  put<T>(c0 + S, r1, al, be, betaZero);
  put<T>(c0 + 2 * S, r2, al, be, betaZero);
  put<T>(c0 + 3 * S, r3, al, be, betaZero);
  put<T>(c0 + 4 * S, r4, al, be, betaZero);
  put<T>(c0 + 5 * S, r5, al, be, betaZero);
  put<T>(c0 + 6 * S, r6, al, be, betaZero);
  put<T>(c0 + 7 * S, r7, al, be, betaZero);
}

/** One row of A (blocks list q0 .. q1) by 4 rows of B. */
function row1x4<T>(a0: usize, list: usize, q0: i32, q1: i32, b0: usize, ldb: usize, k: i32, c0: usize, al: T, be: T, betaZero: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  const b1 = b0 + ldb;
  const b2 = b1 + ldb;
  const b3 = b2 + ldb;
  const zero = v128.splat<T>(0);
  let s0 = zero, s1 = zero, s2 = zero, s3 = zero;
  for (let q = q0; q < q1; q++) {
    const o = <usize>load<i32>(list + (<usize>q << 2)) * VBYTES;
    const x0 = v128.load(a0 + o);
    s0 = vmadd<T>(x0, v128.load(b0 + o), s0);
    s1 = vmadd<T>(x0, v128.load(b1 + o), s1);
    s2 = vmadd<T>(x0, v128.load(b2 + o), s2);
    s3 = vmadd<T>(x0, v128.load(b3 + o), s3);
  }
  let r0 = hsum<T>(s0), r1 = hsum<T>(s1), r2 = hsum<T>(s2), r3 = hsum<T>(s3);
  const ke = <usize>k * S;
  for (let o = <usize>(k - k % L) * S; o < ke; o += S) {
    const x0 = load<T>(a0 + o);
    r0 += x0 * load<T>(b0 + o);
    r1 += x0 * load<T>(b1 + o);
    r2 += x0 * load<T>(b2 + o);
    r3 += x0 * load<T>(b3 + o);
  }
  put<T>(c0, r0, al, be, betaZero);
  put<T>(c0 + S, r1, al, be, betaZero);
  put<T>(c0 + 2 * S, r2, al, be, betaZero);
  put<T>(c0 + 3 * S, r3, al, be, betaZero);
}

/** One row of A by one row of B (the last rows of B). */
function row1x1<T>(a0: usize, list: usize, q0: i32, q1: i32, b0: usize, k: i32, c0: usize, al: T, be: T, betaZero: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  let s0 = v128.splat<T>(0);
  for (let q = q0; q < q1; q++) {
    const o = <usize>load<i32>(list + (<usize>q << 2)) * VBYTES;
    s0 = vmadd<T>(v128.load(a0 + o), v128.load(b0 + o), s0);
  }
  let r = hsum<T>(s0);
  const ke = <usize>k * S;
  for (let o = <usize>(k - k % L) * S; o < ke; o += S) r += load<T>(a0 + o) * load<T>(b0 + o);
  put<T>(c0, r, al, be, betaZero);
}

/**
 * C (m x n) = alpha A Bᵀ + beta C over the blocks activeBlocks listed for A (index, start); A m x k,
 * B n x k row-major, k > 0, alpha != 0 (the caller handles the rest as gemm does).
 */
export function activeProductNT<T>(c: usize, a: usize, b: usize, m: i32, n: i32, k: i32, index: usize, start: usize, alpha: f64, beta: f64): void {
  const S = sizeof<T>();
  const rowA = <usize>k * S;
  const ldc = <usize>n * S;
  const al = <T>alpha;
  const be = <T>beta;
  const bz = beta == 0;
  for (let jc = 0; jc < n; jc += NB) {
    const je = min(n, jc + NB);
    const j8 = jc + ((je - jc) & ~7);
    const j4 = jc + ((je - jc) & ~3);
    for (let i = 0; i < m; i++) {
      const a0 = a + <usize>i * rowA;
      const c0 = c + <usize>i * ldc;
      const q0 = load<i32>(start + (<usize>i << 2));
      const q1 = load<i32>(start + (<usize>(i + 1) << 2));
      let j = jc;
      for (; j < j8; j += 8) row1x8<T>(a0, index, q0, q1, b + <usize>j * rowA, rowA, k, c0 + <usize>j * S, al, be, bz);
      for (; j < j4; j += 4) row1x4<T>(a0, index, q0, q1, b + <usize>j * rowA, rowA, k, c0 + <usize>j * S, al, be, bz);
      for (; j < je; j++) row1x1<T>(a0, index, q0, q1, b + <usize>j * rowA, k, c0 + <usize>j * S, al, be, bz);
    }
  }
}
