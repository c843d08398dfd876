// Matrix-vector product and outer-product accumulation (level-2 BLAS xGEMV
// and xGER: Dongarra, Du Croz, Hammarling & Hanson, 1988, ACM Trans. Math.
// Softw. 14(1):1-17), row-major, pointers as byte offsets.

import { VBYTES, hsum, lanes, scaleInPlace, vmadd } from "./simd";

/**
 * y = alpha * A x + beta * y, A rows x cols: four rows per pass over x, two
 * vector accumulators per row (eight independent sums).
 */
function rowProducts<T>(y: usize, a: usize, x: usize, rows: i32, cols: i32, alpha: f64, beta: f64): void {
  if (rows <= 0) return;
  if (alpha == 0 || cols <= 0) {
    scaleInPlace<T>(y, rows, beta);
    return;
  }
  const S = sizeof<T>();
  const L = lanes<T>();
  const al = <T>alpha;
  const be = <T>beta;
  const bz = beta == 0;
  const rowBytes = <usize>cols * S;
  const c2 = cols - cols % (2 * L);
  const c1 = cols - cols % L;
  const zero = v128.splat<T>(0);
  let i = 0;
  for (; i + 4 <= rows; i += 4) {
    const a0 = a + <usize>i * rowBytes;
    const a1 = a0 + rowBytes;
    const a2 = a1 + rowBytes;
    const a3 = a2 + rowBytes;
    let s0 = zero, s1 = zero, s2 = zero, s3 = zero, t0 = zero, t1 = zero, t2 = zero, t3 = zero;
    let j = 0;
    for (; j < c2; j += 2 * L) {
      const o = <usize>j * S;
      const u = v128.load(x + o);
      const v = v128.load(x + o, VBYTES);
      s0 = vmadd<T>(v128.load(a0 + o), u, s0);
      t0 = vmadd<T>(v128.load(a0 + o, VBYTES), v, t0);
      s1 = vmadd<T>(v128.load(a1 + o), u, s1);
      t1 = vmadd<T>(v128.load(a1 + o, VBYTES), v, t1);
      s2 = vmadd<T>(v128.load(a2 + o), u, s2);
      t2 = vmadd<T>(v128.load(a2 + o, VBYTES), v, t2);
      s3 = vmadd<T>(v128.load(a3 + o), u, s3);
      t3 = vmadd<T>(v128.load(a3 + o, VBYTES), v, t3);
    }
    for (; j < c1; j += L) {
      const o = <usize>j * S;
      const u = v128.load(x + o);
      s0 = vmadd<T>(v128.load(a0 + o), u, s0);
      s1 = vmadd<T>(v128.load(a1 + o), u, s1);
      s2 = vmadd<T>(v128.load(a2 + o), u, s2);
      s3 = vmadd<T>(v128.load(a3 + o), u, s3);
    }
    let r0 = hsum<T>(v128.add<T>(s0, t0));
    let r1 = hsum<T>(v128.add<T>(s1, t1));
    let r2 = hsum<T>(v128.add<T>(s2, t2));
    let r3 = hsum<T>(v128.add<T>(s3, t3));
    for (; j < cols; j++) {
      const o = <usize>j * S;
      const u = load<T>(x + o);
      r0 += load<T>(a0 + o) * u;
      r1 += load<T>(a1 + o) * u;
      r2 += load<T>(a2 + o) * u;
      r3 += load<T>(a3 + o) * u;
    }
    const yp = y + <usize>i * S;
    if (bz) {
      store<T>(yp, al * r0);
      store<T>(yp, al * r1, S);
      store<T>(yp, al * r2, 2 * S);
      store<T>(yp, al * r3, 3 * S);
    } else {
      store<T>(yp, al * r0 + be * load<T>(yp));
      store<T>(yp, al * r1 + be * load<T>(yp, S), S);
      store<T>(yp, al * r2 + be * load<T>(yp, 2 * S), 2 * S);
      store<T>(yp, al * r3 + be * load<T>(yp, 3 * S), 3 * S);
    }
  }
  for (; i < rows; i++) {
    const a0 = a + <usize>i * rowBytes;
    let s0 = zero;
    let j = 0;
    for (; j < c1; j += L) {
      const o = <usize>j * S;
      s0 = vmadd<T>(v128.load(a0 + o), v128.load(x + o), s0);
    }
    let r0 = hsum<T>(s0);
    for (; j < cols; j++) r0 += load<T>(a0 + <usize>j * S) * load<T>(x + <usize>j * S);
    const yp = y + <usize>i * S;
    store<T>(yp, bz ? al * r0 : al * r0 + be * load<T>(yp));
  }
}

