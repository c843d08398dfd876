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

import { VBYTES, hi, join, lo, vmadd } from "./simd";

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


// ---- constant table ----

/**
 * Address of the table of vector constants (16 bytes each), written once by
 * {@link writeConstantTable}; the host keeps [TABLE, TABLE +
 * constantTableBytes()) for it. The kernels load their constants from it:
 * V8 rebuilds a v128.const (or a splat made before a loop) at every use
 * inside a loop, several instructions each, while a load from a fixed
 * address is one instruction. The optimiser cannot fold loads back into
 * constants.
 */
const TABLE: usize = 64;

/** Where the host must reserve the constant table. */
export function constantTableAddress(): i32 {
  return <i32>TABLE;
}

/** Slots of the sign and magnitude masks (V8 rebuilds the masks of abs and neg at every use). */
export const SIGN32: i32 = 48;
export const SIGN64: i32 = 49;
export const ABS32: i32 = 50;
export const ABS64: i32 = 51;

/** Constant number i of the table. */
// @ts-ignore: decorator
@inline
export function K(i: i32): v128 {
  return v128.load(TABLE + (<usize>i << 4));
}

/** Bytes of the constant table (52 vectors). */
export function constantTableBytes(): i32 {
  return 52 * 16;
}

/** Writes the constant table at TABLE (call once per memory, before any kernel). */
export function writeConstantTable(): void {
  const at = TABLE;
  v128.store(at + 0, f64x2.splat(-1022.0));
  v128.store(at + 16, f64x2.splat(MAGIC64 + 1023.0));
  v128.store(at + 32, f64x2.splat(LO64));
  v128.store(at + 48, f64x2.splat(LOG2E64));
  v128.store(at + 64, f64x2.splat(MAGIC64));
  v128.store(at + 80, f64x2.splat(LN2HI64));
  v128.store(at + 96, f64x2.splat(LN2LO64));
  v128.store(at + 112, f64x2.splat(1.0));
  v128.store(at + 128, f64x2.splat(1.6059043836821613e-10));
  v128.store(at + 144, f64x2.splat(2.08767569878681e-9));
  v128.store(at + 160, f64x2.splat(2.505210838544172e-8));
  v128.store(at + 176, f64x2.splat(2.755731922398589e-7));
  v128.store(at + 192, f64x2.splat(2.7557319223985893e-6));
  v128.store(at + 208, f64x2.splat(2.48015873015873e-5));
  v128.store(at + 224, f64x2.splat(1.984126984126984e-4));
  v128.store(at + 240, f64x2.splat(1.388888888888889e-3));
  v128.store(at + 256, f64x2.splat(8.333333333333333e-3));
  v128.store(at + 272, f64x2.splat(4.1666666666666664e-2));
  v128.store(at + 288, f64x2.splat(1.6666666666666666e-1));
  v128.store(at + 304, f64x2.splat(0.5));
  v128.store(at + 320, f64x2.splat(TANH_LO64));
  v128.store(at + 336, f64x2.splat(0.0));
  v128.store(at + 352, f64x2.splat(NaN));
  v128.store(at + 368, f64x2.splat(2.0));
  v128.store(at + 384, f64x2.splat(-0.0));
  v128.store(at + 400, f64x2.splat(4.0));
  v128.store(at + 416, f32x4.splat(P0));
  v128.store(at + 432, f32x4.splat(P1));
  v128.store(at + 448, f32x4.splat(P2));
  v128.store(at + 464, f32x4.splat(P3));
  v128.store(at + 480, f32x4.splat(P4));
  v128.store(at + 496, f32x4.splat(P5));
  v128.store(at + 512, i32x4.splat(127));
  v128.store(at + 528, f32x4.splat(LO32));
  v128.store(at + 544, f32x4.splat(LOG2E32));
  v128.store(at + 560, f32x4.splat(MAGIC32));
  v128.store(at + 576, f32x4.splat(C1_32));
  v128.store(at + 592, f32x4.splat(C2_32));
  v128.store(at + 608, f32x4.splat(1.0));
  v128.store(at + 624, i32x4.splat(MAGIC32_BITS));
  v128.store(at + 640, f64x2.splat(<f64>LO32));
  v128.store(at + 656, f64x2.splat(LN2_64));
  v128.store(at + 672, f32x4.splat(TANH_LO32));
  v128.store(at + 688, f32x4.splat(0.0));
  v128.store(at + 704, f32x4.splat(NaN));
  v128.store(at + 720, f32x4.splat(2.0));
  v128.store(at + 736, f32x4.splat(-0.0));
  v128.store(at + 752, f32x4.splat(4.0));
  v128.store(at + 768, i32x4.splat(0x80000000)); // 48: f32 sign bits
  v128.store(at + 784, i64x2.splat(0x8000000000000000)); // 49: f64 sign bits
  v128.store(at + 800, i32x4.splat(0x7fffffff)); // 50: f32 magnitude bits
  v128.store(at + 816, i64x2.splat(0x7fffffffffffffff)); // 51: f64 magnitude bits
}

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
  const k1 = f64x2.pmax(K(0), kf);
  const k2 = f64x2.sub(kf, k1);
  const bias = K(1);
  const s1 = i64x2.shl(f64x2.add(k1, bias), 52);
  const s2 = i64x2.shl(f64x2.add(k2, bias), 52);
  return f64x2.mul(f64x2.mul(p, s1), s2);
}

