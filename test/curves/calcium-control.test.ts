import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { calciumControl } from "../../src/curves/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";
import { expectEbbflowError } from "../traces/expect-error.js";

const cc = calciumControl();

/** Golden-section search for a minimum on [lo, hi] (Kiefer 1953), to ~1e-12. */
function argmin(f: (x: number) => number, lo: number, hi: number): number {
  const g = (Math.sqrt(5) - 1) / 2;
  let a = lo;
  let b = hi;
  while (b - a > 1e-12) {
    const c = b - g * (b - a);
    const d = a + g * (b - a);
    if (f(c) < f(d)) b = d;
    else a = c;
  }
  return (a + b) / 2;
}

/** Bisection for a sign change of f on [lo, hi]. */
function root(f: (x: number) => number, lo: number, hi: number): number {
  let a = lo;
  let b = hi;
  const fa = f(a);
  while (b - a > 1e-13) {
    const m = (a + b) / 2;
    if (Math.sign(f(m)) === Math.sign(fa)) a = m;
    else b = m;
  }
  return (a + b) / 2;
}

describe("calciumControl: Omega(Ca) (Shouval, Bear & Cooper 2002, PNAS 99:10831)", () => {
  it("matches the check values of methods.md item 8 to 1e-9", () => {
    // methods.md item 8 [DER] from the [SRC-3 x2] formulas and parameters
    const table: [number, number][] = [
      [0, 0.25],
      [0.2, 0.249998463957],
      [0.35, 0.125000112535],
      [0.45, 4.19187663e-4],
      [0.55, 0.500000028134],
      [0.7, 0.999993855826],
      [1.0, 1.0],
    ];
    for (const [ca, omega] of table) expectClose(cc.omega(ca), omega, 1e-9, `Omega(${ca})`);
    // methods.md item 8: Omega(0) = 0.25 - 1.7e-13
    expect(0.25 - cc.omega(0)).toBeGreaterThan(1e-13);
    expect(0.25 - cc.omega(0)).toBeLessThan(2e-13);
  });

  it("has its LTD trough at Ca = 0.441329 with Omega = 3.353220e-4 (found numerically)", () => {
    // methods.md item 8 [DER]: LTD trough minimum
    const ca = argmin((c) => cc.omega(c), 0.35, 0.55);
    expectClose(ca, 0.441329, 1e-6, "argmin");
    expectClose(cc.omega(ca), 3.35322e-4, 1e-9, "min");
  });

  it("crosses back to 0.25 (LTD -> LTP) at Ca = 0.536267 (found numerically)", () => {
    // methods.md item 8 [DER]: crossover
    expectClose(root((c) => cc.omega(c) - 0.25, 0.45, 0.6), 0.536267, 1e-6, "crossover");
  });

  it("stays within [0, 1], tends to 0.25 at rest and 1 at saturation", () => {
    // methods.md item 8 [DER]: 0 < Omega < 1; Omega(Ca -> inf) = 1
    check(
      fc.property(fc.double({ min: -10, max: 10, noNaN: true }), (ca) => {
        const o = cc.omega(ca);
        expect(o).toBeGreaterThanOrEqual(0);
        expect(o).toBeLessThanOrEqual(1);
      }),
    );
    expect(cc.omega(Number.POSITIVE_INFINITY)).toBe(1);
    expect(cc.omega(Number.NEGATIVE_INFINITY)).toBe(0.25);
    expect(cc.omega(1e6)).toBe(1);
  });
});