/** y = alpha * Aᵀ x + beta * y: y receives multiples of rows of A, four rows per pass over y. */
function transposedProduct<T>(y: usize, a: usize, x: usize, rows: i32, cols: i32, alpha: f64, beta: f64): void {
  if (cols <= 0) return;
  scaleInPlace<T>(y, cols, beta);
  if (alpha == 0) return;
  const S = sizeof<T>();
  const L = lanes<T>();
  const rowBytes = <usize>cols * S;
  const c1 = cols - cols % L;
  let i = 0;
  for (; i + 4 <= rows; i += 4) {
    const e0 = <T>alpha * load<T>(x + <usize>i * S);
    const e1 = <T>alpha * load<T>(x + <usize>i * S, S);
    const e2 = <T>alpha * load<T>(x + <usize>i * S, 2 * S);
    const e3 = <T>alpha * load<T>(x + <usize>i * S, 3 * S);
    const v0 = v128.splat<T>(e0), v1 = v128.splat<T>(e1), v2 = v128.splat<T>(e2), v3 = v128.splat<T>(e3);
    const a0 = a + <usize>i * rowBytes;
    const a1 = a0 + rowBytes;
    const a2 = a1 + rowBytes;
    const a3 = a2 + rowBytes;
    let j = 0;
    for (; j < c1; j += L) {
      const o = <usize>j * S;
      let acc = v128.load(y + o);
      acc = vmadd<T>(v0, v128.load(a0 + o), acc);
      acc = vmadd<T>(v1, v128.load(a1 + o), acc);
      acc = vmadd<T>(v2, v128.load(a2 + o), acc);
      acc = vmadd<T>(v3, v128.load(a3 + o), acc);
      v128.store(y + o, acc);
    }
    for (; j < cols; j++) {
      const o = <usize>j * S;
      store<T>(y + o, load<T>(y + o) + (e0 * load<T>(a0 + o) + e1 * load<T>(a1 + o) + (e2 * load<T>(a2 + o) + e3 * load<T>(a3 + o))));
    }
  }
  for (; i < rows; i++) {
    const e0 = <T>alpha * load<T>(x + <usize>i * S);
    const v0 = v128.splat<T>(e0);
    const a0 = a + <usize>i * rowBytes;
    let j = 0;
    for (; j < c1; j += L) {
      const o = <usize>j * S;
      v128.store(y + o, vmadd<T>(v0, v128.load(a0 + o), v128.load(y + o)));
    }
    for (; j < cols; j++) {
      const o = <usize>j * S;
      store<T>(y + o, load<T>(y + o) + e0 * load<T>(a0 + o));
    }
  }
}

/** y = alpha * op(A) x + beta * y with A rows x cols as stored (BLAS convention). */
export function gemv<T>(y: usize, a: usize, x: usize, rows: i32, cols: i32, trans: bool, alpha: f64, beta: f64): void {
  if (trans) transposedProduct<T>(y, a, x, rows, cols, alpha, beta);
  else rowProducts<T>(y, a, x, rows, cols, alpha, beta);
}

/**
 * A += alpha * x yᵀ, A m x n. Each entry gets A + (alpha x_i) y_j with a
 * separate multiply and add (never fused, also in the relaxed build), so the
 * float64 kernel matches the definition bit for bit; float32 computes in f32.
 */
export function ger<T>(out: usize, x: usize, y: usize, m: i32, n: i32, alpha: f64): void {
  if (alpha == 0 || m <= 0 || n <= 0) return;
  const S = sizeof<T>();
  const L = lanes<T>();
  const rowBytes = <usize>n * S;
  const n1 = n - n % L;
  let i = 0;
  for (; i + 2 <= m; i += 2) {
    const s = <T>(alpha * <f64>load<T>(x + <usize>i * S));
    const t = <T>(alpha * <f64>load<T>(x + <usize>i * S, S));
    const vs = v128.splat<T>(s);
    const vt = v128.splat<T>(t);
    const r0 = out + <usize>i * rowBytes;
    const r1 = r0 + rowBytes;
    let j = 0;
    for (; j < n1; j += L) {
      const o = <usize>j * S;
      const v = v128.load(y + o);
      v128.store(r0 + o, v128.add<T>(v128.load(r0 + o), v128.mul<T>(vs, v)));
      v128.store(r1 + o, v128.add<T>(v128.load(r1 + o), v128.mul<T>(vt, v)));
    }
    for (; j < n; j++) {
      const o = <usize>j * S;
      const v = load<T>(y + o);
      store<T>(r0 + o, load<T>(r0 + o) + s * v);
      store<T>(r1 + o, load<T>(r1 + o) + t * v);
    }
  }
  if (i < m) {
    const s = <T>(alpha * <f64>load<T>(x + <usize>i * S));
    const vs = v128.splat<T>(s);
    const r0 = out + <usize>i * rowBytes;
    let j = 0;
    for (; j < n1; j += L) {
      const o = <usize>j * S;
      v128.store(r0 + o, v128.add<T>(v128.load(r0 + o), v128.mul<T>(vs, v128.load(y + o))));
    }
    for (; j < n; j++) {
      const o = <usize>j * S;
      store<T>(r0 + o, load<T>(r0 + o) + s * load<T>(y + o));
    }
  }
}
