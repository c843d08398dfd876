// C = alpha * A * Bᵀ + beta * C without packing, for few rows of A (small
// batches): entry (i, j) is the dot product of row i of A and row j of B,
// both contiguous. Tiles of 2 rows of A by 4 rows of B keep 8 vector
// accumulators over the inner dimension (6 loads per 8 multiply-adds, the
// ratio of the packed 4 x 2-vector tile) and add their lanes at the end.
// The packed path copies and transposes all of B on every call (n * k
// elements), which costs as much as the arithmetic when A has few rows.

import { VBYTES, hsum, lanes, vmadd } from "./simd";

/** Columns of B (rows of the stored B) per block: the block is re-read from cache for every pair of rows of A. */
const NB: i32 = 64;

/** Stores alpha * s (+ beta * C) at c; alpha and beta are read from `sc`. */
// @ts-ignore: decorator
@inline
function put<T>(c: usize, s: T, sc: usize, betaZero: bool): void {
  const v = load<T>(sc) * s;
  store<T>(c, betaZero ? v : v + load<T>(sc, sizeof<T>()) * load<T>(c));
}

/** Tile of 2 rows of A (a0, a1) by 4 rows of B (b0 + q * ldb). */
function tile2x4<T>(a0: usize, a1: usize, b0: usize, ldb: usize, k: i32, c0: usize, ldc: usize, sc: usize, betaZero: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  const b1 = b0 + ldb;
  const b2 = b1 + ldb;
  const b3 = b2 + ldb;
  const zero = v128.splat<T>(0);
  let s00 = zero, s01 = zero, s02 = zero, s03 = zero, s10 = zero, s11 = zero, s12 = zero, s13 = zero;
  const kv = <usize>(k - k % L) * S;
  for (let o: usize = 0; o < kv; o += VBYTES) {
    const x0 = v128.load(a0 + o);
    const x1 = v128.load(a1 + o);
    let y = v128.load(b0 + o);
    s00 = vmadd<T>(x0, y, s00);
    s10 = vmadd<T>(x1, y, s10);
    y = v128.load(b1 + o);
    s01 = vmadd<T>(x0, y, s01);
    s11 = vmadd<T>(x1, y, s11);
    y = v128.load(b2 + o);
    s02 = vmadd<T>(x0, y, s02);
    s12 = vmadd<T>(x1, y, s12);
    y = v128.load(b3 + o);
    s03 = vmadd<T>(x0, y, s03);
    s13 = vmadd<T>(x1, y, s13);
  }
  let r00 = hsum<T>(s00), r01 = hsum<T>(s01), r02 = hsum<T>(s02), r03 = hsum<T>(s03);
  let r10 = hsum<T>(s10), r11 = hsum<T>(s11), r12 = hsum<T>(s12), r13 = hsum<T>(s13);
  const ke = <usize>k * S;
  for (let o = kv; o < ke; o += S) {
    const x0 = load<T>(a0 + o);
    const x1 = load<T>(a1 + o);
    const y0 = load<T>(b0 + o), y1 = load<T>(b1 + o), y2 = load<T>(b2 + o), y3 = load<T>(b3 + o);
    r00 += x0 * y0;
    r01 += x0 * y1;
    r02 += x0 * y2;
    r03 += x0 * y3;
    r10 += x1 * y0;
    r11 += x1 * y1;
    r12 += x1 * y2;
    r13 += x1 * y3;
  }
  put<T>(c0, r00, sc, betaZero);
  put<T>(c0 + S, r01, sc, betaZero);
  put<T>(c0 + 2 * S, r02, sc, betaZero);
  put<T>(c0 + 3 * S, r03, sc, betaZero);
  const c1 = c0 + ldc;
  put<T>(c1, r10, sc, betaZero);
  put<T>(c1 + S, r11, sc, betaZero);
  put<T>(c1 + 2 * S, r12, sc, betaZero);
  put<T>(c1 + 3 * S, r13, sc, betaZero);
}

/** Tile of 1 row of A by 4 rows of B (the last row when m is odd). */
function tile1x4<T>(a0: usize, b0: usize, ldb: usize, k: i32, c0: usize, sc: usize, betaZero: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  const b1 = b0 + ldb;
  const b2 = b1 + ldb;
  const b3 = b2 + ldb;
  const zero = v128.splat<T>(0);
  let s0 = zero, s1 = zero, s2 = zero, s3 = zero;
  const kv = <usize>(k - k % L) * S;
  for (let o: usize = 0; o < kv; o += VBYTES) {
    const x0 = v128.load(a0 + o);
    s0 = vmadd<T>(x0, v128.load(b0 + o), s0);
    s1 = vmadd<T>(x0, v128.load(b1 + o), s1);
    s2 = vmadd<T>(x0, v128.load(b2 + o), s2);
    s3 = vmadd<T>(x0, v128.load(b3 + o), s3);
  }
  let r0 = hsum<T>(s0), r1 = hsum<T>(s1), r2 = hsum<T>(s2), r3 = hsum<T>(s3);
  const ke = <usize>k * S;
  for (let o = kv; o < ke; o += S) {
    const x0 = load<T>(a0 + o);
    r0 += x0 * load<T>(b0 + o);
    r1 += x0 * load<T>(b1 + o);
    r2 += x0 * load<T>(b2 + o);
    r3 += x0 * load<T>(b3 + o);
  }
  put<T>(c0, r0, sc, betaZero);
  put<T>(c0 + S, r1, sc, betaZero);
  put<T>(c0 + 2 * S, r2, sc, betaZero);
  put<T>(c0 + 3 * S, r3, sc, betaZero);
}

