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

import { KC } from "./gemm";
import { VBYTES, hsum, lanes, scaleInPlace, vmadd } from "./simd";

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

// ---------------------------------------------------------------------------------------------------
// Tied feedback: C = alpha A B + beta C (A m x k: the receiving layer's activities; B k x n: the weight
// matrix stored to x from), skipping for each row of A the single entries that are zero.
//
// Exactness: gemm (gemm.ts) forms A B with m >= 2 and k >= 2 in packed blocks of KC steps along k;
// entry (i, j) of a block is one accumulator lane that starts at +0 and receives vmadd(a_ip, b_pj, s)
// for p ascending, and C becomes alpha s + beta C for the first block and alpha s + 1 C for the
// others (in T, vector lanes or the scalar edge path: the same roundings). activeProductNN forms each
// block's lane the same way over the listed entries only and applies the same alpha s + beta C for
// every block, empty ones included. A left-out term adds a_ip b_pj = ±0 (b finite) to s, which is
// never −0 (IEEE 754-2019 §6.3: an exact zero sum is −0 only when both terms are; the same for fused
// multiply-adds), so s + (±0) = s and no bit changes. m = 1 (a matrix-vector product that applies
// alpha to A first and adds into C directly) and k = 1 (an outer product) take other paths: the
// caller runs them dense.

/**
 * Lists, for each row r of x (rows x k), the entries that are non-zero (NaN counts as non-zero, −0 as
 * zero) in index[start[r] .. start[r + 1]), ascending; returns the number listed.
 */
export function activeEntries<T>(x: usize, rows: i32, k: i32, index: usize, start: usize): i32 {
  const S = sizeof<T>();
  const L = lanes<T>();
  const kv = k - k % L;
  const row = <usize>k * S;
  const zero = v128.splat<T>(0);
  let count = 0;
  for (let r = 0; r < rows; r++) {
    store<i32>(start + (<usize>r << 2), count);
    const x0 = x + <usize>r * row;
    let p = 0;
    for (; p < kv; p += L) {
      // ne is true for NaN and false for −0
      const ne = v128.ne<T>(v128.load(x0 + <usize>p * S), zero);
      if (!v128.any_true(ne)) continue;
      let bits = S == 4 ? i32x4.bitmask(ne) : i64x2.bitmask(ne);
      while (bits != 0) {
        store<i32>(index + (<usize>count << 2), p + ctz(bits));
        count++;
        bits &= bits - 1;
      }
    }
    for (; p < k; p++) {
      if (load<T>(x0 + <usize>p * S) != 0) {
        store<i32>(index + (<usize>count << 2), p);
        count++;
      }
    }
  }
  store<i32>(start + (<usize>rows << 2), count);
  return count;
}

// @ts-ignore: decorator
@inline
function combineV<T>(cp: usize, s: v128, va: v128, vb: v128, betaZero: bool): void {
  const v = v128.mul<T>(va, s);
  v128.store(cp, betaZero ? v : v128.add<T>(v, v128.mul<T>(vb, v128.load(cp))));
}

/**
 * One row of A (entries list q0 .. q1, one block along k) by 6 vectors of columns of B: each lane gets gemm's
 * vmadd chain from +0 minus its ±0 terms (exact: IEEE 754-2019 §6.3, see above). Six chains, not eight: V8
 * loads a step's B vectors before its arithmetic, and 8 + 8 + 1 live vectors spilled (measured: 3x the dense
 * cost per term, against 2x with six).
 */
function nn6<T>(a0: usize, list: usize, q0: i32, q1: i32, bj: usize, ldb: usize, cp: usize, va: v128, vb: v128, betaZero: bool): void {
  const S = sizeof<T>();
  const zero = v128.splat<T>(0);
  let s0 = zero, s1 = zero, s2 = zero, s3 = zero, s4 = zero, s5 = zero;
  for (let q = q0; q < q1; q++) {
    const p = <usize>load<i32>(list + (<usize>q << 2));
    const x = v128.load_splat<T>(a0 + p * S);
    const bp = bj + p * ldb;
    s0 = vmadd<T>(x, v128.load(bp), s0);
    s1 = vmadd<T>(x, v128.load(bp, VBYTES), s1);
    s2 = vmadd<T>(x, v128.load(bp, 2 * VBYTES), s2);
    s3 = vmadd<T>(x, v128.load(bp, 3 * VBYTES), s3);
    s4 = vmadd<T>(x, v128.load(bp, 4 * VBYTES), s4);
    s5 = vmadd<T>(x, v128.load(bp, 5 * VBYTES), s5);
  }
  combineV<T>(cp, s0, va, vb, betaZero);
  combineV<T>(cp + VBYTES, s1, va, vb, betaZero);
  combineV<T>(cp + 2 * VBYTES, s2, va, vb, betaZero);
  combineV<T>(cp + 3 * VBYTES, s3, va, vb, betaZero);
  combineV<T>(cp + 4 * VBYTES, s4, va, vb, betaZero);
  combineV<T>(cp + 5 * VBYTES, s5, va, vb, betaZero);
}

