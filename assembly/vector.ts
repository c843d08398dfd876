// Elementwise kernels, reductions and row broadcasts on flat arrays (pointers
// are byte offsets, n counts elements).
//
// Exactness: each elementwise kernel gives the result of the TypeScript
// kernels bit for bit. Those evaluate one expression per element in float64
// and round once to the storage type. Sums, differences and products of two
// float32 values rounded once to float32 equal the float32 operation (float64
// carries at least 2 * 24 + 2 bits, so the double rounding is innocuous:
// Figueroa, 1995, "When is double rounding innocuous?", ACM SIGNUM Newsletter
// 30(3):21-26; from memory), so add, sub and mul run in f32 lanes. Expressions with a float64 scale (axpy, axpby, scale) and the
// differences of maxAbsDiff run in f64 lanes (f32 data promoted, the result
// demoted once).

import { VBYTES, hi, hmax, join, lanes, lo, vmadd } from "./simd";
import { ABS32, ABS64 } from "./generated/layout";
import { K } from "./units";

// @ts-ignore: decorator
@inline
function vend<T>(p: usize, n: i32): usize {
  return p + <usize>(n - n % lanes<T>()) * sizeof<T>();
}

/** op 0: add, 1: sub, 2: mul; out[i] = a[i] op b[i]. */
export function binary<T>(op: i32, out: usize, a: usize, b: usize, n: i32): void {
  const S = sizeof<T>();
  const ve = <usize>(n - n % lanes<T>()) * S;
  const e = <usize>n * S;
  let o: usize = 0;
  if (op == 0) {
    for (; o < ve; o += VBYTES) v128.store(out + o, v128.add<T>(v128.load(a + o), v128.load(b + o)));
    for (; o < e; o += S) store<T>(out + o, load<T>(a + o) + load<T>(b + o));
  } else if (op == 1) {
    for (; o < ve; o += VBYTES) v128.store(out + o, v128.sub<T>(v128.load(a + o), v128.load(b + o)));
    for (; o < e; o += S) store<T>(out + o, load<T>(a + o) - load<T>(b + o));
  } else {
    for (; o < ve; o += VBYTES) v128.store(out + o, v128.mul<T>(v128.load(a + o), v128.load(b + o)));
    for (; o < e; o += S) store<T>(out + o, load<T>(a + o) * load<T>(b + o));
  }
}

/** out[i] = alpha * a[i] + beta * b[i] (both terms always evaluated); scale when b = 0 (null). */
export function axpby<T>(out: usize, a: usize, b: usize, alpha: f64, beta: f64, n: i32): void {
  const S = sizeof<T>();
  const ve = <usize>(n - n % lanes<T>()) * S;
  const e = <usize>n * S;
  const va = f64x2.splat(alpha);
  const vb = f64x2.splat(beta);
  let o: usize = 0;
  if (S == 4) {
    for (; o < ve; o += VBYTES) {
      const x = v128.load(a + o);
      const y = v128.load(b + o);
      const l = f64x2.add(f64x2.mul(va, lo(x)), f64x2.mul(vb, lo(y)));
      const h = f64x2.add(f64x2.mul(va, hi(x)), f64x2.mul(vb, hi(y)));
      v128.store(out + o, join(l, h));
    }
  } else {
    for (; o < ve; o += VBYTES) v128.store(out + o, f64x2.add(f64x2.mul(va, v128.load(a + o)), f64x2.mul(vb, v128.load(b + o))));
  }
  for (; o < e; o += S) store<T>(out + o, <T>(alpha * <f64>load<T>(a + o) + beta * <f64>load<T>(b + o)));
}

