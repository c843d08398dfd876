// Unit (activation) functions and their slopes on flat arrays, in SIMD lanes:
// out[i] = f(x[i]) or f'(x[i]) for the logistic (gain g, offset o), tanh,
// rectified linear, hard sigmoid and linear units of src/units/.
//
// Codes (kind * 2 + slope): 0 logistic, 1 its slope, 2 tanh, 3 its slope,
// 4 relu, 5 its slope, 6 hard sigmoid, 7 its slope, 8 linear, 9 its slope.
//
// exp is evaluated only at arguments w <= 0 (the forms below never need
// more), so it never overflows:
//   logistic  u = g (x - o), e = exp(-|u|): f = 1 / (1 + e) for u >= 0,
//             e / (1 + e) below; f' = g e / (1 + e)^2
//   tanh      m = expm1(-2|x|): tanh x = sign(x) (-m) / (2 + m);
//             f' = 4 e / (1 + e)^2 with e = exp(-2|x|)
// (the same tail-preserving forms as the TypeScript units).
//
// exp and expm1: Cody-Waite range reduction w = k ln2 + r, |r| <= ln2 / 2
// (W. J. Cody & W. Waite 1980, "Software Manual for the Elementary
// Functions", Prentice-Hall; J.-M. Muller 2016, "Elementary Functions",
// 3rd ed., Birkhauser, ch. 11), a polynomial in r, and 2^k put in through
// the exponent bits in two factors 2^(k >> 1) 2^(k - (k >> 1)), so that
// results in the subnormal range are rounded once (gradual underflow).
// - f64: Taylor polynomial of degree 13 (truncation below 2e-17 relative on
//   |r| <= 0.347); ln2 split into the fdlibm constants (Sun Microsystems
//   1993, e_exp.c: ln2HI = 0x3fe62e42fee00000, ln2LO = 0x3dea39ef35793c76).
// - f32: the degree-6 polynomial and ln2 split of Cephes expf (Cephes Math
//   Library, S. L. Moshier 1984-1992, expf.c): exp(r) = 1 + r + r^2 P(r).
//   With g = 1 and o = 0 the argument -|x| is exact in f32 and reduced in
//   f32; otherwise u = g (x - o) is formed in f64 (as the TypeScript unit
//   does) and reduced in f64 before the f32 polynomial, so that rounding u
//   to f32 (a relative error |u| 2^-24 in exp) never enters.
// NaN in gives NaN out (wasm min/max propagate NaN); +-Infinity saturates.

import { VBYTES, vmadd } from "./simd";

// ---- f64 constants ----
const LOG2E64: f64 = 1.4426950408889634;
const LN2HI64: f64 = 6.93147180369123816490e-1;
const LN2LO64: f64 = 1.90821492927058770002e-10;
const LN2_64: f64 = 0.6931471805599453;
/** 1.5 * 2^52: adding it rounds |t| < 2^51 to an integer held in the low mantissa bits. */
const MAGIC64: f64 = 6755399441055744.0;
/** exp(-746) rounds to 0 in f64; below that the argument is clamped. */
const LO64: f64 = -746.0;
/** tanh(30) rounds to 1 in f64 (1 - tanh 30 < 2^-86). */
const TANH_LO64: f64 = -60.0;

// ---- f32 constants (Cephes expf) ----
const LOG2E32: f32 = 1.44269504088896341;
const C1_32: f32 = 0.693359375;
const C2_32: f32 = -2.12194440e-4;
const P0: f32 = 1.9875691500e-4;
const P1: f32 = 1.3981999507e-3;
const P2: f32 = 8.3334519073e-3;
const P3: f32 = 4.1665795894e-2;
const P4: f32 = 1.6666665459e-1;
const P5: f32 = 5.0000001201e-1;
/** 1.5 * 2^23 for f32 lanes. */
const MAGIC32: f32 = 12582912.0;
const MAGIC32_BITS: i32 = 0x4b400000;
/** exp(-104) rounds to 0 in f32. */
const LO32: f32 = -104.0;
/** tanh(10) rounds to 1 in f32. */
const TANH_LO32: f32 = -20.0;

// ======================= f64 lanes =======================

/**
 * p 2^k for integral k in [-1077, 0] given as f64 lanes, in two factors
 * 2^max(k, -1022) 2^(k - max(k, -1022)) (both normal): the exponent bits of
 * each come from adding 1.5 * 2^52 + 1023 (the biased exponent lands in the
 * low mantissa bits) and shifting left by 52.
 */
