// General matrix-matrix product C = alpha * op(A) * op(B) + beta * C on
// row-major arrays, blocked after Goto & van de Geijn (2008, ACM Trans. Math.
// Softw. 34(3):12): blocks of B (KC x NC) and of A (MC x KC) are copied into
// packed panels (B in panels of NR columns, A in panels of MR rows, both
// laid out step by step along the inner dimension and padded with zeros), and
// a register tile of MR x NR entries of C is accumulated in 2 * MR vector
// registers per step: 2 loads of B, MR broadcast loads of A, 2 * MR
// multiply-adds.
//
// MR = 4 rows, NR = two vectors of columns (8 f32 or 4 f64): 8 accumulators,
// 2 B vectors and 4 broadcasts fit the 16 vector registers of x86-64 (V8
// keeps one as scratch). V8 hoists the loads of a step above the arithmetic,
// so all broadcasts of a step are live at once: a 5-row tile spills two
// accumulators to the stack and runs at half speed. Among tiles of 3..6 rows
// by 2..3 vectors (broadcast loads or one vector load plus lane shuffles),
// 4 x 2 vectors with broadcast loads was fastest or near it in both builds
// and both types on this machine.
//
// A * Bᵀ with few rows of A (a small batch times a weight matrix stored
// n x k) skips the packing and runs as tiles of dot products (gemm-dot.ts):
// packing would transpose all of B on every call for little reuse.

import { gemmDotNT } from "./gemm-dot";
import { gemv, ger } from "./level2";
import { VBYTES, lanes, scaleInPlace, vmadd } from "./simd";

/** Rows of the register tile. */
export const MR: i32 = 4;
/** Depth of a packed block along the inner dimension. */
export const KC: i32 = 256;
/** Rows of C per packed block of A (a multiple of MR). */
export const MC: i32 = 128;
/** Columns of C per packed block of B (a multiple of NR for both types). */
export const NC: i32 = 512;

/**
 * Whether A Bᵀ (m x n, inner dimension k) runs as dot products without
 * packing (see gemm-dot.ts). Packing costs n * k moves for m * n * k
 * multiply-adds (relatively more for small m); the dot tiles add their lanes
 * once per entry (relatively more for small k). Measured here on m = 1..512,
 * n = 10..1024, k = 64..4096: the dot path was faster up to m = 16 (from 10 %
 * at m = 16 to 4x at m = 1, also with k = 256), level with or ahead of the
 * packed path for m = 32..128 with k >= 784, and behind it on the 64 and 256
 * cubes.
 */
// @ts-ignore: decorator
@inline
function useDotPath(m: i32, k: i32): bool {
  return m <= 16 || (m <= 64 && k >= 256);
}

/** Workspace layout (bytes), sized for f64; the f32 kernels use the front of each part. */
const PACK_A_BYTES: usize = <usize>(MC * KC * 8);
const PACK_B_BYTES: usize = <usize>(KC * NC * 8);
const TILE_BYTES: usize = <usize>(MR * 8 * 8);
const SCALE_BYTES: usize = 32;

/** Bytes of workspace the caller passes to gemm (packed panels, one edge tile, the scales). */
export function gemmWorkspaceBytes(): i32 {
  return <i32>(PACK_A_BYTES + PACK_B_BYTES + TILE_BYTES + SCALE_BYTES);
}

/** Columns of the register tile: two vectors. */
// @ts-ignore: decorator
@inline
function NR<T>(): i32 {
  return 2 * lanes<T>();
}

/**
 * The register tile: C[0..MR, 0..NR) = alpha * sum_p Apanel[p] Bpanel[p]ᵀ
 * (+ beta * C unless betaZero), with `ldc` the byte stride between rows of C.
 * alpha and beta are read from memory at `scales` (alpha, then beta) after the
 * loop: as parameters they would hold two vector registers through the loop
 * and push the accumulators out of registers (measured: half the speed).
 */
