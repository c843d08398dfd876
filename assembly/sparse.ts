// Row-compressed sparse kernels (compressed sparse row: Saad, "Iterative Methods for Sparse Linear
// Systems", 2nd ed., SIAM 2003, §3.4): the drive out = alpha X Wᵀ + beta out, the transposed drive
// out = alpha Z W + beta out, and the sampled product values = alpha (post pre)|stored + beta values.
// Pointers are byte offsets; rowStart and columnIndex are i32 arrays.
//
// Exactness: every sum is formed term by term in the order of the TypeScript kernels (src/kernels/
// sparse.ts) and in f64 whatever the storage (f32 data promoted exactly, the result rounded once as the
// TypeScript kernels store it), so the plain SIMD build gives their results bit for bit. The two f64
// lanes carry two independent sums: two patterns of the batch (drives) or two stored entries (sampled
// product), never two parts of one sum. The relaxed build may fuse a multiply and an add (vmadd).

import { vmadd } from "./simd";

// @ts-ignore: decorator
@inline
function ld<T>(p: usize): f64 {
  return <f64>load<T>(p);
}

// @ts-ignore: decorator
@inline
function st<T>(p: usize, v: f64): void {
  store<T>(p, <T>v);
}

/** The two values at p0 and p1 as one f64x2 vector. */
// @ts-ignore: decorator
@inline
function pair<T>(p0: usize, p1: usize): v128 {
  return f64x2.replace_lane(f64x2.splat(ld<T>(p0)), 1, ld<T>(p1));
}

/** out (batch x rows) = alpha x (batch x cols) Wᵀ + beta out, W row-compressed. */
export function sparseDrive<T>(out: usize, values: usize, rowStart: usize, columnIndex: usize, x: usize, rows: i32, cols: i32, batch: i32, alpha: f64, beta: f64): void {
  const S = sizeof<T>();
  const xRow = <usize>cols * S;
  const yRow = <usize>rows * S;
  const bz = beta == 0;
  let b = 0;
  if (alpha != 0) {
    // four patterns per pass: each stored entry's index and value are loaded once for four sums
    for (; b + 4 <= batch; b += 4) {
      const x0 = x + <usize>b * xRow;
      const x1 = x0 + xRow;
      const x2 = x1 + xRow;
      const x3 = x2 + xRow;
      const y0 = out + <usize>b * yRow;
      const y1 = y0 + yRow;
      const y2 = y1 + yRow;
      const y3 = y2 + yRow;
      for (let i = 0; i < rows; i++) {
        const k0 = load<i32>(rowStart + (<usize>i << 2));
        const k1 = load<i32>(rowStart + (<usize>(i + 1) << 2));
        let s = f64x2.splat(0);
        let t = f64x2.splat(0);
        for (let k = k0; k < k1; k++) {
          const c = <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
          const v = f64x2.splat(ld<T>(values + <usize>k * S));
          s = vmadd<f64>(v, pair<T>(x0 + c, x1 + c), s);
          t = vmadd<f64>(v, pair<T>(x2 + c, x3 + c), t);
        }
        const o = <usize>i * S;
        const r0 = alpha * f64x2.extract_lane(s, 0);
        const r1 = alpha * f64x2.extract_lane(s, 1);
        const r2 = alpha * f64x2.extract_lane(t, 0);
        const r3 = alpha * f64x2.extract_lane(t, 1);
        st<T>(y0 + o, bz ? r0 : r0 + beta * ld<T>(y0 + o));
        st<T>(y1 + o, bz ? r1 : r1 + beta * ld<T>(y1 + o));
        st<T>(y2 + o, bz ? r2 : r2 + beta * ld<T>(y2 + o));
        st<T>(y3 + o, bz ? r3 : r3 + beta * ld<T>(y3 + o));
      }
    }
    for (; b + 2 <= batch; b += 2) {
      const x0 = x + <usize>b * xRow;
      const x1 = x0 + xRow;
      const y0 = out + <usize>b * yRow;
      const y1 = y0 + yRow;
      for (let i = 0; i < rows; i++) {
        const k0 = load<i32>(rowStart + (<usize>i << 2));
        const k1 = load<i32>(rowStart + (<usize>(i + 1) << 2));
        let s = f64x2.splat(0);
        for (let k = k0; k < k1; k++) {
          const c = <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
          s = vmadd<f64>(f64x2.splat(ld<T>(values + <usize>k * S)), pair<T>(x0 + c, x1 + c), s);
        }
        const o = <usize>i * S;
        const r0 = alpha * f64x2.extract_lane(s, 0);
        const r1 = alpha * f64x2.extract_lane(s, 1);
        st<T>(y0 + o, bz ? r0 : r0 + beta * ld<T>(y0 + o));
        st<T>(y1 + o, bz ? r1 : r1 + beta * ld<T>(y1 + o));
      }
    }
  }
  for (; b < batch; b++) {
    const x0 = x + <usize>b * xRow;
    const y0 = out + <usize>b * yRow;
    for (let i = 0; i < rows; i++) {
      const o = <usize>i * S;
      const old = bz ? 0.0 : beta * ld<T>(y0 + o);
      if (alpha == 0) {
        st<T>(y0 + o, old);
        continue;
      }
      const k0 = load<i32>(rowStart + (<usize>i << 2));
      const k1 = load<i32>(rowStart + (<usize>(i + 1) << 2));
      let s: f64 = 0;
      for (let k = k0; k < k1; k++) {
        const c = <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
        s += ld<T>(values + <usize>k * S) * ld<T>(x0 + c);
      }
      st<T>(y0 + o, alpha * s + old);
    }
  }
}