/** exp(w) for w <= 0 (or NaN), f64 lanes. */
// @ts-ignore: decorator
@inline
function expNeg64(w0: v128): v128 {
  const w = f64x2.pmax(K(2), w0);
  const t = f64x2.add(f64x2.mul(w, K(3)), K(4));
  const kf = f64x2.sub(t, K(4));
  const r = f64x2.sub(f64x2.sub(w, f64x2.mul(kf, K(5))), f64x2.mul(kf, K(6)));
  const p = taylor64(r, K(7));
  return scale64(p, kf);
}

/** Horner sum of r^j / j! for j = 1..13 plus c0 (1 for exp, 0 for expm1). */
// @ts-ignore: decorator
@inline
function taylor64(r: v128, c0: v128): v128 {
  let q = K(8); // 1/13!
  q = vmadd<f64>(q, r, K(9)); // 1/12!
  q = vmadd<f64>(q, r, K(10)); // 1/11!
  q = vmadd<f64>(q, r, K(11)); // 1/10!
  q = vmadd<f64>(q, r, K(12)); // 1/9!
  q = vmadd<f64>(q, r, K(13)); // 1/8!
  q = vmadd<f64>(q, r, K(14)); // 1/7!
  q = vmadd<f64>(q, r, K(15)); // 1/6!
  q = vmadd<f64>(q, r, K(16)); // 1/5!
  q = vmadd<f64>(q, r, K(17)); // 1/4!
  q = vmadd<f64>(q, r, K(18)); // 1/3!
  q = vmadd<f64>(q, r, K(19));
  // r + r^2 q, then + c0
  const m = vmadd<f64>(f64x2.mul(r, r), q, r);
  return f64x2.add(c0, m);
}

/** expm1(w) for w in [TANH_LO64, 0] (or NaN), f64 lanes: 2^k expm1(r) + (2^k - 1). */
// @ts-ignore: decorator
@inline
function expm1Neg64(w0: v128): v128 {
  const w = f64x2.pmax(K(20), w0);
  const t = f64x2.add(f64x2.mul(w, K(3)), K(4));
  const kf = f64x2.sub(t, K(4));
  const r = f64x2.sub(f64x2.sub(w, f64x2.mul(kf, K(5))), f64x2.mul(kf, K(6)));
  const q = taylor64(r, K(21));
  const s = i64x2.shl(f64x2.add(kf, K(1)), 52);
  return f64x2.add(f64x2.mul(s, q), f64x2.sub(s, K(7)));
}