function tile<T>(kc: i32, pa: usize, pb: usize, cp: usize, ldc: usize, scales: usize, betaZero: bool): void {
  const S = sizeof<T>();
  const zero = v128.splat<T>(0);
  let c00 = zero, c01 = zero, c10 = zero, c11 = zero, c20 = zero, c21 = zero, c30 = zero, c31 = zero;
  for (let p = 0; p < kc; p++) {
    const b0 = v128.load(pb);
    const b1 = v128.load(pb, VBYTES);
    let x = v128.load_splat<T>(pa);
    c00 = vmadd<T>(x, b0, c00);
    c01 = vmadd<T>(x, b1, c01);
    x = v128.load_splat<T>(pa, S);
    c10 = vmadd<T>(x, b0, c10);
    c11 = vmadd<T>(x, b1, c11);
    x = v128.load_splat<T>(pa, 2 * S);
    c20 = vmadd<T>(x, b0, c20);
    c21 = vmadd<T>(x, b1, c21);
    x = v128.load_splat<T>(pa, 3 * S);
    c30 = vmadd<T>(x, b0, c30);
    c31 = vmadd<T>(x, b1, c31);
    pa += 4 * S;
    pb += 2 * VBYTES;
  }
  const va = v128.load_splat<T>(scales);
  if (betaZero) {
    v128.store(cp, v128.mul<T>(va, c00));
    v128.store(cp, v128.mul<T>(va, c01), VBYTES);
    cp += ldc;
    v128.store(cp, v128.mul<T>(va, c10));
    v128.store(cp, v128.mul<T>(va, c11), VBYTES);
    cp += ldc;
    v128.store(cp, v128.mul<T>(va, c20));
    v128.store(cp, v128.mul<T>(va, c21), VBYTES);
    cp += ldc;
    v128.store(cp, v128.mul<T>(va, c30));
    v128.store(cp, v128.mul<T>(va, c31), VBYTES);
  } else {
    const vb = v128.load_splat<T>(scales, sizeof<T>());
    v128.store(cp, v128.add<T>(v128.mul<T>(va, c00), v128.mul<T>(vb, v128.load(cp))));
    v128.store(cp, v128.add<T>(v128.mul<T>(va, c01), v128.mul<T>(vb, v128.load(cp, VBYTES))), VBYTES);
    cp += ldc;
    v128.store(cp, v128.add<T>(v128.mul<T>(va, c10), v128.mul<T>(vb, v128.load(cp))));
    v128.store(cp, v128.add<T>(v128.mul<T>(va, c11), v128.mul<T>(vb, v128.load(cp, VBYTES))), VBYTES);
    cp += ldc;
    v128.store(cp, v128.add<T>(v128.mul<T>(va, c20), v128.mul<T>(vb, v128.load(cp))));
    v128.store(cp, v128.add<T>(v128.mul<T>(va, c21), v128.mul<T>(vb, v128.load(cp, VBYTES))), VBYTES);
    cp += ldc;
    v128.store(cp, v128.add<T>(v128.mul<T>(va, c30), v128.mul<T>(vb, v128.load(cp))));
    v128.store(cp, v128.add<T>(v128.mul<T>(va, c31), v128.mul<T>(vb, v128.load(cp, VBYTES))), VBYTES);
  }
}

/** Writes the valid mr x nr corner of an edge tile (stored NR wide at `t`) into C. */
function edge<T>(t: usize, cp: usize, mr: i32, nr: i32, ldc: usize, alpha: T, beta: T, betaZero: bool): void {
  const S = sizeof<T>();
  const tstride = <usize>NR<T>() * S;
  for (let r = 0; r < mr; r++) {
    const trow = t + <usize>r * tstride;
    const crow = cp + <usize>r * ldc;
    for (let q = 0; q < nr; q++) {
      const off = <usize>q * S;
      const v = alpha * load<T>(trow + off);
      store<T>(crow + off, betaZero ? v : v + beta * load<T>(crow + off));
    }
  }
}