// @ts-ignore: decorator
@inline
function scale64(p: v128, kf: v128): v128 {
  const k1 = f64x2.max(kf, f64x2.splat(-1022.0));
  const k2 = f64x2.sub(kf, k1);
  const bias = f64x2.splat(MAGIC64 + 1023.0);
  const s1 = i64x2.shl(f64x2.add(k1, bias), 52);
  const s2 = i64x2.shl(f64x2.add(k2, bias), 52);
  return f64x2.mul(f64x2.mul(p, s1), s2);
}

/** exp(w) for w <= 0 (or NaN), f64 lanes. */
// @ts-ignore: decorator
@inline
function expNeg64(w0: v128): v128 {
  const w = f64x2.max(w0, f64x2.splat(LO64));
  const t = f64x2.add(f64x2.mul(w, f64x2.splat(LOG2E64)), f64x2.splat(MAGIC64));
  const kf = f64x2.sub(t, f64x2.splat(MAGIC64));
  const r = f64x2.sub(f64x2.sub(w, f64x2.mul(kf, f64x2.splat(LN2HI64))), f64x2.mul(kf, f64x2.splat(LN2LO64)));
  const p = taylor64(r, f64x2.splat(1.0));
  return scale64(p, kf);
}

/** Horner sum of r^j / j! for j = 1..13 plus c0 (1 for exp, 0 for expm1). */
// @ts-ignore: decorator
@inline
function taylor64(r: v128, c0: v128): v128 {
  let q = f64x2.splat(1.6059043836821613e-10); // 1/13!
  q = vmadd<f64>(q, r, f64x2.splat(2.08767569878681e-9)); // 1/12!
  q = vmadd<f64>(q, r, f64x2.splat(2.505210838544172e-8)); // 1/11!
  q = vmadd<f64>(q, r, f64x2.splat(2.755731922398589e-7)); // 1/10!
  q = vmadd<f64>(q, r, f64x2.splat(2.7557319223985893e-6)); // 1/9!
  q = vmadd<f64>(q, r, f64x2.splat(2.48015873015873e-5)); // 1/8!
  q = vmadd<f64>(q, r, f64x2.splat(1.984126984126984e-4)); // 1/7!
  q = vmadd<f64>(q, r, f64x2.splat(1.388888888888889e-3)); // 1/6!
  q = vmadd<f64>(q, r, f64x2.splat(8.333333333333333e-3)); // 1/5!
  q = vmadd<f64>(q, r, f64x2.splat(4.1666666666666664e-2)); // 1/4!
  q = vmadd<f64>(q, r, f64x2.splat(1.6666666666666666e-1)); // 1/3!
  q = vmadd<f64>(q, r, f64x2.splat(0.5));
  // r + r^2 q, then + c0
  const m = vmadd<f64>(f64x2.mul(r, r), q, r);
  return f64x2.add(c0, m);
}

/** expm1(w) for w in [TANH_LO64, 0] (or NaN), f64 lanes: 2^k expm1(r) + (2^k - 1). */
// @ts-ignore: decorator
@inline
function expm1Neg64(w0: v128): v128 {
  const w = f64x2.max(w0, f64x2.splat(TANH_LO64));
  const t = f64x2.add(f64x2.mul(w, f64x2.splat(LOG2E64)), f64x2.splat(MAGIC64));
  const kf = f64x2.sub(t, f64x2.splat(MAGIC64));
  const r = f64x2.sub(f64x2.sub(w, f64x2.mul(kf, f64x2.splat(LN2HI64))), f64x2.mul(kf, f64x2.splat(LN2LO64)));
  const q = taylor64(r, f64x2.splat(0.0));
  const s = i64x2.shl(f64x2.add(kf, f64x2.splat(MAGIC64 + 1023.0)), 52);
  return f64x2.add(f64x2.mul(s, q), f64x2.sub(s, f64x2.splat(1.0)));
}