/** out[i] = alpha * a[i] + out[i]. */
export function axpy<T>(out: usize, a: usize, alpha: f64, n: i32): void {
  const S = sizeof<T>();
  const ve = <usize>(n - n % lanes<T>()) * S;
  const e = <usize>n * S;
  const va = f64x2.splat(alpha);
  let o: usize = 0;
  if (S == 4) {
    for (; o < ve; o += VBYTES) {
      const x = v128.load(a + o);
      const y = v128.load(out + o);
      v128.store(out + o, join(f64x2.add(f64x2.mul(va, lo(x)), lo(y)), f64x2.add(f64x2.mul(va, hi(x)), hi(y))));
    }
  } else {
    for (; o < ve; o += VBYTES) v128.store(out + o, f64x2.add(f64x2.mul(va, v128.load(a + o)), v128.load(out + o)));
  }
  for (; o < e; o += S) store<T>(out + o, <T>(alpha * <f64>load<T>(a + o) + <f64>load<T>(out + o)));
}

/** out[i] = alpha * a[i]. */
export function scale<T>(out: usize, a: usize, alpha: f64, n: i32): void {
  const S = sizeof<T>();
  const ve = <usize>(n - n % lanes<T>()) * S;
  const e = <usize>n * S;
  const va = f64x2.splat(alpha);
  let o: usize = 0;
  if (S == 4) {
    for (; o < ve; o += VBYTES) {
      const x = v128.load(a + o);
      v128.store(out + o, join(f64x2.mul(va, lo(x)), f64x2.mul(va, hi(x))));
    }
  } else {
    for (; o < ve; o += VBYTES) v128.store(out + o, f64x2.mul(va, v128.load(a + o)));
  }
  for (; o < e; o += S) store<T>(out + o, <T>(alpha * <f64>load<T>(a + o)));
}

/** out[i] = value (rounded to T). */
export function fill<T>(out: usize, value: f64, n: i32): void {
  const S = sizeof<T>();
  const v = <T>value;
  const vv = v128.splat<T>(v);
  const ve = vend<T>(out, n);
  const e = out + <usize>n * S;
  let p = out;
  for (; p < ve; p += VBYTES) v128.store(p, vv);
  for (; p < e; p += S) store<T>(p, v);
}

/**
 * max_i |a[i] - b[i]|, NaN if a difference is NaN; differences in f64. Two accumulators with pmax
 * (one instruction; the NaN-propagating max is several and sits on the loop's dependency chain),
 * NaN tracked apart: a NaN difference fails d == d.
 */
export function maxAbsDiff<T>(a: usize, b: usize, n: i32): f64 {
  const S = sizeof<T>();
  const ve = <usize>(n - n % lanes<T>()) * S;
  const e = <usize>n * S;
  let b0 = f64x2.splat(0);
  let b1 = b0;
  let nan = b0;
  let o: usize = 0;
  if (S == 4) {
    for (; o < ve; o += VBYTES) {
      const x = v128.load(a + o);
      const y = v128.load(b + o);
      const dl = v128.and(f64x2.sub(lo(x), lo(y)), K(ABS64));
      const dh = v128.and(f64x2.sub(hi(x), hi(y)), K(ABS64));
      b0 = f64x2.pmax(b0, dl);
      b1 = f64x2.pmax(b1, dh);
      nan = v128.or(nan, v128.or(f64x2.ne(dl, dl), f64x2.ne(dh, dh)));
    }
  } else {
    const v2 = <usize>(n - n % 4) * S;
    for (; o < v2; o += 2 * VBYTES) {
      const d0 = v128.and(f64x2.sub(v128.load(a + o), v128.load(b + o)), K(ABS64));
      const d1 = v128.and(f64x2.sub(v128.load(a + o, VBYTES), v128.load(b + o, VBYTES)), K(ABS64));
      b0 = f64x2.pmax(b0, d0);
      b1 = f64x2.pmax(b1, d1);
      nan = v128.or(nan, v128.or(f64x2.ne(d0, d0), f64x2.ne(d1, d1)));
    }
    for (; o < ve; o += VBYTES) {
      const d0 = v128.and(f64x2.sub(v128.load(a + o), v128.load(b + o)), K(ABS64));
      b0 = f64x2.pmax(b0, d0);
      nan = v128.or(nan, f64x2.ne(d0, d0));
    }
  }
  if (v128.any_true(nan)) return NaN;
  let r = hmax<f64>(f64x2.pmax(b0, b1));
  for (; o < e; o += S) r = max<f64>(r, abs<f64>(<f64>load<T>(a + o) - <f64>load<T>(b + o)));
  return r;
}

