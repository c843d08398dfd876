// Unit (activation) functions and their slopes on flat arrays, in SIMD lanes:
// out[i] = f(x[i]) or f'(x[i]) for the logistic (gain g, offset o), tanh,
// rectified linear, hard sigmoid and linear units of src/units/.
//
// Codes (kind * 2 + slope, the kinds in the order of assembly/layout.mjs):
// UNIT_LOGISTIC, UNIT_LOGISTIC_SLOPE, UNIT_TANH, ... UNIT_LINEAR_SLOPE.
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
import {
  CONSTANT_SLOTS, F32_EXP_LO, F32_EXP_P0, F32_EXP_P1, F32_EXP_P2, F32_EXP_P3, F32_EXP_P4, F32_EXP_P5, F32_FOUR, F32_LN2_HI, F32_LN2_LO,
  F32_LOG2E, F32_MAGIC, F32_NAN, F32_NEG_ZERO, F32_ONE, F32_TANH_LO, F32_TWO, F32_ZERO, F64_EXP_LO, F64_F32_EXP_LO, F64_FOUR, F64_HALF,
  F64_INV_FACT_10, F64_INV_FACT_11, F64_INV_FACT_12, F64_INV_FACT_13, F64_INV_FACT_3, F64_INV_FACT_4, F64_INV_FACT_5, F64_INV_FACT_6,
  F64_INV_FACT_7, F64_INV_FACT_8, F64_INV_FACT_9, F64_KMIN, F64_LN2, F64_LN2_HI, F64_LN2_LO, F64_LOG2E, F64_MAGIC, F64_MAGIC_BIAS, F64_NAN,
  F64_NEG_ZERO, F64_ONE, F64_TANH_LO, F64_TWO, F64_ZERO, I32_F32_BIAS, I32_F32_MAGIC_BITS, SIGN32, SIGN64,
  UNIT_HARD_SIGMOID, UNIT_HARD_SIGMOID_SLOPE, UNIT_LINEAR, UNIT_LINEAR_SLOPE, UNIT_LOGISTIC, UNIT_LOGISTIC_SLOPE, UNIT_RELU, UNIT_RELU_SLOPE,
  UNIT_TANH, UNIT_TANH_SLOPE, UNIT_CODES_END, writeConstants,
} from "./generated/layout";

// The constants the kernels read (exp's range reduction and polynomials, bounds, masks) are the
// slots of the constant table, declared with their values and sources in assembly/layout.mjs.

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

/** Constant number i of the table. */
// @ts-ignore: decorator
@inline
export function K(i: i32): v128 {
  return v128.load(TABLE + (<usize>i << 4));
}

/** Bytes of the constant table. */
export function constantTableBytes(): i32 {
  return CONSTANT_SLOTS * 16;
}

/** Writes the constant table at TABLE (call once per memory, before any kernel). */
export function writeConstantTable(): void {
  writeConstants(TABLE);
}

/** Codes of the f32 logistic with gain 1 and offset 0 (its argument is exact in f32): internal to these kernels. */
export const LOGISTIC_PLAIN: i32 = UNIT_CODES_END;
export const LOGISTIC_PLAIN_SLOPE: i32 = UNIT_CODES_END + 1;

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
  const k1 = f64x2.pmax(K(F64_KMIN), kf);
  const k2 = f64x2.sub(kf, k1);
  const bias = K(F64_MAGIC_BIAS);
  const s1 = i64x2.shl(f64x2.add(k1, bias), 52);
  const s2 = i64x2.shl(f64x2.add(k2, bias), 52);
  return f64x2.mul(f64x2.mul(p, s1), s2);
}

/** exp(w) for w <= 0 (or NaN), f64 lanes. */
// @ts-ignore: decorator
@inline
function expNeg64(w0: v128): v128 {
  const w = f64x2.pmax(K(F64_EXP_LO), w0);
  const t = f64x2.add(f64x2.mul(w, K(F64_LOG2E)), K(F64_MAGIC));
  const kf = f64x2.sub(t, K(F64_MAGIC));
  const r = f64x2.sub(f64x2.sub(w, f64x2.mul(kf, K(F64_LN2_HI))), f64x2.mul(kf, K(F64_LN2_LO)));
  const p = taylor64(r, K(F64_ONE));
  return scale64(p, kf);
}