// @ts-ignore: decorator
@inline
function apply64raw(code: i32, x: v128, g: v128, o: v128): v128 {
  const one = K(7);
  const zero = K(21);
  const nan = K(22);
  if (code == 0 || code == 1) {
    const u = f64x2.mul(g, f64x2.sub(x, o));
    const e = expNeg64(v128.or(u, K(SIGN64))); // -|u|: the sign bit set
    const d = f64x2.add(one, e);
    if (code == 0) return f64x2.div(v128.bitselect(one, e, f64x2.ge(u, zero)), d);
    return f64x2.div(f64x2.mul(g, e), f64x2.mul(d, d));
  } else if (code == 2) {
    const m = expm1Neg64(f64x2.add(v128.or(x, K(SIGN64)), v128.or(x, K(SIGN64)))); // -2|x|, exactly
    const y = f64x2.div(f64x2.neg(m), f64x2.add(K(23), m));
    return v128.bitselect(x, y, K(24)); // sign of x, magnitude of y
  } else if (code == 3) {
    const e = expNeg64(f64x2.add(v128.or(x, K(SIGN64)), v128.or(x, K(SIGN64)))); // -2|x|, exactly
    const d = f64x2.add(one, e);
    return f64x2.div(f64x2.mul(K(25), e), f64x2.mul(d, d));
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

/**
 * apply64raw with NaN passed through: the exp-based forms clamp their argument with pmax (one
 * instruction; the NaN-propagating max is several), which turns a NaN into the clamp bound, so
 * NaN lanes of x are put back here.
 */
// @ts-ignore: decorator
@inline
export function apply64(code: i32, x: v128, g: v128, o: v128): v128 {
  const r = apply64raw(code, x, g, o);
  return code <= 3 ? v128.bitselect(x, r, f64x2.ne(x, x)) : r;
}

// @ts-ignore: decorator
@inline
export function run64(code: i32, out: usize, x: usize, n: i32, gain: f64, offset: f64): void {
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
  let p = K(26);
  p = vmadd<f32>(p, r, K(27));
  p = vmadd<f32>(p, r, K(28));
  p = vmadd<f32>(p, r, K(29));
  p = vmadd<f32>(p, r, K(30));
  p = vmadd<f32>(p, r, K(31));
  return vmadd<f32>(f32x4.mul(r, r), p, r);
}

/** p 2^k, k in [-150, 0] as i32 lanes, in two factors. */
// @ts-ignore: decorator
@inline
function scale32(p: v128, k: v128): v128 {
  const k1 = i32x4.shr_s(k, 1);
  const k2 = i32x4.sub(k, k1);
  const s1 = i32x4.shl(i32x4.add(k1, K(32)), 23);
  const s2 = i32x4.shl(i32x4.add(k2, K(32)), 23);
  return f32x4.mul(f32x4.mul(p, s1), s2);
}

/** exp(w) for w <= 0 (or NaN) given exactly in f32 lanes. */
// @ts-ignore: decorator
@inline
function expNeg32(w0: v128): v128 {
  const w = f32x4.pmax(K(33), w0);
  const t = f32x4.add(f32x4.mul(w, K(34)), K(35));
  const kf = f32x4.sub(t, K(35));
  const r = f32x4.sub(f32x4.sub(w, f32x4.mul(kf, K(36))), f32x4.mul(kf, K(37)));
  return scale32(f32x4.add(K(38), cephes32(r)), i32x4.sub(t, K(39)));
}

/** exp(w) for w <= 0 (or NaN) given in two f64 vectors (the four f32 lanes, low half first). */
// @ts-ignore: decorator
@inline
function expNeg32from64(wl0: v128, wh0: v128): v128 {
  const LO = K(40);
  const wl = f64x2.pmax(LO, wl0);
  const wh = f64x2.pmax(LO, wh0);
  const tl = f64x2.add(f64x2.mul(wl, K(3)), K(4));
  const th = f64x2.add(f64x2.mul(wh, K(3)), K(4));
  const rl = f64x2.sub(wl, f64x2.mul(f64x2.sub(tl, K(4)), K(41)));
  const rh = f64x2.sub(wh, f64x2.mul(f64x2.sub(th, K(4)), K(41)));
  const r = join(rl, rh);
  // the low 32 bits of t are k (two's complement): the low word of MAGIC64 is 0
  return scale32(f32x4.add(K(38), cephes32(r)), low32(tl, th));
}

/** expm1(w) for w in [TANH_LO32, 0] (or NaN), f32 lanes. */
// @ts-ignore: decorator
@inline
function expm1Neg32(w0: v128): v128 {
  const w = f32x4.pmax(K(42), w0);
  const t = f32x4.add(f32x4.mul(w, K(34)), K(35));
  const kf = f32x4.sub(t, K(35));
  const r = f32x4.sub(f32x4.sub(w, f32x4.mul(kf, K(36))), f32x4.mul(kf, K(37)));
  const q = cephes32(r);
  const s = i32x4.shl(i32x4.add(i32x4.sub(t, K(39)), K(32)), 23);
  return f32x4.add(f32x4.mul(s, q), f32x4.sub(s, K(38)));
}

/** Codes as for f64, plus 10 / 11: logistic / slope with g = 1, o = 0 (argument exact in f32). */
// @ts-ignore: decorator
@inline
function apply32raw(code: i32, x: v128, g: v128, o: v128, g32: v128): v128 {
  const one = K(38);
  const zero = K(43);
  const nan = K(44);
  if (code == 0 || code == 1) {
    const ul = f64x2.mul(g, f64x2.sub(lo(x), o));
    const uh = f64x2.mul(g, f64x2.sub(hi(x), o));
    const e = expNeg32from64(v128.or(ul, K(SIGN64)), v128.or(uh, K(SIGN64)));
    const d = f32x4.add(one, e);
    if (code == 0) {
      const pos = low32(f64x2.ge(ul, K(21)), f64x2.ge(uh, K(21)));
      return f32x4.div(v128.bitselect(one, e, pos), d);
    }
    return f32x4.div(f32x4.mul(g32, e), f32x4.mul(d, d));
  } else if (code == 10 || code == 11) {
    const e = expNeg32(v128.or(x, K(SIGN32))); // -|x|: the sign bit set
    const d = f32x4.add(one, e);
    if (code == 10) return f32x4.div(v128.bitselect(one, e, f32x4.ge(x, zero)), d);
    return f32x4.div(e, f32x4.mul(d, d));
  } else if (code == 2) {
    const m = expm1Neg32(f32x4.add(v128.or(x, K(SIGN32)), v128.or(x, K(SIGN32)))); // -2|x|, exactly
    const y = f32x4.div(f32x4.neg(m), f32x4.add(K(45), m));
    return v128.bitselect(x, y, K(46));
  } else if (code == 3) {
    const e = expNeg32(f32x4.add(v128.or(x, K(SIGN32)), v128.or(x, K(SIGN32)))); // -2|x|, exactly
    const d = f32x4.add(one, e);
    return f32x4.div(f32x4.mul(K(47), e), f32x4.mul(d, d));
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

/** apply32raw with NaN lanes of x passed through (see apply64). */
// @ts-ignore: decorator
@inline
export function apply32(code: i32, x: v128, g: v128, o: v128, g32: v128): v128 {
  const r = apply32raw(code, x, g, o, g32);
  return code <= 3 || code >= 10 ? v128.bitselect(x, r, f32x4.ne(x, x)) : r;
}

// @ts-ignore: decorator
@inline
export function run32(code: i32, out: usize, x: usize, n: i32, gain: f64, offset: f64): void {
  const g = f64x2.splat(gain);
  const o = f64x2.splat(offset);
  const g32 = f32x4.splat(<f32>gain);
  const ve = <usize>(n - n % 4) * 4;
  const ve4 = <usize>(n - n % 16) * 4;
  let p: usize = 0;
  // four vectors per iteration: their (long) dependency chains overlap and share the constant loads
  for (; p < ve4; p += 4 * VBYTES) {
    const a = apply32(code, v128.load(x + p), g, o, g32);
    const b = apply32(code, v128.load(x + p, VBYTES), g, o, g32);
    const c = apply32(code, v128.load(x + p, 2 * VBYTES), g, o, g32);
    const d = apply32(code, v128.load(x + p, 3 * VBYTES), g, o, g32);
    v128.store(out + p, a);
    v128.store(out + p, b, VBYTES);
    v128.store(out + p, c, 2 * VBYTES);
    v128.store(out + p, d, 3 * VBYTES);
  }
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

/** Codes 10 and 11 as functions of their own, so that the optimiser does not merge the plain and the
 * general logistic into one loop with the code chosen at run time. */
function logisticPlain32(out: usize, x: usize, n: i32): void {
  run32(10, out, x, n, 1.0, 0.0);
}
function logisticSlopePlain32(out: usize, x: usize, n: i32): void {
  run32(11, out, x, n, 1.0, 0.0);
}

/** The unit kernel `code` on f32 arrays (byte offsets; out may equal x). */
export function unitFill32(code: i32, gain: f64, offset: f64, out: usize, x: usize, n: i32): void {
  if (n <= 0) return;
  const plain = gain == 1.0 && offset == 0.0;
  switch (code) {
    case 0: if (plain) logisticPlain32(out, x, n); else run32(0, out, x, n, gain, offset); break;
    case 1: if (plain) logisticSlopePlain32(out, x, n); else run32(1, out, x, n, gain, offset); break;
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
