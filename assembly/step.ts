// One settling step of rate dynamics for one layer, fused into a single pass:
//
//   eta  <- eta + beta t - beta x          (only in a nudged phase; t != 0)
//   next <- x + dt (f(eta) - x)            (written over eta)
//
// and, in the same pass, the largest |next| (the divergence test) and the
// largest |next - x| (the stop rule). x is the layer's state, `nx` holds the
// net input on entry and the new state on return.
//
// Exactness: the result is, bit for bit, what the separate kernels give when
// called in the order the settler used before this kernel existed: axpy
// (eta + beta t), axpy (- beta x), the unit fill, sub (f - x), axpby
// (1 x + dt d), maxAbs, maxAbsDiff. Each intermediate is rounded to the
// storage type where those kernels round it (f64 lanes for the scaled sums,
// as in vector.ts), and the unit function is the same inline code as
// unitFill (units.ts).
//
// Magnitudes are taken by masking the sign bit with a mask from the constant table (units.ts).
//
// Returns the largest |next - x| (computed in f64), or -1 when some |next|
// exceeds `bound` or some value is NaN (the host then reports the layer with
// the separate kernels).

import { VBYTES, hi, join, lo } from "./simd";
import { ABS32, ABS64, UNIT_HARD_SIGMOID, UNIT_LINEAR, UNIT_LOGISTIC, UNIT_RELU, UNIT_TANH } from "./generated/layout";
import { K, LOGISTIC_PLAIN, LOGISTIC_PLAIN_SLOPE, apply32, apply64, run32, run64 } from "./units";

// @ts-ignore: decorator
@inline
function nudge32(v: v128, tv: v128, xv: v128, vb: v128, vnb: v128): v128 {
  const a = join(f64x2.add(f64x2.mul(vb, lo(tv)), lo(v)), f64x2.add(f64x2.mul(vb, hi(tv)), hi(v)));
  return join(f64x2.add(f64x2.mul(vnb, lo(xv)), lo(a)), f64x2.add(f64x2.mul(vnb, hi(xv)), hi(a)));
}

/** Elements per block: each block is nudged, passed through the unit and updated while it sits in L1. */
const BLOCK: i32 = 512;

// @ts-ignore: decorator
@inline
function step32(code: i32, gain: f64, offset: f64, x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  const vb = f64x2.splat(beta);
  const vnb = f64x2.splat(-beta);
  const vdt = f64x2.splat(dt);
  const one = f64x2.splat(1.0);
  let mag = i32x4.splat(0);
  let d0 = f64x2.splat(0);
  let d1 = d0;
  let nan = d0;
  // three short passes per block rather than one long loop body: the unit function's dependency
  // chain is long, and a loop holding it together with the update keeps too few iterations in flight
  for (let start = 0; start < n; start += BLOCK) {
    const m = min(BLOCK, n - start);
    const off = <usize>start * 4;
    const ve = <usize>(m - m % 4) * 4;
    const bx = x + off;
    const bn = nx + off;
    let p: usize = 0;
    if (t != 0) {
      const bt = t + off;
      for (; p < ve; p += VBYTES) v128.store(bn + p, nudge32(v128.load(bn + p), v128.load(bt + p), v128.load(bx + p), vb, vnb));
      for (; p < <usize>m * 4; p += 4) {
        const a = <f32>(beta * <f64>load<f32>(bt + p) + <f64>load<f32>(bn + p));
        store<f32>(bn + p, <f32>(-beta * <f64>load<f32>(bx + p) + <f64>a));
      }
    }
    run32(code, bn, bn, m, gain, offset);
    // x + dt d in f64 lanes two values at a time, rounded and stored two values at a time
    // (store64_lane): no two-vector shuffle, which V8 lowers to several instructions
    for (p = 0; p < ve; p += VBYTES) {
      const xa = v128.load(bx + p);
      const d = f32x4.sub(v128.load(bn + p), xa);
      const xl = lo(xa);
      const xh = hi(xa);
      const rl = f32x4.demote_f64x2_zero(f64x2.add(f64x2.mul(one, xl), f64x2.mul(vdt, lo(d))));
      const rh = f32x4.demote_f64x2_zero(f64x2.add(f64x2.mul(one, xh), f64x2.mul(vdt, hi(d))));
      v128.store64_lane(bn + p, rl, 0);
      v128.store64_lane(bn + p, rh, 0, 8);
      mag = i32x4.max_u(mag, i32x4.max_u(v128.and(rl, K(ABS32)), v128.and(rh, K(ABS32))));
      const e0 = v128.and(f64x2.sub(f64x2.promote_low_f32x4(rl), xl), K(ABS64));
      const e1 = v128.and(f64x2.sub(f64x2.promote_low_f32x4(rh), xh), K(ABS64));
      d0 = f64x2.pmax(d0, e0);
      d1 = f64x2.pmax(d1, e1);
      nan = v128.or(nan, v128.or(f64x2.ne(e0, e0), f64x2.ne(e1, e1)));
    }
    for (; p < <usize>m * 4; p += 4) {
      const xs = load<f32>(bx + p);
      const ds = load<f32>(bn + p) - xs;
      const r = <f32>(1.0 * <f64>xs + dt * <f64>ds);
      store<f32>(bn + p, r);
      mag = i32x4.max_u(mag, i32x4.splat(reinterpret<i32>(r) & 0x7fffffff));
      const e = abs<f64>(<f64>r - <f64>xs);
      d0 = f64x2.pmax(d0, f64x2.splat(e));
      if (e != e) nan = f64x2.splat(1.0);
    }
  }
  // lanes 2 and 3 of mag saw only the zeros of the demotions and the splats
  const bits = max<u32>(<u32>i32x4.extract_lane(mag, 0), <u32>i32x4.extract_lane(mag, 1));
  // a NaN state has magnitude bits above +Infinity's
  if (bits > 0x7f800000 || !(<f64>reinterpret<f32>(bits) <= bound) || v128.any_true(nan)) return -1;
  const dd = f64x2.pmax(d0, d1);
  return max<f64>(f64x2.extract_lane(dd, 0), f64x2.extract_lane(dd, 1));
}