/** Horner sum of r^j / j! for j = 1..13 plus c0 (1 for exp, 0 for expm1). */
// @ts-ignore: decorator
@inline
function taylor64(r: v128, c0: v128): v128 {
  let q = K(F64_INV_FACT_13); // 1/13!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_12)); // 1/12!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_11)); // 1/11!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_10)); // 1/10!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_9)); // 1/9!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_8)); // 1/8!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_7)); // 1/7!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_6)); // 1/6!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_5)); // 1/5!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_4)); // 1/4!
  q = vmadd<f64>(q, r, K(F64_INV_FACT_3)); // 1/3!
  q = vmadd<f64>(q, r, K(F64_HALF));
  // r + r^2 q, then + c0
  const m = vmadd<f64>(f64x2.mul(r, r), q, r);
  return f64x2.add(c0, m);
}

/** expm1(w) for w in [TANH_LO64, 0] (or NaN), f64 lanes: 2^k expm1(r) + (2^k - 1). */
// @ts-ignore: decorator
@inline
function expm1Neg64(w0: v128): v128 {
  const w = f64x2.pmax(K(F64_TANH_LO), w0);
  const t = f64x2.add(f64x2.mul(w, K(F64_LOG2E)), K(F64_MAGIC));
  const kf = f64x2.sub(t, K(F64_MAGIC));
  const r = f64x2.sub(f64x2.sub(w, f64x2.mul(kf, K(F64_LN2_HI))), f64x2.mul(kf, K(F64_LN2_LO)));
  const q = taylor64(r, K(F64_ZERO));
  const s = i64x2.shl(f64x2.add(kf, K(F64_MAGIC_BIAS)), 52);
  return f64x2.add(f64x2.mul(s, q), f64x2.sub(s, K(F64_ONE)));
}