/** One row of A (one block along k) by 2 vectors of columns of B (exact as nn6). */
function nn2<T>(a0: usize, list: usize, q0: i32, q1: i32, bj: usize, ldb: usize, cp: usize, va: v128, vb: v128, betaZero: bool): void {
  const S = sizeof<T>();
  const zero = v128.splat<T>(0);
  let s0 = zero, s1 = zero;
  for (let q = q0; q < q1; q++) {
    const p = <usize>load<i32>(list + (<usize>q << 2));
    const x = v128.load_splat<T>(a0 + p * S);
    const bp = bj + p * ldb;
    s0 = vmadd<T>(x, v128.load(bp), s0);
    s1 = vmadd<T>(x, v128.load(bp, VBYTES), s1);
  }
  combineV<T>(cp, s0, va, vb, betaZero);
  combineV<T>(cp + VBYTES, s1, va, vb, betaZero);
}

/** One row of A (one block along k) by one vector of columns of B (exact as nn6). */
function nn1<T>(a0: usize, list: usize, q0: i32, q1: i32, bj: usize, ldb: usize, cp: usize, va: v128, vb: v128, betaZero: bool): void {
  const S = sizeof<T>();
  let s0 = v128.splat<T>(0);
  for (let q = q0; q < q1; q++) {
    const p = <usize>load<i32>(list + (<usize>q << 2));
    s0 = vmadd<T>(v128.load_splat<T>(a0 + p * S), v128.load(bj + p * ldb), s0);
  }
  combineV<T>(cp, s0, va, vb, betaZero);
}

// @ts-ignore: decorator
@inline
function combineS<T>(cp: usize, s: T, al: T, be: T, betaZero: bool): void {
  const v = al * s;
  store<T>(cp, betaZero ? v : v + be * load<T>(cp));
}

/**
 * One row of A (one block along k) by the last `cols` < L columns of B: one vector whose other lanes
 * stay zero (the dense kernel pads its packed panel the same way), so the lanes get the same vmadd (exact as nn6).
 */
function nnTail<T>(a0: usize, list: usize, q0: i32, q1: i32, bj: usize, ldb: usize, cp: usize, cols: i32, al: T, be: T, betaZero: bool): void {
  const S = sizeof<T>();
  const zero = v128.splat<T>(0);
  let s0 = zero;
  for (let q = q0; q < q1; q++) {
    const p = <usize>load<i32>(list + (<usize>q << 2));
    const bp = bj + p * ldb;
    let bv = v128.replace_lane<T>(zero, 0, load<T>(bp));
    if (S == 4) {
      if (cols > 1) bv = v128.replace_lane<T>(bv, 1, load<T>(bp, S));
      if (cols > 2) bv = v128.replace_lane<T>(bv, 2, load<T>(bp, 2 * S));
    }
    s0 = vmadd<T>(v128.load_splat<T>(a0 + p * S), bv, s0);
  }
  combineS<T>(cp, v128.extract_lane<T>(s0, 0), al, be, betaZero);
  if (S == 4) {
    if (cols > 1) combineS<T>(cp + S, v128.extract_lane<T>(s0, 1), al, be, betaZero);
    if (cols > 2) combineS<T>(cp + 2 * S, v128.extract_lane<T>(s0, 2), al, be, betaZero);
  }
}

/** Whether the sign bit of v is set (tells −0 from +0). */
// @ts-ignore: decorator
@inline
function negative<T>(v: T): bool {
  if (sizeof<T>() == 4) return (reinterpret<u32>(<f32>v) >> 31) != 0;
  return (reinterpret<u64>(<f64>v) >> 63) != 0;
}