// @ts-ignore: decorator
@inline
function apply64(code: i32, x: v128, g: v128, o: v128): v128 {
  const one = f64x2.splat(1.0);
  const zero = f64x2.splat(0.0);
  const nan = f64x2.splat(NaN);
  if (code == 0 || code == 1) {
    const u = f64x2.mul(g, f64x2.sub(x, o));
    const e = expNeg64(f64x2.neg(f64x2.abs(u)));
    const d = f64x2.add(one, e);
    if (code == 0) return f64x2.div(v128.bitselect(one, e, f64x2.ge(u, zero)), d);
    return f64x2.div(f64x2.mul(g, e), f64x2.mul(d, d));
  } else if (code == 2) {
    const m = expm1Neg64(f64x2.mul(f64x2.splat(-2.0), f64x2.abs(x)));
    const y = f64x2.div(f64x2.neg(m), f64x2.add(f64x2.splat(2.0), m));
    return v128.bitselect(x, y, f64x2.splat(-0.0)); // sign of x, magnitude of y
  } else if (code == 3) {
    const e = expNeg64(f64x2.mul(f64x2.splat(-2.0), f64x2.abs(x)));
    const d = f64x2.add(one, e);
    return f64x2.div(f64x2.mul(f64x2.splat(4.0), e), f64x2.mul(d, d));
  } else if (code == 4) {
    return v128.bitselect(zero, x, f64x2.lt(x, zero));
  } else if (code == 5) {
    return v128.bitselect(one, v128.bitselect(zero, nan, f64x2.lt(x, zero)), f64x2.ge(x, zero));
  } else if (code == 6) {
    return v128.bitselect(zero, v128.bitselect(one, x, f64x2.gt(x, one)), f64x2.lt(x, zero));
  } else if (code == 7) {
    const inside = v128.and(f64x2.ge(x, zero), f64x2.le(x, one));
    return v128.bitselect(one, v128.bitselect(nan, zero, f64x2.ne(x, x)), inside);
  } else if (code == 8) {
    return x;
  } else {
    return v128.bitselect(one, nan, f64x2.eq(x, x));
  }
}

// @ts-ignore: decorator
@inline
function run64(code: i32, out: usize, x: usize, n: i32, gain: f64, offset: f64): void {
  const g = f64x2.splat(gain);
  const o = f64x2.splat(offset);
  const ve = <usize>(n - n % 2) * 8;
  let p: usize = 0;
  for (; p < ve; p += VBYTES) v128.store(out + p, apply64(code, v128.load(x + p), g, o));
  if (n % 2 != 0) {
    const v = apply64(code, f64x2.splat(load<f64>(x + p)), g, o);
    store<f64>(out + p, f64x2.extract_lane(v, 0));
  }
}

/** The unit kernel `code` on f64 arrays (byte offsets; out may equal x). */
export function unitFill64(code: i32, gain: f64, offset: f64, out: usize, x: usize, n: i32): void {
  if (n <= 0) return;
  switch (code) {
    case 0: run64(0, out, x, n, gain, offset); break;
    case 1: run64(1, out, x, n, gain, offset); break;
    case 2: run64(2, out, x, n, gain, offset); break;
    case 3: run64(3, out, x, n, gain, offset); break;
    case 4: run64(4, out, x, n, gain, offset); break;
    case 5: run64(5, out, x, n, gain, offset); break;
    case 6: run64(6, out, x, n, gain, offset); break;
    case 7: run64(7, out, x, n, gain, offset); break;
    case 8: if (out != x) memory.copy(out, x, <usize>n * 8); break;
    default: run64(9, out, x, n, gain, offset); break;
  }
}

// ======================= f32 lanes =======================

/** The low f64 half / high f64 half of an f32x4 vector, and back. */
// @ts-ignore: decorator
@inline
function lo(v: v128): v128 {
  return f64x2.promote_low_f32x4(v);
}
// @ts-ignore: decorator
@inline
function hi(v: v128): v128 {
  return f64x2.promote_low_f32x4(v128.shuffle<f32>(v, v, 2, 3, 2, 3));
}
// @ts-ignore: decorator
@inline
function join(l: v128, h: v128): v128 {
  return v128.shuffle<f32>(f32x4.demote_f64x2_zero(l), f32x4.demote_f64x2_zero(h), 0, 1, 4, 5);
}
/** The low 32 bits of each i64 lane of two vectors, as one i32x4 vector. */
// @ts-ignore: decorator
@inline
function low32(l: v128, h: v128): v128 {
  return v128.shuffle<i32>(l, h, 0, 2, 4, 6);
}

/** Cephes expf polynomial: exp(r) - 1 = r + r^2 P(r). */
// @ts-ignore: decorator
@inline
function cephes32(r: v128): v128 {
  let p = f32x4.splat(P0);
  p = vmadd<f32>(p, r, f32x4.splat(P1));
  p = vmadd<f32>(p, r, f32x4.splat(P2));
  p = vmadd<f32>(p, r, f32x4.splat(P3));
  p = vmadd<f32>(p, r, f32x4.splat(P4));
  p = vmadd<f32>(p, r, f32x4.splat(P5));
  return vmadd<f32>(f32x4.mul(r, r), p, r);
}