/** 4x4 transpose of f32 vectors: out[i] holds lane i of v0..v3. */
// @ts-ignore: decorator
@inline
function storeTransposed4(dst: usize, stride: usize, v0: v128, v1: v128, v2: v128, v3: v128): void {
  const s0 = v128.shuffle<f32>(v0, v1, 0, 4, 1, 5);
  const s1 = v128.shuffle<f32>(v0, v1, 2, 6, 3, 7);
  const s2 = v128.shuffle<f32>(v2, v3, 0, 4, 1, 5);
  const s3 = v128.shuffle<f32>(v2, v3, 2, 6, 3, 7);
  v128.store(dst, v128.shuffle<f32>(s0, s2, 0, 1, 4, 5));
  v128.store(dst + stride, v128.shuffle<f32>(s0, s2, 2, 3, 6, 7));
  v128.store(dst + 2 * stride, v128.shuffle<f32>(s1, s3, 0, 1, 4, 5));
  v128.store(dst + 3 * stride, v128.shuffle<f32>(s1, s3, 2, 3, 6, 7));
}

/**
 * Packs op(B)[pc..pc+kc, jc..jc+nc) into panels of NR columns: element (p, q)
 * of panel j at dst + (j * kc + p * NR + q) * S; columns past nc are zero.
 * op(B)(p, j) = b[p * rs + j * cs] with (rs, cs) = (n, 1), or (1, k) when transposed.
 */
function packB<T>(dst: usize, b: usize, pc: i32, jc: i32, kc: i32, nc: i32, n: i32, k: i32, transB: bool): void {
  const S = sizeof<T>();
  const W = NR<T>();
  const L = lanes<T>();
  for (let jr = 0; jr < nc; jr += W) {
    const panel = dst + <usize>(jr * kc) * S;
    const cols = min(W, nc - jr);
    const j0 = jc + jr;
    if (cols == W && !transB) {
      // rows of B are contiguous: two vector copies per step
      let src = b + <usize>(pc * n + j0) * S;
      const step = <usize>n * S;
      let d = panel;
      for (let p = 0; p < kc; p++) {
        v128.store(d, v128.load(src));
        v128.store(d, v128.load(src, VBYTES), VBYTES);
        src += step;
        d += 2 * VBYTES;
      }
    } else if (cols == W && transB) {
      // B stored n x k: W rows of B become the W columns of the panel (transpose)
      const base = b + <usize>(j0 * k + pc) * S;
      const rowStep = <usize>k * S;
      const pv = kc - kc % L;
      let p = 0;
      if (S == 4) {
        const r0 = base, r1 = r0 + rowStep, r2 = r1 + rowStep, r3 = r2 + rowStep;
        const r4 = r3 + rowStep, r5 = r4 + rowStep, r6 = r5 + rowStep, r7 = r6 + rowStep;
        const stride = <usize>W * S;
        for (; p < pv; p += 4) {
          const off = <usize>p * S;
          const d = panel + <usize>p * stride;
          storeTransposed4(d, stride, v128.load(r0 + off), v128.load(r1 + off), v128.load(r2 + off), v128.load(r3 + off));
          storeTransposed4(d + VBYTES, stride, v128.load(r4 + off), v128.load(r5 + off), v128.load(r6 + off), v128.load(r7 + off));
        }
      } else {
        const r0 = base, r1 = r0 + rowStep, r2 = r1 + rowStep, r3 = r2 + rowStep;
        const stride = <usize>W * S;
        for (; p < pv; p += 2) {
          const off = <usize>p * S;
          const d = panel + <usize>p * stride;
          const v0 = v128.load(r0 + off), v1 = v128.load(r1 + off), v2 = v128.load(r2 + off), v3 = v128.load(r3 + off);
          v128.store(d, v128.shuffle<f64>(v0, v1, 0, 2));
          v128.store(d, v128.shuffle<f64>(v2, v3, 0, 2), VBYTES);
          v128.store(d + stride, v128.shuffle<f64>(v0, v1, 1, 3));
          v128.store(d + stride, v128.shuffle<f64>(v2, v3, 1, 3), VBYTES);
        }
      }
      for (; p < kc; p++) {
        const d = panel + <usize>(p * W) * S;
        for (let q = 0; q < W; q++) store<T>(d + <usize>q * S, load<T>(base + <usize>q * rowStep + <usize>p * S));
      }
    } else {
      // last, partial panel: element by element, zero padding
      const rs = transB ? 1 : n;
      const cs = transB ? k : 1;
      for (let p = 0; p < kc; p++) {
        const d = panel + <usize>(p * W) * S;
        let q = 0;
        for (; q < cols; q++) store<T>(d + <usize>q * S, load<T>(b + <usize>((pc + p) * rs + (j0 + q) * cs) * S));
        for (; q < W; q++) store<T>(d + <usize>q * S, 0);
      }
    }
  }
}