/** out (batch x cols) = alpha z (batch x rows) W + beta out, W row-compressed; each sum over rows in ascending order. */
export function sparseDriveTransposed<T>(out: usize, values: usize, rowStart: usize, columnIndex: usize, z: usize, rows: i32, cols: i32, batch: i32, alpha: f64, beta: f64): void {
  const S = sizeof<T>();
  const total = <usize>batch * <usize>cols;
  if (beta == 0) memory.fill(out, 0, total * S);
  else if (beta != 1) for (let q: usize = 0; q < total; q++) st<T>(out + q * S, beta * ld<T>(out + q * S));
  if (alpha == 0) return;
  const zRow = <usize>rows * S;
  const yRow = <usize>cols * S;
  let b = 0;
  for (; b + 4 <= batch; b += 4) {
    const z0 = z + <usize>b * zRow;
    const z1 = z0 + zRow;
    const z2 = z1 + zRow;
    const z3 = z2 + zRow;
    const y0 = out + <usize>b * yRow;
    const y1 = y0 + yRow;
    const y2 = y1 + yRow;
    const y3 = y2 + yRow;
    const va = f64x2.splat(alpha);
    for (let i = 0; i < rows; i++) {
      const o = <usize>i * S;
      const za = f64x2.mul(va, pair<T>(z0 + o, z1 + o));
      const zb = f64x2.mul(va, pair<T>(z2 + o, z3 + o));
      const k0 = load<i32>(rowStart + (<usize>i << 2));
      const k1 = load<i32>(rowStart + (<usize>(i + 1) << 2));
      for (let k = k0; k < k1; k++) {
        const c = <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
        const v = f64x2.splat(ld<T>(values + <usize>k * S));
        const r = vmadd<f64>(v, za, pair<T>(y0 + c, y1 + c));
        const t = vmadd<f64>(v, zb, pair<T>(y2 + c, y3 + c));
        st<T>(y0 + c, f64x2.extract_lane(r, 0));
        st<T>(y1 + c, f64x2.extract_lane(r, 1));
        st<T>(y2 + c, f64x2.extract_lane(t, 0));
        st<T>(y3 + c, f64x2.extract_lane(t, 1));
      }
    }
  }
  for (; b + 2 <= batch; b += 2) {
    const z0 = z + <usize>b * zRow;
    const z1 = z0 + zRow;
    const y0 = out + <usize>b * yRow;
    const y1 = y0 + yRow;
    for (let i = 0; i < rows; i++) {
      const o = <usize>i * S;
      const zi = f64x2.mul(f64x2.splat(alpha), pair<T>(z0 + o, z1 + o));
      const k0 = load<i32>(rowStart + (<usize>i << 2));
      const k1 = load<i32>(rowStart + (<usize>(i + 1) << 2));
      for (let k = k0; k < k1; k++) {
        const c = <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
        const r = vmadd<f64>(f64x2.splat(ld<T>(values + <usize>k * S)), zi, pair<T>(y0 + c, y1 + c));
        st<T>(y0 + c, f64x2.extract_lane(r, 0));
        st<T>(y1 + c, f64x2.extract_lane(r, 1));
      }
    }
  }
  for (; b < batch; b++) {
    const z0 = z + <usize>b * zRow;
    const y0 = out + <usize>b * yRow;
    for (let i = 0; i < rows; i++) {
      const zi = alpha * ld<T>(z0 + <usize>i * S);
      const k0 = load<i32>(rowStart + (<usize>i << 2));
      const k1 = load<i32>(rowStart + (<usize>(i + 1) << 2));
      for (let k = k0; k < k1; k++) {
        const c = y0 + <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
        st<T>(c, ld<T>(c) + ld<T>(values + <usize>k * S) * zi);
      }
    }
  }
}