/**
 * One row: y (n) = alpha x B + beta y over the entries of x listed in index[q0 .. q1) (B k x n), as gemm's
 * m = 1 path (gemv with the transpose, level2.ts) forms it: each listed e = alpha x_p (in T) is added to y by
 * vmadd, row after row, on the vector columns; on the last n mod L columns each group of 4 steps adds the sum
 * (e0 b0 + e1 b1) + (e2 b2 + e3 b3) with its unlisted terms left out, and the k mod 4 last steps one by one.
 * Exactness: a left-out term is ±0 (b finite), and y + (±0) = y unless y is −0 (IEEE 754-2019 §6.3), so every
 * value equals gemv's up to the sign of a zero; y ends at −0 only if it started there (beta != 0), and those
 * entries are settled afterwards from the signs of all their terms (gemv keeps −0 only if every term is −0).
 */
function activeRowNN<T>(y: usize, x: usize, b: usize, n: i32, k: i32, index: usize, q0: i32, q1: i32, alpha: f64, beta: f64): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  const al = <T>alpha;
  const ldb = <usize>n * S;
  scaleInPlace<T>(y, n, beta);
  const n6 = n - n % (6 * L);
  const n1 = n - n % L;
  // vector columns: six vectors of y at a time through all listed rows
  for (let j = 0; j < n6; j += 6 * L) {
    const yp = y + <usize>j * S;
    let y0 = v128.load(yp), y1 = v128.load(yp, VBYTES), y2 = v128.load(yp, 2 * VBYTES);
    let y3 = v128.load(yp, 3 * VBYTES), y4 = v128.load(yp, 4 * VBYTES), y5 = v128.load(yp, 5 * VBYTES);
    const bj = b + <usize>j * S;
    for (let q = q0; q < q1; q++) {
      const p = <usize>load<i32>(index + (<usize>q << 2));
      const e = v128.splat<T>(al * load<T>(x + p * S));
      const bp = bj + p * ldb;
      y0 = vmadd<T>(e, v128.load(bp), y0);
      y1 = vmadd<T>(e, v128.load(bp, VBYTES), y1);
      y2 = vmadd<T>(e, v128.load(bp, 2 * VBYTES), y2);
      y3 = vmadd<T>(e, v128.load(bp, 3 * VBYTES), y3);
      y4 = vmadd<T>(e, v128.load(bp, 4 * VBYTES), y4);
      y5 = vmadd<T>(e, v128.load(bp, 5 * VBYTES), y5);
    }
    v128.store(yp, y0);
    v128.store(yp, y1, VBYTES);
    v128.store(yp, y2, 2 * VBYTES);
    v128.store(yp, y3, 3 * VBYTES);
    v128.store(yp, y4, 4 * VBYTES);
    v128.store(yp, y5, 5 * VBYTES);
  }
  for (let j = n6; j < n1; j += L) {
    const yp = y + <usize>j * S;
    let y0 = v128.load(yp);
    const bj = b + <usize>j * S;
    for (let q = q0; q < q1; q++) {
      const p = <usize>load<i32>(index + (<usize>q << 2));
      y0 = vmadd<T>(v128.splat<T>(al * load<T>(x + p * S)), v128.load(bj + p * ldb), y0);
    }
    v128.store(yp, y0);
  }
  if (n1 < n) {
    // the last columns: gemv's groups of four rows as trees, then single rows
    const k4 = k - k % 4;
    let q = q0;
    while (q < q1) {
      const p = load<i32>(index + (<usize>q << 2));
      if (p >= k4) {
        const e = al * load<T>(x + <usize>p * S);
        const bp = b + <usize>p * ldb;
        for (let j = n1; j < n; j++) store<T>(y + <usize>j * S, load<T>(y + <usize>j * S) + e * load<T>(bp + <usize>j * S));
        q++;
        continue;
      }
      const g = p - (p & 3);
      let qe = q + 1;
      while (qe < q1 && load<i32>(index + (<usize>qe << 2)) < g + 4) qe++;
      const count = qe - q;
      const p1 = count > 1 ? load<i32>(index + (<usize>(q + 1) << 2)) : p;
      const p2 = count > 2 ? load<i32>(index + (<usize>(q + 2) << 2)) : p;
      const e0 = al * load<T>(x + <usize>(count == 4 ? g : p) * S);
      const e1 = al * load<T>(x + <usize>(count == 4 ? g + 1 : p1) * S);
      const e2 = al * load<T>(x + <usize>(count == 4 ? g + 2 : p2) * S);
      const e3 = al * load<T>(x + <usize>(g + 3) * S);
      const b0 = b + <usize>(count == 4 ? g : p) * ldb;
      const b1 = b + <usize>(count == 4 ? g + 1 : p1) * ldb;
      const b2 = b + <usize>(count == 4 ? g + 2 : p2) * ldb;
      const b3 = b + <usize>(g + 3) * ldb;
      const leftPair = (p ^ p1) < (p1 ^ p2);
      for (let j = n1; j < n; j++) {
        const o = <usize>j * S;
        let t: T = 0;
        if (count == 1) t = e0 * load<T>(b0 + o);
        else if (count == 2) t = e0 * load<T>(b0 + o) + e1 * load<T>(b1 + o);
        else if (count == 3) t = leftPair ? e0 * load<T>(b0 + o) + e1 * load<T>(b1 + o) + e2 * load<T>(b2 + o) : e0 * load<T>(b0 + o) + (e1 * load<T>(b1 + o) + e2 * load<T>(b2 + o));
        else t = e0 * load<T>(b0 + o) + e1 * load<T>(b1 + o) + (e2 * load<T>(b2 + o) + e3 * load<T>(b3 + o));
        store<T>(y + o, load<T>(y + o) + t);
      }
      q = qe;
    }
  }
  if (beta != 0) {
    // an entry at −0 started at −0 and received only zeros here; gemv keeps −0 only if every term is −0
    for (let j = 0; j < n; j++) {
      const o = <usize>j * S;
      const v = load<T>(y + o);
      if (v != 0 || !negative<T>(v)) continue;
      for (let p = 0; p < k; p++) {
        const t = al * load<T>(x + <usize>p * S) * load<T>(b + <usize>p * ldb + o);
        if (t != 0 || !negative<T>(t)) {
          store<T>(y + o, 0);
          break;
        }
      }
    }
  }
}