/**
 * Packs op(A)[ic..ic+mc, pc..pc+kc) into panels of MR rows: element (p, r)
 * of panel i at dst + (i * kc + p * MR + r) * S; rows past mc are zero.
 * op(A)(i, p) = a[i * rs + p * cs] with (rs, cs) = (k, 1), or (1, m) when transposed.
 */
function packA<T>(dst: usize, a: usize, ic: i32, pc: i32, mc: i32, kc: i32, m: i32, k: i32, transA: bool): void {
  const S = sizeof<T>();
  const L = lanes<T>();
  const rowBytes = <usize>MR * S;
  for (let ir = 0; ir < mc; ir += MR) {
    const panel = dst + <usize>(ir * kc) * S;
    const rows = min(MR, mc - ir);
    const i0 = ic + ir;
    if (rows == MR && transA) {
      // A stored k x m: the MR entries of one step are contiguous (one or two vectors)
      let src = a + <usize>(pc * m + i0) * S;
      const step = <usize>m * S;
      let d = panel;
      for (let p = 0; p < kc; p++) {
        v128.store(d, v128.load(src));
        if (S == 8) v128.store(d, v128.load(src, VBYTES), VBYTES);
        src += step;
        d += rowBytes;
      }
    } else if (rows == MR) {
      // A stored m x k: transpose MR rows, L steps at a time
      const rowStep = <usize>k * S;
      const r0 = a + <usize>(i0 * k + pc) * S;
      const r1 = r0 + rowStep, r2 = r1 + rowStep, r3 = r2 + rowStep;
      const pv = kc - kc % L;
      let p = 0;
      if (S == 4) {
        for (; p < pv; p += 4) {
          const off = <usize>p * S;
          storeTransposed4(panel + <usize>p * rowBytes, rowBytes, v128.load(r0 + off), v128.load(r1 + off), v128.load(r2 + off), v128.load(r3 + off));
        }
      } else {
        for (; p < pv; p += 2) {
          const off = <usize>p * S;
          const d = panel + <usize>p * rowBytes;
          const v0 = v128.load(r0 + off), v1 = v128.load(r1 + off), v2 = v128.load(r2 + off), v3 = v128.load(r3 + off);
          v128.store(d, v128.shuffle<f64>(v0, v1, 0, 2));
          v128.store(d, v128.shuffle<f64>(v2, v3, 0, 2), VBYTES);
          v128.store(d + rowBytes, v128.shuffle<f64>(v0, v1, 1, 3));
          v128.store(d + rowBytes, v128.shuffle<f64>(v2, v3, 1, 3), VBYTES);
        }
      }
      for (; p < kc; p++) {
        const d = panel + <usize>p * rowBytes;
        const off = <usize>p * S;
        store<T>(d, load<T>(r0 + off));
        store<T>(d, load<T>(r1 + off), S);
        store<T>(d, load<T>(r2 + off), 2 * S);
        store<T>(d, load<T>(r3 + off), 3 * S);
      }
    } else {
      // last, partial panel: element by element, zero padding
      const rs = transA ? 1 : k;
      const cs = transA ? m : 1;
      for (let p = 0; p < kc; p++) {
        const d = panel + <usize>p * rowBytes;
        let r = 0;
        for (; r < rows; r++) store<T>(d + <usize>r * S, load<T>(a + <usize>((i0 + r) * rs + (pc + p) * cs) * S));
        for (; r < MR; r++) store<T>(d + <usize>r * S, 0);
      }
    }
  }
}