/** p 2^k, k in [-150, 0] as i32 lanes, in two factors. */
// @ts-ignore: decorator
@inline
function scale32(p: v128, k: v128): v128 {
  const k1 = i32x4.shr_s(k, 1);
  const k2 = i32x4.sub(k, k1);
  const s1 = i32x4.shl(i32x4.add(k1, i32x4.splat(127)), 23);
  const s2 = i32x4.shl(i32x4.add(k2, i32x4.splat(127)), 23);
  return f32x4.mul(f32x4.mul(p, s1), s2);
}

/** exp(w) for w <= 0 (or NaN) given exactly in f32 lanes. */
// @ts-ignore: decorator
@inline
function expNeg32(w0: v128): v128 {
  const w = f32x4.max(w0, f32x4.splat(LO32));
  const t = f32x4.add(f32x4.mul(w, f32x4.splat(LOG2E32)), f32x4.splat(MAGIC32));
  const kf = f32x4.sub(t, f32x4.splat(MAGIC32));
  const r = f32x4.sub(f32x4.sub(w, f32x4.mul(kf, f32x4.splat(C1_32))), f32x4.mul(kf, f32x4.splat(C2_32)));
  return scale32(f32x4.add(f32x4.splat(1.0), cephes32(r)), i32x4.sub(t, i32x4.splat(MAGIC32_BITS)));
}

/** exp(w) for w <= 0 (or NaN) given in two f64 vectors (the four f32 lanes, low half first). */
// @ts-ignore: decorator
@inline
function expNeg32from64(wl0: v128, wh0: v128): v128 {
  const LO = f64x2.splat(<f64>LO32);
  const wl = f64x2.max(wl0, LO);
  const wh = f64x2.max(wh0, LO);
  const tl = f64x2.add(f64x2.mul(wl, f64x2.splat(LOG2E64)), f64x2.splat(MAGIC64));
  const th = f64x2.add(f64x2.mul(wh, f64x2.splat(LOG2E64)), f64x2.splat(MAGIC64));
  const rl = f64x2.sub(wl, f64x2.mul(f64x2.sub(tl, f64x2.splat(MAGIC64)), f64x2.splat(LN2_64)));
  const rh = f64x2.sub(wh, f64x2.mul(f64x2.sub(th, f64x2.splat(MAGIC64)), f64x2.splat(LN2_64)));
  const r = join(rl, rh);
  // the low 32 bits of t are k (two's complement): the low word of MAGIC64 is 0
  return scale32(f32x4.add(f32x4.splat(1.0), cephes32(r)), low32(tl, th));
}

/** expm1(w) for w in [TANH_LO32, 0] (or NaN), f32 lanes. */
// @ts-ignore: decorator
@inline
function expm1Neg32(w0: v128): v128 {
  const w = f32x4.max(w0, f32x4.splat(TANH_LO32));
  const t = f32x4.add(f32x4.mul(w, f32x4.splat(LOG2E32)), f32x4.splat(MAGIC32));
  const kf = f32x4.sub(t, f32x4.splat(MAGIC32));
  const r = f32x4.sub(f32x4.sub(w, f32x4.mul(kf, f32x4.splat(C1_32))), f32x4.mul(kf, f32x4.splat(C2_32)));
  const q = cephes32(r);
  const s = i32x4.shl(i32x4.add(i32x4.sub(t, i32x4.splat(MAGIC32_BITS)), i32x4.splat(127)), 23);
  return f32x4.add(f32x4.mul(s, q), f32x4.sub(s, f32x4.splat(1.0)));
}

