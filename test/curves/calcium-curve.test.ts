import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { calciumCurve, applyCalciumCurve } from "../../src/curves/index.js";
import { exponentialTrace } from "../../src/traces/index.js";
import { check } from "../helpers/property.js";
import { EPS64 } from "../helpers/tolerance.js";
import { expectEbbflowError } from "../traces/expect-error.js";

const troughArb = fc.double({ min: 0.01, max: 0.99, noNaN: true });
const thetaArb = fc.double({ min: 1e-6, max: 1e3, noNaN: true });

describe("calciumCurve: shape (ebbflow's piecewise-linear design, documented in its TSDoc)", () => {
  it("is zero at zero coactivity, deepest at trough*theta with value -(1-trough)*theta, zero at theta", () => {
    // design contract of the curve (calcium-control shape after Shouval, Bear & Cooper 2002, PNAS 99:10831)
    check(
      fc.property(thetaArb, troughArb, (theta, trough) => {
        expect(calciumCurve(0, theta, trough)).toBe(0);
        expect(calciumCurve(theta, theta, trough)).toBe(0);
        const deepest = calciumCurve(trough * theta, theta, trough);
        expect(Math.abs(deepest + (1 - trough) * theta)).toBeLessThanOrEqual(8 * EPS64 * theta);
      }),
    );
  });

  it("in the linear region (theta >= 0, x > trough*theta) curve(fast, slow) equals fast - slow exactly", () => {
    // design contract: linear region reads "clamped minus free" (fast minus slow) (exact IEEE subtraction)
    check(
      fc.property(
        fc.double({ min: 0, max: 1e3, noNaN: true }),
        troughArb,
        fc.double({ min: 0, max: 1e3, noNaN: true }),
        (slow, trough, above) => {
          const fast = trough * slow + above;
          fc.pre(fast > trough * slow && fast > 0);
          expect(calciumCurve(fast, slow, trough)).toBe(fast - slow);
        },
      ),
    );
  });

  it("with fast and slow exponential traces of one coactivity, the linear region gives fast - slow", () => {
    // methods.md item 13 traces + design contract: error-driven reading of the curve
    check(
      fc.property(fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 1, maxLength: 50 }), troughArb, (xs, trough) => {
        const fast = exponentialTrace({ tau: 2 });
        const slow = exponentialTrace({ tau: 20 });
        for (const x of xs) {
          const f = fast.update(x);
          const s = slow.update(x);
          if (f > trough * s && f > 0) expect(calciumCurve(f, s, trough)).toBe(f - s);
        }
      }),
    );
  });

  it("is continuous at both breakpoints (x = 0 and x = trough*theta): Lipschitz with constant max(1, (1-trough)/trough)", () => {
    // piecewise-linear continuity (design contract)
    check(
      fc.property(thetaArb, troughArb, fc.double({ min: 1e-9, max: 1e-3, noNaN: true }), (theta, trough, delta) => {
        const lip = Math.max(1, (1 - trough) / trough);
        for (const knot of [0, trough * theta]) {
          const at = calciumCurve(knot, theta, trough);
          const slack = 16 * EPS64 * Math.max(1, theta) * lip;
          expect(Math.abs(calciumCurve(knot + delta, theta, trough) - at)).toBeLessThanOrEqual(lip * delta + slack);
          expect(Math.abs(calciumCurve(knot - delta, theta, trough) - at)).toBeLessThanOrEqual(lip * delta + slack);
        }
      }),
    );
  });

  it("has slope 1 above the trough and slope -(1-trough)/trough below it", () => {
    // design contract: two linear pieces
    check(
      fc.property(thetaArb, troughArb, fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), (theta, trough, u, v) => {
        const k = trough * theta;
        const [x1, x2] = [k + (u + 0.01) * theta, k + (v + 0.02) * theta];
        const d = calciumCurve(x2, theta, trough) - calciumCurve(x1, theta, trough);
        expect(Math.abs(d - (x2 - x1))).toBeLessThanOrEqual(16 * EPS64 * 3 * theta);
        const [z1, z2] = [k * u, k * v];
        const e = calciumCurve(z2, theta, trough) - calciumCurve(z1, theta, trough);
        expect(Math.abs(e + ((1 - trough) / trough) * (z2 - z1))).toBeLessThanOrEqual(1e-12 * Math.max(1, theta / trough));
      }),
    );
  });

  it("never goes below its trough value and is negative exactly on (0, theta)", () => {
    // design contract: depression for 0 < x < theta, potentiation above theta
    check(
      fc.property(thetaArb, troughArb, fc.double({ min: -10, max: 3, noNaN: true }), (theta, trough, r) => {
        const x = r * theta;
        const c = calciumCurve(x, theta, trough);
        expect(c).toBeGreaterThanOrEqual(-(1 - trough) * theta * (1 + 8 * EPS64));
        if (x > 1e-300 && x < theta) expect(c).toBeLessThan(0); // (subnormal x may underflow to -0)
        if (x > theta) expect(c).toBeGreaterThan(0);
        if (x <= 0) expect(c).toBe(0);
      }),
    );
  });

  it("treats theta <= 0 as 'no activity expected': the curve is max(x, 0), the limit theta -> 0+", () => {
    // documented edge-case choice
    check(
      fc.property(fc.double({ min: -1e3, max: 0, noNaN: true }), troughArb, fc.double({ min: -1e3, max: 1e3, noNaN: true }), (theta, trough, x) => {
        expect(calciumCurve(x, theta, trough)).toBe(x > 0 ? x : 0);
        // |curve(x, θ) - max(x, 0)| <= θ for small θ > 0 (both pieces differ from max(x, 0) by at most θ)
        expect(Math.abs(calciumCurve(x, 1e-12, trough) - (x > 0 ? x : 0))).toBeLessThanOrEqual(1e-12 + 4 * EPS64 * Math.abs(x));
      }),
    );
  });

  it("produces no NaN for any non-NaN inputs, infinities included; NaN inputs give NaN", () => {
    check(
      fc.property(fc.double({ noNaN: true }), fc.double({ noNaN: true }), troughArb, (x, theta, trough) => {
        expect(Number.isNaN(calciumCurve(x, theta, trough))).toBe(false);
      }),
    );
    expect(calciumCurve(Number.NaN, 1, 0.3)).toBeNaN();
    expect(calciumCurve(0.5, Number.NaN, 0.3)).toBeNaN();
  });

  it("worked values: trough 0.2, theta 0.5", () => {
    // hand arithmetic: -0.05*0.8/0.2 = -0.2; -(1-0.2)*0.5 = -0.4; 0.8 - 0.5 = 0.3
    expect(calciumCurve(0.05, 0.5, 0.2)).toBeCloseTo(-0.2, 15);
    expect(calciumCurve(0.1, 0.5, 0.2)).toBeCloseTo(-0.4, 15);
    expect(calciumCurve(0.8, 0.5, 0.2)).toBe(0.8 - 0.5);
  });

  it("applyCalciumCurve equals the scalar curve elementwise, float32 and float64, and may alias", () => {
    check(
      fc.property(fc.array(fc.tuple(fc.double({ min: -1, max: 2, noNaN: true }), fc.double({ min: -0.5, max: 2, noNaN: true })), { maxLength: 20 }), troughArb, (pairs, trough) => {
        const x = Float64Array.from(pairs.map((p) => p[0]));
        const th = Float64Array.from(pairs.map((p) => p[1]));
        const out = applyCalciumCurve(new Float64Array(x.length), x, th, trough);
        const out32 = applyCalciumCurve(new Float32Array(x.length), x, th, trough);
        for (let i = 0; i < x.length; i++) {
          expect(out[i]).toBe(calciumCurve(x[i] as number, th[i] as number, trough));
          expect(out32[i]).toBe(Math.fround(out[i] as number));
        }
        const alias = Float64Array.from(x);
        applyCalciumCurve(alias, alias, th, trough);
        expect(Array.from(alias)).toEqual(Array.from(out));
      }),
    );
  });

  it("rejects trough outside (0, 1), NaN or infinite, naming trough; and mismatched lengths", () => {
    for (const trough of [0, 1, -0.1, 1.5, Number.NaN, Number.POSITIVE_INFINITY]) {
      expectEbbflowError(() => calciumCurve(0.5, 1, trough), "invalid_parameter", "trough");
      expectEbbflowError(() => applyCalciumCurve(new Float64Array(1), new Float64Array(1), new Float64Array(1), trough), "invalid_parameter", "trough");
    }
    expectEbbflowError(() => applyCalciumCurve(new Float64Array(2), new Float64Array(1), new Float64Array(2), 0.3), "shape_mismatch", "coactivity");
    expectEbbflowError(() => applyCalciumCurve(new Float64Array(2), new Float64Array(2), new Float64Array(3), 0.3), "shape_mismatch", "threshold");
  });
});