// @ts-ignore: decorator
@inline
function step64(code: i32, gain: f64, offset: f64, x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  const vb = f64x2.splat(beta);
  const vnb = f64x2.splat(-beta);
  const vdt = f64x2.splat(dt);
  const one = f64x2.splat(1.0);
  let m0 = f64x2.splat(0);
  let d0 = m0;
  let nan = m0;
  for (let start = 0; start < n; start += BLOCK) {
    const m = min(BLOCK, n - start);
    const off = <usize>start * 8;
    const ve = <usize>(m - m % 2) * 8;
    const bx = x + off;
    const bn = nx + off;
    let p: usize = 0;
    if (t != 0) {
      const bt = t + off;
      for (; p < ve; p += VBYTES) {
        const a = f64x2.add(f64x2.mul(vb, v128.load(bt + p)), v128.load(bn + p));
        v128.store(bn + p, f64x2.add(f64x2.mul(vnb, v128.load(bx + p)), a));
      }
      if (m % 2 != 0) {
        const a = beta * load<f64>(bt + p) + load<f64>(bn + p);
        store<f64>(bn + p, -beta * load<f64>(bx + p) + a);
      }
    }
    run64(code, bn, bn, m, gain, offset);
    for (p = 0; p < ve; p += VBYTES) {
      const xa = v128.load(bx + p);
      const r = f64x2.add(f64x2.mul(one, xa), f64x2.mul(vdt, f64x2.sub(v128.load(bn + p), xa)));
      v128.store(bn + p, r);
      const aa = v128.and(r, K(ABS64));
      const e = v128.and(f64x2.sub(r, xa), K(ABS64));
      m0 = f64x2.pmax(m0, aa);
      d0 = f64x2.pmax(d0, e);
      nan = v128.or(nan, v128.or(f64x2.ne(aa, aa), f64x2.ne(e, e)));
    }
    if (m % 2 != 0) {
      const xs = load<f64>(bx + p);
      const r = 1.0 * xs + dt * (load<f64>(bn + p) - xs);
      store<f64>(bn + p, r);
      const aa = f64x2.splat(abs<f64>(r));
      const e = f64x2.splat(abs<f64>(r - xs));
      m0 = f64x2.pmax(m0, aa);
      d0 = f64x2.pmax(d0, e);
      nan = v128.or(nan, v128.or(f64x2.ne(aa, aa), f64x2.ne(e, e)));
    }
  }
  const largest = max<f64>(f64x2.extract_lane(m0, 0), f64x2.extract_lane(m0, 1));
  if (v128.any_true(nan) || !(largest <= bound)) return -1;
  return max<f64>(f64x2.extract_lane(d0, 0), f64x2.extract_lane(d0, 1));
}

