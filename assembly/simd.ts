// Small helpers over 128-bit vectors shared by every kernel.
//
// T is f32 (four lanes per vector) or f64 (two lanes); every branch on
// sizeof<T>() or on ASC_FEATURE_RELAXED_SIMD is resolved at compile time.

/** 1 in the build with relaxed-SIMD multiply-adds, 0 in the plain SIMD build. */
export function relaxedBuild(): i32 {
  return ASC_FEATURE_RELAXED_SIMD ? 1 : 0;
}

/** Bytes in one vector. */
export const VBYTES: usize = 16;

/** Lanes of T in one vector: 4 for f32, 2 for f64. */
// @ts-ignore: decorator
@inline
export function lanes<T>(): i32 {
  return <i32>(VBYTES / sizeof<T>());
}

/**
 * c + a * b. In the relaxed build this is relaxed_madd, which engines lower
 * to a fused multiply-add where the CPU has one (one rounding) and to a
 * multiply then an add elsewhere; the plain SIMD build always rounds twice.
 */
// @ts-ignore: decorator
@inline
export function vmadd<T>(a: v128, b: v128, c: v128): v128 {
  if (ASC_FEATURE_RELAXED_SIMD) {
    return v128.relaxed_madd<T>(a, b, c);
  } else {
    return v128.add<T>(v128.mul<T>(a, b), c);
  }
}

/** Sum of the lanes: (l0 + l1) + (l2 + l3) for f32, l0 + l1 for f64. */
// @ts-ignore: decorator
@inline
export function hsum<T>(v: v128): T {
  if (sizeof<T>() == 4) {
    return (v128.extract_lane<T>(v, 0) + v128.extract_lane<T>(v, 1)) + (v128.extract_lane<T>(v, 2) + v128.extract_lane<T>(v, 3));
  } else {
    return v128.extract_lane<T>(v, 0) + v128.extract_lane<T>(v, 1);
  }
}

/** Largest lane, NaN if any lane is NaN (wasm min/max propagate NaN). */
// @ts-ignore: decorator
@inline
export function hmax<T>(v: v128): T {
  if (sizeof<T>() == 4) {
    return max<T>(max<T>(v128.extract_lane<T>(v, 0), v128.extract_lane<T>(v, 1)), max<T>(v128.extract_lane<T>(v, 2), v128.extract_lane<T>(v, 3)));
  } else {
    return max<T>(v128.extract_lane<T>(v, 0), v128.extract_lane<T>(v, 1));
  }
}

/** c[0..len) *= beta; beta = 0 writes +0 without reading c (BLAS convention). */
export function scaleInPlace<T>(c: usize, len: i32, beta: f64): void {
  if (len <= 0) return;
  if (beta == 0) {
    memory.fill(c, 0, <usize>len * sizeof<T>());
    return;
  }
  if (beta == 1) return;
  const b = <T>beta;
  const vb = v128.splat<T>(b);
  const L = lanes<T>();
  const end = c + <usize>len * sizeof<T>();
  const vend = c + <usize>(len - len % L) * sizeof<T>();
  let p = c;
  for (; p < vend; p += VBYTES) v128.store(p, v128.mul<T>(vb, v128.load(p)));
  for (; p < end; p += sizeof<T>()) store<T>(p, b * load<T>(p));
}

/** The low f64 half of an f32x4 vector (lanes 0 and 1, exact). */
// @ts-ignore: decorator
@inline
export function lo(v: v128): v128 {
  return f64x2.promote_low_f32x4(v);
}

/** The high f64 half of an f32x4 vector (lanes 2 and 3, exact). */
// @ts-ignore: decorator
@inline
export function hi(v: v128): v128 {
  return f64x2.promote_low_f32x4(v128.shuffle<f32>(v, v, 2, 3, 2, 3));
}

/** Rounds two f64x2 vectors to one f32x4 vector (lo lanes first). */
// @ts-ignore: decorator
@inline
export function join(l: v128, h: v128): v128 {
  return v128.shuffle<f32>(f32x4.demote_f64x2_zero(l), f32x4.demote_f64x2_zero(h), 0, 1, 4, 5);
}