/**
 * max_i |a[i]| (exact in T), NaN if any element is NaN. f32: the magnitudes' bit patterns (sign
 * cleared) order like the values, with every NaN above +Infinity (0x7f800000), so an unsigned
 * integer max (one instruction) does it; four accumulators. f64: pmax with NaN tracked apart.
 */
export function maxAbs<T>(a: usize, n: i32): f64 {
  const S = sizeof<T>();
  const e = a + <usize>n * S;
  let p = a;
  let r: f64 = 0;
  if (S == 4) {
    const mask = K(ABS32);
    let m0 = i32x4.splat(0);
    let m1 = m0;
    let m2 = m0;
    let m3 = m0;
    const v4 = a + <usize>(n - n % 16) * 4;
    for (; p < v4; p += 4 * VBYTES) {
      m0 = i32x4.max_u(m0, v128.and(v128.load(p), mask));
      m1 = i32x4.max_u(m1, v128.and(v128.load(p, VBYTES), mask));
      m2 = i32x4.max_u(m2, v128.and(v128.load(p, 2 * VBYTES), mask));
      m3 = i32x4.max_u(m3, v128.and(v128.load(p, 3 * VBYTES), mask));
    }
    const ve = a + <usize>(n - n % 4) * 4;
    for (; p < ve; p += VBYTES) m0 = i32x4.max_u(m0, v128.and(v128.load(p), mask));
    const m = i32x4.max_u(i32x4.max_u(m0, m1), i32x4.max_u(m2, m3));
    let bits = max<u32>(max<u32>(<u32>i32x4.extract_lane(m, 0), <u32>i32x4.extract_lane(m, 1)), max<u32>(<u32>i32x4.extract_lane(m, 2), <u32>i32x4.extract_lane(m, 3)));
    for (; p < e; p += 4) bits = max<u32>(bits, load<u32>(p) & 0x7fffffff);
    if (bits > 0x7f800000) return NaN;
    r = <f64>reinterpret<f32>(bits);
  } else {
    let b0 = f64x2.splat(0);
    let b1 = b0;
    let nan = b0;
    const v2 = a + <usize>(n - n % 4) * 8;
    for (; p < v2; p += 2 * VBYTES) {
      const x0 = v128.and(v128.load(p), K(ABS64));
      const x1 = v128.and(v128.load(p, VBYTES), K(ABS64));
      b0 = f64x2.pmax(b0, x0);
      b1 = f64x2.pmax(b1, x1);
      nan = v128.or(nan, v128.or(f64x2.ne(x0, x0), f64x2.ne(x1, x1)));
    }
    const ve = a + <usize>(n - n % 2) * 8;
    for (; p < ve; p += VBYTES) {
      const x0 = v128.and(v128.load(p), K(ABS64));
      b0 = f64x2.pmax(b0, x0);
      nan = v128.or(nan, f64x2.ne(x0, x0));
    }
    if (v128.any_true(nan)) return NaN;
    r = hmax<f64>(f64x2.pmax(b0, b1));
    for (; p < e; p += 8) r = max<f64>(r, abs<f64>(load<f64>(p)));
  }
  return r;
}

/** 1 when every element is finite, else 0: the largest magnitude is below infinity (NaN fails the test). */
export function allFinite<T>(a: usize, n: i32): i32 {
  const m = maxAbs<T>(a, n);
  return m < Infinity ? 1 : 0;
}