// @ts-ignore: decorator
@inline
function apply64raw(code: i32, x: v128, g: v128, o: v128): v128 {
  const one = K(F64_ONE);
  const zero = K(F64_ZERO);
  const nan = K(F64_NAN);
  if (code == UNIT_LOGISTIC || code == UNIT_LOGISTIC_SLOPE) {
    const u = f64x2.mul(g, f64x2.sub(x, o));
    const e = expNeg64(v128.or(u, K(SIGN64))); // -|u|: the sign bit set
    const d = f64x2.add(one, e);
    if (code == UNIT_LOGISTIC) return f64x2.div(v128.bitselect(one, e, f64x2.ge(u, zero)), d);
    return f64x2.div(f64x2.mul(g, e), f64x2.mul(d, d));
  } else if (code == UNIT_TANH) {
    const m = expm1Neg64(f64x2.add(v128.or(x, K(SIGN64)), v128.or(x, K(SIGN64)))); // -2|x|, exactly
    const y = f64x2.div(f64x2.neg(m), f64x2.add(K(F64_TWO), m));
    return v128.bitselect(x, y, K(F64_NEG_ZERO)); // sign of x, magnitude of y
  } else if (code == UNIT_TANH_SLOPE) {
    const e = expNeg64(f64x2.add(v128.or(x, K(SIGN64)), v128.or(x, K(SIGN64)))); // -2|x|, exactly
    const d = f64x2.add(one, e);
    return f64x2.div(f64x2.mul(K(F64_FOUR), e), f64x2.mul(d, d));
  } else if (code == UNIT_RELU) {
    // pmax(x, 0) = x < 0 ? 0 : x (-0 and NaN kept), one instruction where bitselect takes several
    return f64x2.pmax(x, zero);
  } else if (code == UNIT_RELU_SLOPE) {
    // 1 where x >= 0, NaN where x is NaN, else +0 (all bits clear): masks and ors, no bitselect
    return v128.or(v128.and(f64x2.ge(x, zero), one), v128.and(f64x2.ne(x, x), nan));
  } else if (code == UNIT_HARD_SIGMOID) {
    // pmin(pmax(x, 0), 1): x < 0 gives 0, x > 1 gives 1, anything else (-0, NaN) is x
    return f64x2.pmin(f64x2.pmax(x, zero), one);
  } else if (code == UNIT_HARD_SIGMOID_SLOPE) {
    const inside = v128.and(f64x2.ge(x, zero), f64x2.le(x, one));
    return v128.or(v128.and(inside, one), v128.and(f64x2.ne(x, x), nan));
  } else if (code == UNIT_LINEAR) {
    return x;
  } else {
    const num = f64x2.eq(x, x);
    return v128.or(v128.and(num, one), v128.andnot(nan, num));
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
  return code <= UNIT_TANH_SLOPE ? v128.bitselect(x, r, f64x2.ne(x, x)) : r;
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
    case UNIT_LOGISTIC: run64(UNIT_LOGISTIC, out, x, n, gain, offset); break;
    case UNIT_LOGISTIC_SLOPE: run64(UNIT_LOGISTIC_SLOPE, out, x, n, gain, offset); break;
    case UNIT_TANH: run64(UNIT_TANH, out, x, n, gain, offset); break;
    case UNIT_TANH_SLOPE: run64(UNIT_TANH_SLOPE, out, x, n, gain, offset); break;
    case UNIT_RELU: run64(UNIT_RELU, out, x, n, gain, offset); break;
    case UNIT_RELU_SLOPE: run64(UNIT_RELU_SLOPE, out, x, n, gain, offset); break;
    case UNIT_HARD_SIGMOID: run64(UNIT_HARD_SIGMOID, out, x, n, gain, offset); break;
    case UNIT_HARD_SIGMOID_SLOPE: run64(UNIT_HARD_SIGMOID_SLOPE, out, x, n, gain, offset); break;
    case UNIT_LINEAR: if (out != x) memory.copy(out, x, <usize>n * 8); break;
    default: run64(UNIT_LINEAR_SLOPE, out, x, n, gain, offset); break;
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
  let p = K(F32_EXP_P0);
  p = vmadd<f32>(p, r, K(F32_EXP_P1));
  p = vmadd<f32>(p, r, K(F32_EXP_P2));
  p = vmadd<f32>(p, r, K(F32_EXP_P3));
  p = vmadd<f32>(p, r, K(F32_EXP_P4));
  p = vmadd<f32>(p, r, K(F32_EXP_P5));
  return vmadd<f32>(f32x4.mul(r, r), p, r);
}

/** p 2^k, k in [-150, 0] as i32 lanes, in two factors. */
// @ts-ignore: decorator
@inline
function scale32(p: v128, k: v128): v128 {
  const k1 = i32x4.shr_s(k, 1);
  const k2 = i32x4.sub(k, k1);
  const s1 = i32x4.shl(i32x4.add(k1, K(I32_F32_BIAS)), 23);
  const s2 = i32x4.shl(i32x4.add(k2, K(I32_F32_BIAS)), 23);
  return f32x4.mul(f32x4.mul(p, s1), s2);
}

/** exp(w) for w <= 0 (or NaN) given exactly in f32 lanes. */
// @ts-ignore: decorator
@inline
function expNeg32(w0: v128): v128 {
  const w = f32x4.pmax(K(F32_EXP_LO), w0);
  const t = f32x4.add(f32x4.mul(w, K(F32_LOG2E)), K(F32_MAGIC));
  const kf = f32x4.sub(t, K(F32_MAGIC));
  const r = f32x4.sub(f32x4.sub(w, f32x4.mul(kf, K(F32_LN2_HI))), f32x4.mul(kf, K(F32_LN2_LO)));
  return scale32(f32x4.add(K(F32_ONE), cephes32(r)), i32x4.sub(t, K(I32_F32_MAGIC_BITS)));
}

/** exp(w) for w <= 0 (or NaN) given in two f64 vectors (the four f32 lanes, low half first). */
// @ts-ignore: decorator
@inline
function expNeg32from64(wl0: v128, wh0: v128): v128 {
  const LO = K(F64_F32_EXP_LO);
  const wl = f64x2.pmax(LO, wl0);
  const wh = f64x2.pmax(LO, wh0);
  const tl = f64x2.add(f64x2.mul(wl, K(F64_LOG2E)), K(F64_MAGIC));
  const th = f64x2.add(f64x2.mul(wh, K(F64_LOG2E)), K(F64_MAGIC));
  const rl = f64x2.sub(wl, f64x2.mul(f64x2.sub(tl, K(F64_MAGIC)), K(F64_LN2)));
  const rh = f64x2.sub(wh, f64x2.mul(f64x2.sub(th, K(F64_MAGIC)), K(F64_LN2)));
  const r = join(rl, rh);
  // the low 32 bits of t are k (two's complement): the low word of MAGIC64 is 0
  return scale32(f32x4.add(K(F32_ONE), cephes32(r)), low32(tl, th));
}

/** expm1(w) for w in [TANH_LO32, 0] (or NaN), f32 lanes. */
// @ts-ignore: decorator
@inline
function expm1Neg32(w0: v128): v128 {
  const w = f32x4.pmax(K(F32_TANH_LO), w0);
  const t = f32x4.add(f32x4.mul(w, K(F32_LOG2E)), K(F32_MAGIC));
  const kf = f32x4.sub(t, K(F32_MAGIC));
  const r = f32x4.sub(f32x4.sub(w, f32x4.mul(kf, K(F32_LN2_HI))), f32x4.mul(kf, K(F32_LN2_LO)));
  const q = cephes32(r);
  const s = i32x4.shl(i32x4.add(i32x4.sub(t, K(I32_F32_MAGIC_BITS)), K(I32_F32_BIAS)), 23);
  return f32x4.add(f32x4.mul(s, q), f32x4.sub(s, K(F32_ONE)));
}

/** Codes as for f64, plus LOGISTIC_PLAIN(_SLOPE): logistic / slope with g = 1, o = 0 (argument exact in f32). */
// @ts-ignore: decorator
@inline
function apply32raw(code: i32, x: v128, g: v128, o: v128, g32: v128): v128 {
  const one = K(F32_ONE);
  const zero = K(F32_ZERO);
  const nan = K(F32_NAN);
  if (code == UNIT_LOGISTIC || code == UNIT_LOGISTIC_SLOPE) {
    const ul = f64x2.mul(g, f64x2.sub(lo(x), o));
    const uh = f64x2.mul(g, f64x2.sub(hi(x), o));
    const e = expNeg32from64(v128.or(ul, K(SIGN64)), v128.or(uh, K(SIGN64)));
    const d = f32x4.add(one, e);
    if (code == UNIT_LOGISTIC) {
      const pos = low32(f64x2.ge(ul, K(F64_ZERO)), f64x2.ge(uh, K(F64_ZERO)));
      return f32x4.div(v128.bitselect(one, e, pos), d);
    }
    return f32x4.div(f32x4.mul(g32, e), f32x4.mul(d, d));
  } else if (code == LOGISTIC_PLAIN || code == LOGISTIC_PLAIN_SLOPE) {
    const e = expNeg32(v128.or(x, K(SIGN32))); // -|x|: the sign bit set
    const d = f32x4.add(one, e);
    if (code == LOGISTIC_PLAIN) return f32x4.div(v128.bitselect(one, e, f32x4.ge(x, zero)), d);
    return f32x4.div(e, f32x4.mul(d, d));
  } else if (code == UNIT_TANH) {
    const m = expm1Neg32(f32x4.add(v128.or(x, K(SIGN32)), v128.or(x, K(SIGN32)))); // -2|x|, exactly
    const y = f32x4.div(f32x4.neg(m), f32x4.add(K(F32_TWO), m));
    return v128.bitselect(x, y, K(F32_NEG_ZERO));
  } else if (code == UNIT_TANH_SLOPE) {
    const e = expNeg32(f32x4.add(v128.or(x, K(SIGN32)), v128.or(x, K(SIGN32)))); // -2|x|, exactly
    const d = f32x4.add(one, e);
    return f32x4.div(f32x4.mul(K(F32_FOUR), e), f32x4.mul(d, d));
  } else if (code == UNIT_RELU) {
    // as in f64 lanes: pmax, pmin and masks instead of bitselect, the same lanes
    return f32x4.pmax(x, zero);
  } else if (code == UNIT_RELU_SLOPE) {
    return v128.or(v128.and(f32x4.ge(x, zero), one), v128.and(f32x4.ne(x, x), nan));
  } else if (code == UNIT_HARD_SIGMOID) {
    return f32x4.pmin(f32x4.pmax(x, zero), one);
  } else if (code == UNIT_HARD_SIGMOID_SLOPE) {
    const inside = v128.and(f32x4.ge(x, zero), f32x4.le(x, one));
    return v128.or(v128.and(inside, one), v128.and(f32x4.ne(x, x), nan));
  } else if (code == UNIT_LINEAR) {
    return x;
  } else {
    const num = f32x4.eq(x, x);
    return v128.or(v128.and(num, one), v128.andnot(nan, num));
  }
}

/** apply32raw with NaN lanes of x passed through (see apply64). */
// @ts-ignore: decorator
@inline
export function apply32(code: i32, x: v128, g: v128, o: v128, g32: v128): v128 {
  const r = apply32raw(code, x, g, o, g32);
  return code <= UNIT_TANH_SLOPE || code >= LOGISTIC_PLAIN ? v128.bitselect(x, r, f32x4.ne(x, x)) : r;
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

/** The plain logistic codes as functions of their own, so that the optimiser does not merge the plain and the
 * general logistic into one loop with the code chosen at run time. */
function logisticPlain32(out: usize, x: usize, n: i32): void {
  run32(LOGISTIC_PLAIN, out, x, n, 1.0, 0.0);
}
function logisticSlopePlain32(out: usize, x: usize, n: i32): void {
  run32(LOGISTIC_PLAIN_SLOPE, out, x, n, 1.0, 0.0);
}

/** The unit kernel `code` on f32 arrays (byte offsets; out may equal x). */
export function unitFill32(code: i32, gain: f64, offset: f64, out: usize, x: usize, n: i32): void {
  if (n <= 0) return;
  const plain = gain == 1.0 && offset == 0.0;
  switch (code) {
    case UNIT_LOGISTIC: if (plain) logisticPlain32(out, x, n); else run32(UNIT_LOGISTIC, out, x, n, gain, offset); break;
    case UNIT_LOGISTIC_SLOPE: if (plain) logisticSlopePlain32(out, x, n); else run32(UNIT_LOGISTIC_SLOPE, out, x, n, gain, offset); break;
    case UNIT_TANH: run32(UNIT_TANH, out, x, n, gain, offset); break;
    case UNIT_TANH_SLOPE: run32(UNIT_TANH_SLOPE, out, x, n, gain, offset); break;
    case UNIT_RELU: run32(UNIT_RELU, out, x, n, gain, offset); break;
    case UNIT_RELU_SLOPE: run32(UNIT_RELU_SLOPE, out, x, n, gain, offset); break;
    case UNIT_HARD_SIGMOID: run32(UNIT_HARD_SIGMOID, out, x, n, gain, offset); break;
    case UNIT_HARD_SIGMOID_SLOPE: run32(UNIT_HARD_SIGMOID_SLOPE, out, x, n, gain, offset); break;
    case UNIT_LINEAR: if (out != x) memory.copy(out, x, <usize>n * 4); break;
    default: run32(UNIT_LINEAR_SLOPE, out, x, n, gain, offset); break;
  }
}