describe("calciumControl: eta(Ca) and the weight change", () => {
  it("learning rates match methods.md item 8 (P2 = P1 * 1e-4)", () => {
    // methods.md item 8 [DER]: eta = 1 / (P1/(P2 + Ca^P3) + P4)
    const table: [number, number][] = [
      [0, 9.999e-5],
      [0.1, 9.99901e-3],
      [0.2, 7.41598e-2],
      [0.35, 3.001365e-1],
      [0.5, 5.555753e-1],
      [1.0, 9.090917e-1],
    ];
    for (const [ca, eta] of table) expect(Math.abs(cc.learningRate(ca) - eta) / eta).toBeLessThan(5e-6);
    // methods.md item 8: tau(0) = 10001 s (about 2.8 h)
    expectClose(cc.timeConstant(0), 10001, 1e-12, "tau(0)");
  });

  it("P2 is configurable; the printed P1/1e-4 reading would give tau(0) of about 1 s instead of about 3 h", () => {
    // methods.md item 8 caution [SRC-3 x2]: the supplement's P2 = P1/10^-4 is called a typo
    const typo = calciumControl({ p2: 0.1 / 1e-4 });
    expect(typo.parameters.p2).toBe(1000);
    expectClose(typo.timeConstant(0), 1.0001, 1e-12, "tau(0) with the printed P2");
    expect(calciumControl().parameters.p2).toBeCloseTo(1e-5, 18);
    expect(calciumControl({ p1: 0.2 }).parameters.p2).toBeCloseTo(2e-5, 18);
  });

  it("eta increases with calcium from 1/(P1/P2 + P4) towards 1/P4", () => {
    // methods.md item 8: tau(Ca) = P1/(P2 + Ca^P3) + P4 decreases in Ca >= 0
    check(
      fc.property(fc.double({ min: 0, max: 10, noNaN: true }), fc.double({ min: 0, max: 10, noNaN: true }), (a, b) => {
        const [lo, hi] = a < b ? [a, b] : [b, a];
        expect(cc.learningRate(lo)).toBeLessThanOrEqual(cc.learningRate(hi));
        expect(cc.learningRate(hi)).toBeLessThanOrEqual(1);
      }),
    );
    expect(cc.learningRate(-0.3)).toBe(cc.learningRate(0));
  });

  it("dW/dt = eta (Omega - lambda W): zero at W = Omega/lambda, linear in W with slope -eta lambda", () => {
    // methods.md item 8: steady weight W* = Omega(Ca) for lambda = 1
    check(
      fc.property(fc.double({ min: 0, max: 2, noNaN: true }), fc.double({ min: -2, max: 2, noNaN: true }), fc.double({ min: 0.1, max: 3, noNaN: true }), (ca, w, lambda) => {
        const c = calciumControl({ lambda });
        expect(Math.abs(c.weightChange(ca, c.omega(ca) / lambda))).toBeLessThanOrEqual(1e-15);
        expectClose(c.weightChange(ca, w), c.learningRate(ca) * (c.omega(ca) - lambda * w), 1e-14, "dW/dt");
        expectClose(c.weightChange(ca, w + 1) - c.weightChange(ca, w), -c.learningRate(ca) * lambda, 1e-12, "slope");
      }),
    );
  });

  it("integrating dW/dt at fixed calcium drives W to Omega(Ca) (lambda = 1)", () => {
    // methods.md item 8: W* = Omega(Ca); exact solution W(t) = Omega + (W0 - Omega) exp(-eta t)
    const ca = 0.45;
    const w = new Float64Array([0.5]);
    const out = new Float64Array(1);
    const caArr = new Float64Array([ca]);
    const dt = 0.01;
    for (let s = 0; s < 2000; s++) {
      cc.applyWeightChange(out, caArr, w);
      w[0] = (w[0] as number) + dt * (out[0] as number);
    }
    const eta = cc.learningRate(ca);
    const exact = cc.omega(ca) + (0.5 - cc.omega(ca)) * Math.exp(-eta * 20);
    expectClose(w[0] as number, exact, 1e-3, "W(20 s)");
  });

  it("applyWeightChange equals the scalar form elementwise and may alias", () => {
    check(
      fc.property(fc.array(fc.tuple(fc.double({ min: 0, max: 1.5, noNaN: true }), fc.double({ min: -1, max: 2, noNaN: true })), { maxLength: 20 }), (pairs) => {
        const ca = Float64Array.from(pairs.map((p) => p[0]));
        const w = Float64Array.from(pairs.map((p) => p[1]));
        const out = cc.applyWeightChange(new Float64Array(ca.length), ca, w);
        for (let i = 0; i < ca.length; i++) expect(out[i]).toBe(cc.weightChange(ca[i] as number, w[i] as number));
        cc.applyWeightChange(w, ca, w);
        expect(Array.from(w)).toEqual(Array.from(out));
      }),
    );
    expectEbbflowError(() => cc.applyWeightChange(new Float64Array(2), new Float64Array(1), new Float64Array(2)), "shape_mismatch", "ca");
    expectEbbflowError(() => cc.applyWeightChange(new Float64Array(2), new Float64Array(2), new Float64Array(3)), "shape_mismatch", "w");
  });

  it("rejects bad parameters naming them", () => {
    const bad: [Record<string, number>, string][] = [
      [{ alpha1: Number.NaN }, "alpha1"],
      [{ alpha2: Number.POSITIVE_INFINITY }, "alpha2"],
      [{ beta1: 0 }, "beta1"],
      [{ beta2: -80 }, "beta2"],
      [{ p1: 0 }, "p1"],
      [{ p2: -1e-5 }, "p2"],
      [{ p3: Number.NaN }, "p3"],
      [{ p4: -1 }, "p4"],
      [{ lambda: -0.5 }, "lambda"],
      [{ lambda: Number.POSITIVE_INFINITY }, "lambda"],
    ];
    for (const [options, path] of bad) expectEbbflowError(() => calciumControl(options), "invalid_parameter", path);
  });
});