/**
 * C (m x n) = alpha A B + beta C over the entries activeEntries listed for A (index, start); A m x k,
 * B k x n row-major, k >= 2, alpha != 0 (the caller runs the other cases dense, as gemm does); m = 1 as
 * activeRowNN. Bit for bit gemm's packed path with finite weights (IEEE 754-2019 §6.3: see the note above). Columns in
 * tiles of 6 vectors (then 2, 1, and a partial one); per tile, gemm's blocks along k in order, each over all
 * rows of A, so that the tile's strip of B in one block stays in the first-level cache.
 */
export function activeProductNN<T>(c: usize, a: usize, b: usize, m: i32, n: i32, k: i32, index: usize, start: usize, alpha: f64, beta: f64): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  const rowA = <usize>k * S;
  const ldb = <usize>n * S;
  const al = <T>alpha;
  const be = <T>beta;
  const one = <T>1;
  const va = v128.splat<T>(al);
  const vbFirst = v128.splat<T>(be);
  const vbOne = v128.splat<T>(one);
  const bz = beta == 0;
  if (m == 1) {
    activeRowNN<T>(c, a, b, n, k, index, load<i32>(start), load<i32>(start, 4), alpha, beta);
    return;
  }
  let j = 0;
  while (j < n) {
    const left = n - j;
    const width = left >= 6 * L ? 6 * L : left >= 2 * L ? 2 * L : left >= L ? L : left;
    const bj = b + <usize>j * S;
    for (let pc = 0; pc < k; pc += KC) {
      // gemm's blocks along k, in order (the first applies beta, the later ones add); the tile's strip of B
      // in one block (KC rows of 6 vectors, 24 KB for f32) stays in the first-level cache for every row of A
      const pe = pc + KC;
      const first = pc == 0;
      const betaZero = first && bz;
      const vb = first ? vbFirst : vbOne;
      for (let i = 0; i < m; i++) {
        const a0 = a + <usize>i * rowA;
        const cp = c + (<usize>i * <usize>n + <usize>j) * S;
        const q1 = load<i32>(start + (<usize>(i + 1) << 2));
        let q = load<i32>(start + (<usize>i << 2));
        while (q < q1 && load<i32>(index + (<usize>q << 2)) < pc) q++;
        let qe = q;
        while (qe < q1 && load<i32>(index + (<usize>qe << 2)) < pe) qe++;
        if (width == 6 * L) nn6<T>(a0, index, q, qe, bj, ldb, cp, va, vb, betaZero);
        else if (width == 2 * L) nn2<T>(a0, index, q, qe, bj, ldb, cp, va, vb, betaZero);
        else if (width == L) nn1<T>(a0, index, q, qe, bj, ldb, cp, va, vb, betaZero);
        else nnTail<T>(a0, index, q, qe, bj, ldb, cp, width, al, first ? be : one, betaZero);
      }
    }
    j += width;
  }
}