/** Codes as for f64, plus 10 / 11: logistic / slope with g = 1, o = 0 (argument exact in f32). */
// @ts-ignore: decorator
@inline
function apply32(code: i32, x: v128, g: v128, o: v128, g32: v128): v128 {
  const one = f32x4.splat(1.0);
  const zero = f32x4.splat(0.0);
  const nan = f32x4.splat(NaN);
  if (code == 0 || code == 1) {
    const ul = f64x2.mul(g, f64x2.sub(lo(x), o));
    const uh = f64x2.mul(g, f64x2.sub(hi(x), o));
    const e = expNeg32from64(f64x2.neg(f64x2.abs(ul)), f64x2.neg(f64x2.abs(uh)));
    const d = f32x4.add(one, e);
    if (code == 0) {
      const pos = low32(f64x2.ge(ul, f64x2.splat(0.0)), f64x2.ge(uh, f64x2.splat(0.0)));
      return f32x4.div(v128.bitselect(one, e, pos), d);
    }
    return f32x4.div(f32x4.mul(g32, e), f32x4.mul(d, d));
  } else if (code == 10 || code == 11) {
    const e = expNeg32(f32x4.neg(f32x4.abs(x)));
    const d = f32x4.add(one, e);
    if (code == 10) return f32x4.div(v128.bitselect(one, e, f32x4.ge(x, zero)), d);
    return f32x4.div(e, f32x4.mul(d, d));
  } else if (code == 2) {
    const m = expm1Neg32(f32x4.mul(f32x4.splat(-2.0), f32x4.abs(x)));
    const y = f32x4.div(f32x4.neg(m), f32x4.add(f32x4.splat(2.0), m));
    return v128.bitselect(x, y, f32x4.splat(-0.0));
  } else if (code == 3) {
    const e = expNeg32(f32x4.mul(f32x4.splat(-2.0), f32x4.abs(x)));
    const d = f32x4.add(one, e);
    return f32x4.div(f32x4.mul(f32x4.splat(4.0), e), f32x4.mul(d, d));
  } else if (code == 4) {
    return v128.bitselect(zero, x, f32x4.lt(x, zero));
  } else if (code == 5) {
    return v128.bitselect(one, v128.bitselect(zero, nan, f32x4.lt(x, zero)), f32x4.ge(x, zero));
  } else if (code == 6) {
    return v128.bitselect(zero, v128.bitselect(one, x, f32x4.gt(x, one)), f32x4.lt(x, zero));
  } else if (code == 7) {
    const inside = v128.and(f32x4.ge(x, zero), f32x4.le(x, one));
    return v128.bitselect(one, v128.bitselect(nan, zero, f32x4.ne(x, x)), inside);
  } else if (code == 8) {
    return x;
  } else {
    return v128.bitselect(one, nan, f32x4.eq(x, x));
  }
}

// @ts-ignore: decorator
@inline
function run32(code: i32, out: usize, x: usize, n: i32, gain: f64, offset: f64): void {
  const g = f64x2.splat(gain);
  const o = f64x2.splat(offset);
  const g32 = f32x4.splat(<f32>gain);
  const ve = <usize>(n - n % 4) * 4;
  let p: usize = 0;
  for (; p < ve; p += VBYTES) v128.store(out + p, apply32(code, v128.load(x + p), g, o, g32));
  const rem = n % 4;
  if (rem != 0) {
    // the last 1-3 elements: loaded and stored lane by lane (never past the end)
    let v = f32x4.splat(load<f32>(x + p));
    if (rem > 1) v = f32x4.replace_lane(v, 1, load<f32>(x + p + 4));
    if (rem > 2) v = f32x4.replace_lane(v, 2, load<f32>(x + p + 8));
    v = apply32(code, v, g, o, g32);
    store<f32>(out + p, f32x4.extract_lane(v, 0));
    if (rem > 1) store<f32>(out + p + 4, f32x4.extract_lane(v, 1));
    if (rem > 2) store<f32>(out + p + 8, f32x4.extract_lane(v, 2));
  }
}

/** The unit kernel `code` on f32 arrays (byte offsets; out may equal x). */
export function unitFill32(code: i32, gain: f64, offset: f64, out: usize, x: usize, n: i32): void {
  if (n <= 0) return;
  const plain = gain == 1.0 && offset == 0.0;
  switch (code) {
    case 0: if (plain) run32(10, out, x, n, gain, offset); else run32(0, out, x, n, gain, offset); break;
    case 1: if (plain) run32(11, out, x, n, gain, offset); else run32(1, out, x, n, gain, offset); break;
    case 2: run32(2, out, x, n, gain, offset); break;
    case 3: run32(3, out, x, n, gain, offset); break;
    case 4: run32(4, out, x, n, gain, offset); break;
    case 5: run32(5, out, x, n, gain, offset); break;
    case 6: run32(6, out, x, n, gain, offset); break;
    case 7: run32(7, out, x, n, gain, offset); break;
    case 8: if (out != x) memory.copy(out, x, <usize>n * 4); break;
    default: run32(9, out, x, n, gain, offset); break;
  }
}