/** sum_i a[i] * b[i] in f64 lanes (f32 data promoted: the products are exact). */
export function dot<T>(a: usize, b: usize, n: i32): f64 {
  const S = sizeof<T>();
  const ve = <usize>(n - n % lanes<T>()) * S;
  const e = <usize>n * S;
  let s0 = f64x2.splat(0);
  let s1 = s0;
  let o: usize = 0;
  if (S == 4) {
    for (; o < ve; o += VBYTES) {
      const x = v128.load(a + o);
      const y = v128.load(b + o);
      s0 = f64x2.add(s0, f64x2.mul(lo(x), lo(y)));
      s1 = f64x2.add(s1, f64x2.mul(hi(x), hi(y)));
    }
  } else {
    const v2 = <usize>(n - n % 4) * S;
    for (; o < v2; o += 2 * VBYTES) {
      s0 = f64x2.add(s0, f64x2.mul(v128.load(a + o), v128.load(b + o)));
      s1 = f64x2.add(s1, f64x2.mul(v128.load(a + o, VBYTES), v128.load(b + o, VBYTES)));
    }
    for (; o < ve; o += VBYTES) s0 = f64x2.add(s0, f64x2.mul(v128.load(a + o), v128.load(b + o)));
  }
  const s = f64x2.add(s0, s1);
  let r = f64x2.extract_lane(s, 0) + f64x2.extract_lane(s, 1);
  for (; o < e; o += S) r += <f64>load<T>(a + o) * <f64>load<T>(b + o);
  return r;
}

/** out[r * cols + j] += bias[j] for every row. */
export function addRowVector<T>(out: usize, bias: usize, rows: i32, cols: i32): void {
  const S = sizeof<T>();
  const ve = <usize>(cols - cols % lanes<T>()) * S;
  const e = <usize>cols * S;
  const rowBytes = <usize>cols * S;
  for (let r = 0; r < rows; r++) {
    const row = out + <usize>r * rowBytes;
    let o: usize = 0;
    for (; o < ve; o += VBYTES) v128.store(row + o, v128.add<T>(v128.load(row + o), v128.load(bias + o)));
    for (; o < e; o += S) store<T>(row + o, load<T>(row + o) + load<T>(bias + o));
  }
}

/** out[j] = alpha * sum_r a[r * cols + j] + beta * out[j]; rows added four at a time. */
export function sumRows<T>(out: usize, a: usize, rows: i32, cols: i32, alpha: f64, beta: f64): void {
  const S = sizeof<T>();
  if (cols <= 0) return;
  if (beta == 0) memory.fill(out, 0, <usize>cols * S);
  else if (beta != 1) {
    // same as scaleInPlace but exact per element like the TypeScript kernel
    const e = <usize>cols * S;
    for (let o: usize = 0; o < e; o += S) store<T>(out + o, <T>(beta * <f64>load<T>(out + o)));
  }
  if (alpha == 0 || rows <= 0) return;
  const al = v128.splat<T>(<T>alpha);
  const ve = <usize>(cols - cols % lanes<T>()) * S;
  const e = <usize>cols * S;
  const rowBytes = <usize>cols * S;
  let r = 0;
  for (; r + 4 <= rows; r += 4) {
    const a0 = a + <usize>r * rowBytes;
    const a1 = a0 + rowBytes;
    const a2 = a1 + rowBytes;
    const a3 = a2 + rowBytes;
    let o: usize = 0;
    for (; o < ve; o += VBYTES) {
      const s = v128.add<T>(v128.add<T>(v128.load(a0 + o), v128.load(a1 + o)), v128.add<T>(v128.load(a2 + o), v128.load(a3 + o)));
      v128.store(out + o, vmadd<T>(al, s, v128.load(out + o)));
    }
    for (; o < e; o += S) {
      const s = (load<T>(a0 + o) + load<T>(a1 + o)) + (load<T>(a2 + o) + load<T>(a3 + o));
      store<T>(out + o, load<T>(out + o) + <T>alpha * s);
    }
  }
  for (; r < rows; r++) {
    const a0 = a + <usize>r * rowBytes;
    let o: usize = 0;
    for (; o < ve; o += VBYTES) v128.store(out + o, vmadd<T>(al, v128.load(a0 + o), v128.load(out + o)));
    for (; o < e; o += S) store<T>(out + o, load<T>(out + o) + <T>alpha * load<T>(a0 + o));
  }
}

/** memmove of `bytes` bytes (overlap allowed). */
export function copyBytes(out: usize, a: usize, bytes: i32): void {
  memory.copy(out, a, <usize>bytes);
}