/**
 * C = alpha * op(A) * op(B) + beta * C, C m x n, op(A) m x k, op(B) k x n, all
 * row-major; pointers are byte offsets. beta = 0 never reads C; alpha = 0 or
 * k = 0 only scales C by beta. `work` points to gemmWorkspaceBytes() bytes.
 */
export function gemm<T>(c: usize, a: usize, b: usize, m: i32, n: i32, k: i32, transA: bool, transB: bool, alpha: f64, beta: f64, work: usize): void {
  if (m <= 0 || n <= 0) return;
  if (alpha == 0 || k <= 0) {
    scaleInPlace<T>(c, m * n, beta);
    return;
  }
  const S = sizeof<T>();
  const W = NR<T>();
  const pA = work;
  const pB = work + PACK_A_BYTES;
  const pT = pB + PACK_B_BYTES;
  // scales of the register tile: (alpha, beta of this block) and (1, 1) for edge tiles
  const pS = pT + TILE_BYTES;
  const pOne = pS + 16;
  store<T>(pOne, <T>1);
  store<T>(pOne, <T>1, S);
  const al = <T>alpha;
  const be = <T>beta;
  const one = <T>1;
  const ldc = <usize>n * S;
  if (m == 1 && !transB) {
    // one row of C: C = alpha a B + beta C = alpha Bᵀ a + beta C (a is k contiguous values whether or
    // not A is transposed), a matrix-vector product with no packing
    gemv<T>(c, b, a, k, n, true, alpha, beta);
    return;
  }
  if (k == 1) {
    // a sum of one product per entry: C = beta C + alpha a bᵀ (both operands are contiguous vectors),
    // an outer-product update with no packing
    scaleInPlace<T>(c, m * n, beta);
    ger<T>(c, a, b, m, n, alpha);
    return;
  }
  if (!transA && transB && useDotPath(m, k)) {
    store<T>(pS, al);
    store<T>(pS, be, S);
    gemmDotNT<T>(c, a, b, m, n, k, pS, beta == 0);
    return;
  }
  for (let jc = 0; jc < n; jc += NC) {
    const nc = min(NC, n - jc);
    for (let pc = 0; pc < k; pc += KC) {
      const kc = min(KC, k - pc);
      // the first block along k applies beta, the later ones accumulate
      const first = pc == 0;
      const bz = first && beta == 0;
      const bt = first ? be : one;
      store<T>(pS, al);
      store<T>(pS, bt, S);
      packB<T>(pB, b, pc, jc, kc, nc, n, k, transB);
      for (let ic = 0; ic < m; ic += MC) {
        const mc = min(MC, m - ic);
        packA<T>(pA, a, ic, pc, mc, kc, m, k, transA);
        for (let jr = 0; jr < nc; jr += W) {
          const nr = min(W, nc - jr);
          const pb = pB + <usize>(jr * kc) * S;
          for (let ir = 0; ir < mc; ir += MR) {
            const mr = min(MR, mc - ir);
            const pa = pA + <usize>(ir * kc) * S;
            const cp = c + (<usize>(ic + ir) * <usize>n + <usize>(jc + jr)) * S;
            if (mr == MR && nr == W) {
              tile<T>(kc, pa, pb, cp, ldc, pS, bz);
            } else {
              tile<T>(kc, pa, pb, pT, <usize>W * S, pOne, true);
              edge<T>(pT, cp, mr, nr, ldc, al, bt, bz);
            }
          }
        }
      }
    }
  }
}