/**
 * Tile of 2 rows of A by 2 rows of B (edges of the 2-row loop): four independent accumulators
 * instead of four calls of tile1x1, whose single accumulator chains every multiply-add. Lanes are
 * added as in tile1x1, so an entry does not depend on the tile that computed it.
 */
function tile2x2<T>(a0: usize, a1: usize, b0: usize, b1: usize, k: i32, c0: usize, ldc: usize, sc: usize, betaZero: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  const zero = v128.splat<T>(0);
  let s00 = zero, s01 = zero, s10 = zero, s11 = zero;
  const kv = <usize>(k - k % L) * S;
  let o: usize = 0;
  for (; o < kv; o += VBYTES) {
    const x0 = v128.load(a0 + o);
    const x1 = v128.load(a1 + o);
    const y0 = v128.load(b0 + o);
    const y1 = v128.load(b1 + o);
    s00 = vmadd<T>(x0, y0, s00);
    s01 = vmadd<T>(x0, y1, s01);
    s10 = vmadd<T>(x1, y0, s10);
    s11 = vmadd<T>(x1, y1, s11);
  }
  let r00 = hsum<T>(s00), r01 = hsum<T>(s01), r10 = hsum<T>(s10), r11 = hsum<T>(s11);
  const ke = <usize>k * S;
  for (; o < ke; o += S) {
    const x0 = load<T>(a0 + o);
    const x1 = load<T>(a1 + o);
    const y0 = load<T>(b0 + o);
    const y1 = load<T>(b1 + o);
    r00 += x0 * y0;
    r01 += x0 * y1;
    r10 += x1 * y0;
    r11 += x1 * y1;
  }
  put<T>(c0, r00, sc, betaZero);
  put<T>(c0 + S, r01, sc, betaZero);
  put<T>(c0 + ldc, r10, sc, betaZero);
  put<T>(c0 + ldc + S, r11, sc, betaZero);
}

/** Tile of 2 rows of A by 1 row of B (the last column of the 2-row loop): two independent accumulators. */
function tile2x1<T>(a0: usize, a1: usize, b0: usize, k: i32, c0: usize, ldc: usize, sc: usize, betaZero: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  let s0 = v128.splat<T>(0);
  let s1 = s0;
  const kv = <usize>(k - k % L) * S;
  let o: usize = 0;
  for (; o < kv; o += VBYTES) {
    const y = v128.load(b0 + o);
    s0 = vmadd<T>(v128.load(a0 + o), y, s0);
    s1 = vmadd<T>(v128.load(a1 + o), y, s1);
  }
  let r0 = hsum<T>(s0), r1 = hsum<T>(s1);
  const ke = <usize>k * S;
  for (; o < ke; o += S) {
    const y = load<T>(b0 + o);
    r0 += load<T>(a0 + o) * y;
    r1 += load<T>(a1 + o) * y;
  }
  put<T>(c0, r0, sc, betaZero);
  put<T>(c0 + ldc, r1, sc, betaZero);
}

/**
 * One row of A by one row of B (edges). One accumulator, lanes added in the
 * same order as in the larger tiles, so an entry does not depend on the tile
 * that computed it (A Aᵀ comes out exactly symmetric).
 */
function tile1x1<T>(a0: usize, b0: usize, k: i32, c0: usize, sc: usize, betaZero: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  let s0 = v128.splat<T>(0);
  const kv = <usize>(k - k % L) * S;
  let o: usize = 0;
  for (; o < kv; o += VBYTES) s0 = vmadd<T>(v128.load(a0 + o), v128.load(b0 + o), s0);
  let r = hsum<T>(s0);
  const ke = <usize>k * S;
  for (; o < ke; o += S) r += load<T>(a0 + o) * load<T>(b0 + o);
  put<T>(c0, r, sc, betaZero);
}

/**
 * C (m x n) = alpha * A Bᵀ + beta * C with A m x k and B n x k row-major;
 * alpha and beta are read from `sc` (alpha, then beta, as T). k > 0.
 */
export function gemmDotNT<T>(c: usize, a: usize, b: usize, m: i32, n: i32, k: i32, sc: usize, betaZero: bool): void {
  const S = sizeof<T>();
  const rowA = <usize>k * S;
  const ldc = <usize>n * S;
  for (let jc = 0; jc < n; jc += NB) {
    const je = min(n, jc + NB);
    const j4 = jc + ((je - jc) & ~3);
    let i = 0;
    for (; i + 2 <= m; i += 2) {
      const a0 = a + <usize>i * rowA;
      const c0 = c + <usize>i * ldc;
      let j = jc;
      for (; j < j4; j += 4) tile2x4<T>(a0, a0 + rowA, b + <usize>j * rowA, rowA, k, c0 + <usize>j * S, ldc, sc, betaZero);
      for (; j + 2 <= je; j += 2) tile2x2<T>(a0, a0 + rowA, b + <usize>j * rowA, b + <usize>(j + 1) * rowA, k, c0 + <usize>j * S, ldc, sc, betaZero);
      if (j < je) tile2x1<T>(a0, a0 + rowA, b + <usize>j * rowA, k, c0 + <usize>j * S, ldc, sc, betaZero);
    }
    if (i < m) {
      const a0 = a + <usize>i * rowA;
      const c0 = c + <usize>i * ldc;
      let j = jc;
      for (; j < j4; j += 4) tile1x4<T>(a0, b + <usize>j * rowA, rowA, k, c0 + <usize>j * S, sc, betaZero);
      for (; j < je; j++) tile1x1<T>(a0, b + <usize>j * rowA, k, c0 + <usize>j * S, sc, betaZero);
    }
  }
}