/** values[k] = alpha sum_b post[i, b] pre[b, j] + beta values[k] for each stored (i, j); post rows x batch, pre batch x cols. */
export function sparseSampledProduct<T>(values: usize, rowStart: usize, columnIndex: usize, post: usize, pre: usize, rows: i32, cols: i32, batch: i32, alpha: f64, beta: f64): void {
  const S = sizeof<T>();
  const bz = beta == 0;
  const preRow = <usize>cols * S;
  for (let i = 0; i < rows; i++) {
    const p = post + <usize>i * <usize>batch * S;
    const k0 = load<i32>(rowStart + (<usize>i << 2));
    const k1 = load<i32>(rowStart + (<usize>(i + 1) << 2));
    let k = k0;
    if (alpha != 0) {
      // four stored entries per pass over the batch: each post value is loaded once for four sums
      for (; k + 4 <= k1; k += 4) {
        const c0 = <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
        const c1 = <usize>load<i32>(columnIndex + (<usize>(k + 1) << 2)) * S;
        const c2 = <usize>load<i32>(columnIndex + (<usize>(k + 2) << 2)) * S;
        const c3 = <usize>load<i32>(columnIndex + (<usize>(k + 3) << 2)) * S;
        let s = f64x2.splat(0);
        let t = f64x2.splat(0);
        let q = pre;
        for (let b = 0; b < batch; b++) {
          const pb = f64x2.splat(ld<T>(p + <usize>b * S));
          s = vmadd<f64>(pb, pair<T>(q + c0, q + c1), s);
          t = vmadd<f64>(pb, pair<T>(q + c2, q + c3), t);
          q += preRow;
        }
        const v0 = values + <usize>k * S;
        const r0 = alpha * f64x2.extract_lane(s, 0);
        const r1 = alpha * f64x2.extract_lane(s, 1);
        const r2 = alpha * f64x2.extract_lane(t, 0);
        const r3 = alpha * f64x2.extract_lane(t, 1);
        st<T>(v0, bz ? r0 : r0 + beta * ld<T>(v0));
        st<T>(v0 + S, bz ? r1 : r1 + beta * ld<T>(v0 + S));
        st<T>(v0 + 2 * S, bz ? r2 : r2 + beta * ld<T>(v0 + 2 * S));
        st<T>(v0 + 3 * S, bz ? r3 : r3 + beta * ld<T>(v0 + 3 * S));
      }
      for (; k + 2 <= k1; k += 2) {
        const c0 = <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
        const c1 = <usize>load<i32>(columnIndex + (<usize>(k + 1) << 2)) * S;
        let s = f64x2.splat(0);
        let q = pre;
        for (let b = 0; b < batch; b++) {
          s = vmadd<f64>(f64x2.splat(ld<T>(p + <usize>b * S)), pair<T>(q + c0, q + c1), s);
          q += preRow;
        }
        const v0 = values + <usize>k * S;
        const v1 = v0 + S;
        const r0 = alpha * f64x2.extract_lane(s, 0);
        const r1 = alpha * f64x2.extract_lane(s, 1);
        st<T>(v0, bz ? r0 : r0 + beta * ld<T>(v0));
        st<T>(v1, bz ? r1 : r1 + beta * ld<T>(v1));
      }
    }
    for (; k < k1; k++) {
      const v0 = values + <usize>k * S;
      const old = bz ? 0.0 : beta * ld<T>(v0);
      if (alpha == 0) {
        st<T>(v0, old);
        continue;
      }
      const c0 = <usize>load<i32>(columnIndex + (<usize>k << 2)) * S;
      let s: f64 = 0;
      let q = pre;
      for (let b = 0; b < batch; b++) {
        s += ld<T>(p + <usize>b * S) * ld<T>(q + c0);
        q += preRow;
      }
      st<T>(v0, alpha * s + old);
    }
  }
}