// One function per unit code, so that each loop is compiled with its code
// known (the optimiser would otherwise merge calls that differ only in the
// code into one loop that tests the code at run time).

function logisticPlain32(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step32(LOGISTIC_PLAIN, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}
function logistic32(gain: f64, offset: f64, x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step32(UNIT_LOGISTIC, gain, offset, x, nx, t, beta, dt, bound, n);
}
function tanh32(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step32(UNIT_TANH, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}
function relu32(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step32(UNIT_RELU, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}
function hardSigmoid32(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step32(UNIT_HARD_SIGMOID, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}
function linear32(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step32(UNIT_LINEAR, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}

function logistic64(gain: f64, offset: f64, x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step64(UNIT_LOGISTIC, gain, offset, x, nx, t, beta, dt, bound, n);
}
function tanh64(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step64(UNIT_TANH, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}
function relu64(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step64(UNIT_RELU, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}
function hardSigmoid64(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step64(UNIT_HARD_SIGMOID, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}
function linear64(x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return step64(UNIT_LINEAR, 1.0, 0.0, x, nx, t, beta, dt, bound, n);
}

/**
 * The fused rate step on f32 arrays (byte offsets; t = 0: no nudging). `code` is the unit kind's
 * unitFill rate code (UNIT_LOGISTIC, UNIT_TANH, UNIT_RELU, UNIT_HARD_SIGMOID, UNIT_LINEAR); -2 for any other.
 */
export function rateStep32(code: i32, gain: f64, offset: f64, x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  if (n <= 0) return 0;
  switch (code) {
    case UNIT_LOGISTIC: return gain == 1.0 && offset == 0.0 ? logisticPlain32(x, nx, t, beta, dt, bound, n) : logistic32(gain, offset, x, nx, t, beta, dt, bound, n);
    case UNIT_TANH: return tanh32(x, nx, t, beta, dt, bound, n);
    case UNIT_RELU: return relu32(x, nx, t, beta, dt, bound, n);
    case UNIT_HARD_SIGMOID: return hardSigmoid32(x, nx, t, beta, dt, bound, n);
    case UNIT_LINEAR: return linear32(x, nx, t, beta, dt, bound, n);
    default: return -2;
  }
}

/** The fused rate step on f64 arrays (as rateStep32). */
export function rateStep64(code: i32, gain: f64, offset: f64, x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  if (n <= 0) return 0;
  switch (code) {
    case UNIT_LOGISTIC: return logistic64(gain, offset, x, nx, t, beta, dt, bound, n);
    case UNIT_TANH: return tanh64(x, nx, t, beta, dt, bound, n);
    case UNIT_RELU: return relu64(x, nx, t, beta, dt, bound, n);
    case UNIT_HARD_SIGMOID: return hardSigmoid64(x, nx, t, beta, dt, bound, n);
    case UNIT_LINEAR: return linear64(x, nx, t, beta, dt, bound, n);
    default: return -2;
  }
}

// ---- energy dynamics ----
//
// One settling step of energy dynamics for one free, un-nudged layer, fused into a single pass over
// blocks that stay in L1 (Scellier & Bengio 2017, Front. Comput. Neurosci. 11:24, eq. 9):
//
//   next <- u + dt (f'(u) eta - u)        then, with `clip`, next <- f(next)
//
// (the clip applies the layer's own unit: for the hard sigmoid that is the clip to [0, 1]) and, in the
// same pass, the largest |next| and the largest |next - u|. u is the layer's state, eta its net input
// (read only), next is written.
//
// Exactness: bit for bit what the separate kernels give in the order the settler calls them: unitFill
// (the slope, into next), binary mul (next * eta), binary sub (- u), axpby (1 u + dt next), unitFill (the
// rate, in place, with `clip`), maxAbs, maxAbsDiff. The products and differences run in the storage
// type's lanes as in binary, the scaled sum in f64 lanes as in axpby, and the unit code is the one
// unitFill picks (the plain logistic's own code when gain = 1 and offset = 0). No multiply-add is fused,
// in the relaxed build either.
//
// Returns the largest |next - u| (in f64), -1 when some |next| exceeds `bound` or some value of next is
// NaN or infinite (the host then makes the separate checks), -2 for a code it does not handle.

// @ts-ignore: decorator
@inline
function energy32(code: i32, slope: i32, clip: bool, short: bool, gain: f64, offset: f64, x: usize, eta: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  const vdt = f64x2.splat(dt);
  const g = f64x2.splat(gain);
  const o = f64x2.splat(offset);
  const g32 = f32x4.splat(<f32>gain);
  let mag = i32x4.splat(0);
  let d0 = f64x2.splat(0);
  let d1 = d0;
  for (let start = 0; start < n; start += BLOCK) {
    const m = min(BLOCK, n - start);
    const off = <usize>start * 4;
    const ve = <usize>(m - m % 4) * 4;
    const bx = x + off;
    const be = eta + off;
    const bn = nx + off;
    // the slope in a pass of its own (its dependency chain is long for the exp-based units), then the
    // rest in one loop: the update in f64 lanes two values at a time, rounded, clipped and stored two
    // values at a time (store64_lane: no two-vector shuffle); the clip sees the zero lanes of the
    // demotion too, which are never stored
    // (the piecewise-linear units' slopes are short: computed in the loop)
    if (!short) run32(slope, bn, bx, m, gain, offset);
    let p: usize = 0;
    for (; p < ve; p += VBYTES) {
      const xa = v128.load(bx + p);
      const sl = short ? apply32(slope, xa, g, o, g32) : v128.load(bn + p);
      const d = f32x4.sub(f32x4.mul(sl, v128.load(be + p)), xa);
      const xl = lo(xa);
      const xh = hi(xa);
      // 1·x + dt·d as axpby forms it; 1·x is x exactly (a NaN's payload aside, which wasm leaves open anyway)
      let rl = f32x4.demote_f64x2_zero(f64x2.add(xl, f64x2.mul(vdt, lo(d))));
      let rh = f32x4.demote_f64x2_zero(f64x2.add(xh, f64x2.mul(vdt, hi(d))));
      if (clip) {
        rl = apply32(code, rl, g, o, g32);
        rh = apply32(code, rh, g, o, g32);
      }
      v128.store64_lane(bn + p, rl, 0);
      v128.store64_lane(bn + p, rh, 0, 8);
      mag = i32x4.max_u(mag, i32x4.max_u(v128.and(rl, K(ABS32)), v128.and(rh, K(ABS32))));
      const e0 = v128.and(f64x2.sub(f64x2.promote_low_f32x4(rl), xl), K(ABS64));
      const e1 = v128.and(f64x2.sub(f64x2.promote_low_f32x4(rh), xh), K(ABS64));
      d0 = f64x2.pmax(d0, e0);
      d1 = f64x2.pmax(d1, e1);
    }
    for (; p < <usize>m * 4; p += 4) {
      const xs = load<f32>(bx + p);
      const sl = short ? f32x4.extract_lane(apply32(slope, f32x4.splat(xs), g, o, g32), 0) : load<f32>(bn + p);
      const ds = sl * load<f32>(be + p) - xs;
      let r = <f32>(<f64>xs + dt * <f64>ds);
      if (clip) r = f32x4.extract_lane(apply32(code, f32x4.splat(r), g, o, g32), 0);
      store<f32>(bn + p, r);
      mag = i32x4.max_u(mag, i32x4.splat(reinterpret<i32>(r) & 0x7fffffff));
      const e = abs<f64>(<f64>r - <f64>xs);
      d0 = f64x2.pmax(d0, f64x2.splat(e));
    }
  }
  // lanes 2 and 3 of mag saw only the demotions' zero lanes (clipped: f(0), finite) and the splats
  const bits = max<u32>(<u32>i32x4.extract_lane(mag, 0), <u32>i32x4.extract_lane(mag, 1));
  // a NaN state has magnitude bits above +Infinity's. A NaN in u gives one in next (every unit's slope
  // and rate pass NaN on), so |next - u| is NaN only where next is NaN or infinite: -1 then too, and
  // the host makes the separate checks
  if (bits >= 0x7f800000 || !(<f64>reinterpret<f32>(bits) <= bound)) return -1;
  const dd = f64x2.pmax(d0, d1);
  return max<f64>(f64x2.extract_lane(dd, 0), f64x2.extract_lane(dd, 1));
}

// @ts-ignore: decorator
@inline
function energy64(code: i32, slope: i32, clip: bool, gain: f64, offset: f64, x: usize, eta: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  const vdt = f64x2.splat(dt);
  const one = f64x2.splat(1.0);
  const g = f64x2.splat(gain);
  const o = f64x2.splat(offset);
  let m0 = f64x2.splat(0);
  let d0 = m0;
  let nan = m0;
  for (let start = 0; start < n; start += BLOCK) {
    const m = min(BLOCK, n - start);
    const off = <usize>start * 8;
    const ve = <usize>(m - m % 2) * 8;
    const bx = x + off;
    const be = eta + off;
    const bn = nx + off;
    run64(slope, bn, bx, m, gain, offset);
    let p: usize = 0;
    for (; p < ve; p += VBYTES) {
      const xa = v128.load(bx + p);
      const d = f64x2.sub(f64x2.mul(v128.load(bn + p), v128.load(be + p)), xa);
      let r = f64x2.add(f64x2.mul(one, xa), f64x2.mul(vdt, d));
      if (clip) r = apply64(code, r, g, o);
      v128.store(bn + p, r);
      const aa = v128.and(r, K(ABS64));
      const e = v128.and(f64x2.sub(r, xa), K(ABS64));
      m0 = f64x2.pmax(m0, aa);
      d0 = f64x2.pmax(d0, e);
      nan = v128.or(nan, v128.or(f64x2.ne(aa, aa), f64x2.ne(e, e)));
    }
    if (m % 2 != 0) {
      const xs = load<f64>(bx + p);
      const ds = load<f64>(bn + p) * load<f64>(be + p) - xs;
      let r = 1.0 * xs + dt * ds;
      if (clip) r = f64x2.extract_lane(apply64(code, f64x2.splat(r), g, o), 0);
      store<f64>(bn + p, r);
      const aa = f64x2.splat(abs<f64>(r));
      const e = f64x2.splat(abs<f64>(r - xs));
      m0 = f64x2.pmax(m0, aa);
      d0 = f64x2.pmax(d0, e);
      nan = v128.or(nan, v128.or(f64x2.ne(aa, aa), f64x2.ne(e, e)));
    }
  }
  const largest = max<f64>(f64x2.extract_lane(m0, 0), f64x2.extract_lane(m0, 1));
  if (v128.any_true(nan) || !(largest <= bound) || largest == Infinity) return -1;
  return max<f64>(f64x2.extract_lane(d0, 0), f64x2.extract_lane(d0, 1));
}

// one function per unit code and clip (see above)
function eLogisticPlain32(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy32(LOGISTIC_PLAIN, LOGISTIC_PLAIN_SLOPE, true, false, 1.0, 0.0, x, e, nx, dt, bound, n) : energy32(LOGISTIC_PLAIN, LOGISTIC_PLAIN_SLOPE, false, false, 1.0, 0.0, x, e, nx, dt, bound, n);
}
function eLogistic32(c: bool, gain: f64, offset: f64, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy32(UNIT_LOGISTIC, UNIT_LOGISTIC + 1, true, false, gain, offset, x, e, nx, dt, bound, n) : energy32(UNIT_LOGISTIC, UNIT_LOGISTIC + 1, false, false, gain, offset, x, e, nx, dt, bound, n);
}
function eTanh32(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy32(UNIT_TANH, UNIT_TANH + 1, true, false, 1.0, 0.0, x, e, nx, dt, bound, n) : energy32(UNIT_TANH, UNIT_TANH + 1, false, false, 1.0, 0.0, x, e, nx, dt, bound, n);
}
function eRelu32(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy32(UNIT_RELU, UNIT_RELU + 1, true, true, 1.0, 0.0, x, e, nx, dt, bound, n) : energy32(UNIT_RELU, UNIT_RELU + 1, false, true, 1.0, 0.0, x, e, nx, dt, bound, n);
}
function eHardSigmoid32(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy32(UNIT_HARD_SIGMOID, UNIT_HARD_SIGMOID + 1, true, true, 1.0, 0.0, x, e, nx, dt, bound, n) : energy32(UNIT_HARD_SIGMOID, UNIT_HARD_SIGMOID + 1, false, true, 1.0, 0.0, x, e, nx, dt, bound, n);
}
function eLinear32(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy32(UNIT_LINEAR, UNIT_LINEAR + 1, true, true, 1.0, 0.0, x, e, nx, dt, bound, n) : energy32(UNIT_LINEAR, UNIT_LINEAR + 1, false, true, 1.0, 0.0, x, e, nx, dt, bound, n);
}
function eLogistic64(c: bool, gain: f64, offset: f64, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy64(UNIT_LOGISTIC, UNIT_LOGISTIC + 1, true, gain, offset, x, e, nx, dt, bound, n) : energy64(UNIT_LOGISTIC, UNIT_LOGISTIC + 1, false, gain, offset, x, e, nx, dt, bound, n);
}
function eTanh64(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy64(UNIT_TANH, UNIT_TANH + 1, true, 1.0, 0.0, x, e, nx, dt, bound, n) : energy64(UNIT_TANH, UNIT_TANH + 1, false, 1.0, 0.0, x, e, nx, dt, bound, n);
}
function eRelu64(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy64(UNIT_RELU, UNIT_RELU + 1, true, 1.0, 0.0, x, e, nx, dt, bound, n) : energy64(UNIT_RELU, UNIT_RELU + 1, false, 1.0, 0.0, x, e, nx, dt, bound, n);
}
function eHardSigmoid64(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy64(UNIT_HARD_SIGMOID, UNIT_HARD_SIGMOID + 1, true, 1.0, 0.0, x, e, nx, dt, bound, n) : energy64(UNIT_HARD_SIGMOID, UNIT_HARD_SIGMOID + 1, false, 1.0, 0.0, x, e, nx, dt, bound, n);
}
function eLinear64(c: bool, x: usize, e: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  return c ? energy64(UNIT_LINEAR, UNIT_LINEAR + 1, true, 1.0, 0.0, x, e, nx, dt, bound, n) : energy64(UNIT_LINEAR, UNIT_LINEAR + 1, false, 1.0, 0.0, x, e, nx, dt, bound, n);
}

/**
 * The fused energy step on f32 arrays (byte offsets). `code` is the unit kind's unitFill rate code
 * (UNIT_LOGISTIC, UNIT_TANH, UNIT_RELU, UNIT_HARD_SIGMOID, UNIT_LINEAR), `clip` non-zero to apply the
 * unit to the result; -2 for any other code.
 */
export function energyStep32(code: i32, gain: f64, offset: f64, clip: i32, x: usize, eta: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  if (n <= 0) return 0;
  const c = clip != 0;
  switch (code) {
    case UNIT_LOGISTIC: return gain == 1.0 && offset == 0.0 ? eLogisticPlain32(c, x, eta, nx, dt, bound, n) : eLogistic32(c, gain, offset, x, eta, nx, dt, bound, n);
    case UNIT_TANH: return eTanh32(c, x, eta, nx, dt, bound, n);
    case UNIT_RELU: return eRelu32(c, x, eta, nx, dt, bound, n);
    case UNIT_HARD_SIGMOID: return eHardSigmoid32(c, x, eta, nx, dt, bound, n);
    case UNIT_LINEAR: return eLinear32(c, x, eta, nx, dt, bound, n);
    default: return -2;
  }
}

/** The fused energy step on f64 arrays (as energyStep32). */
export function energyStep64(code: i32, gain: f64, offset: f64, clip: i32, x: usize, eta: usize, nx: usize, dt: f64, bound: f64, n: i32): f64 {
  if (n <= 0) return 0;
  const c = clip != 0;
  switch (code) {
    case UNIT_LOGISTIC: return eLogistic64(c, gain, offset, x, eta, nx, dt, bound, n);
    case UNIT_TANH: return eTanh64(c, x, eta, nx, dt, bound, n);
    case UNIT_RELU: return eRelu64(c, x, eta, nx, dt, bound, n);
    case UNIT_HARD_SIGMOID: return eHardSigmoid64(c, x, eta, nx, dt, bound, n);
    case UNIT_LINEAR: return eLinear64(c, x, eta, nx, dt, bound, n);
    default: return -2;
  }
}
