/**
 * The noise-averaged (Gaussian-convolved) rate table: closed forms, the
 * convergence order of the interpolation, Monte Carlo checks, and the
 * behaviour beyond the table.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { createRandom } from "../../src/random/index.js";
import { createUnit, logistic, noisyRate, noisyRateSlope, relu, saturating, softplus, tabulateNoisyRate, tanh } from "../../src/units/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";
import { normalCdf, noisyReluClosedForm } from "./normalReference.js";

function maxErrors(unit: ReturnType<typeof createUnit>, f: (x: number) => number, df: (x: number) => number, lo: number, hi: number): [number, number] {
  let ev = 0;
  let es = 0;
  const m = 2001;
  for (let k = 0; k < m; k++) {
    const x = lo + ((hi - lo) * k) / (m - 1);
    ev = Math.max(ev, Math.abs(unit.value(x) - f(x)));
    es = Math.max(es, Math.abs(unit.slope(x) - df(x)));
  }
  return [ev, es];
}

describe("noisy rectifier against the closed form x Phi(x/sigma) + sigma phi(x/sigma) (common practice)", () => {
  const sigma = 0.7;
  const unit = createUnit({ kind: "noisy", base: { kind: "relu" }, sigma });
  const f = (x: number) => noisyReluClosedForm(x, sigma);
  const df = (x: number) => normalCdf(x / sigma);

  it("matches the closed form to 1e-10 and its slope Phi(x/sigma) to 1e-7 with the default table", () => {
    const [ev, es] = maxErrors(unit, f, df, -6, 6);
    expect(ev).toBeLessThan(1e-10);
    expect(es).toBeLessThan(1e-7);
  });
  it("matches beyond the default table too (shifted-rectifier extrapolation)", () => {
    for (const x of [-100, -20, -5.7, 5.7, 20, 1e4]) {
      expectClose(unit.value(x), f(x), 1e-13, `x=${x}`);
      expectClose(unit.slope(x), df(x), 1e-13, `slope x=${x}`);
    }
  });
  it("converges at the cubic Hermite rates: value error O(step^4), slope error O(step^3)", () => {
    const resolutions = [33, 65, 129, 257];
    const errs = resolutions.map((resolution) =>
      maxErrors(createUnit({ kind: "noisy", base: { kind: "relu" }, sigma, resolution, range: [-6 * sigma, 6 * sigma] }), f, df, -6 * sigma, 6 * sigma),
    );
    for (let i = 1; i < errs.length; i++) {
      const [v0, s0] = errs[i - 1] as [number, number];
      const [v1, s1] = errs[i] as [number, number];
      // halving the step: value error / 16, slope error / 8 (allow some slack for pre-asymptotic behaviour)
      expect(Math.log2(v0 / v1), `value order between ${resolutions[i - 1]} and ${resolutions[i]}`).toBeGreaterThan(3.6);
      expect(Math.log2(s0 / s1), `slope order between ${resolutions[i - 1]} and ${resolutions[i]}`).toBeGreaterThan(2.6);
    }
    // and the finest table is already accurate in absolute terms
    expect((errs[errs.length - 1] as [number, number])[0]).toBeLessThan(1e-8);
  });
  it("approaches the plain rectifier as sigma -> 0, within sigma phi(0) = 0.3989 sigma (max at x = 0) [DER]", () => {
    for (const s of [0.1, 0.01, 0.001]) {
      const u = createUnit({ kind: "noisy", base: { kind: "relu" }, sigma: s });
      for (const x of [-0.5, -s, 0, s, 0.5]) expect(Math.abs(u.value(x) - relu(x))).toBeLessThanOrEqual(s / Math.sqrt(2 * Math.PI) + 1e-10 * s);
      expectClose(u.value(0), s / Math.sqrt(2 * Math.PI), 1e-9, `sigma=${s}`);
    }
  });
});

describe("noisy hard sigmoid against R(x) - R(x - 1), R the averaged rectifier [DER]", () => {
  it("matches value and slope Phi(x/s) - Phi((x-1)/s)", () => {
    const s = 0.3;
    const unit = createUnit({ kind: "noisy", base: { kind: "hard-sigmoid" }, sigma: s });
    const [ev, es] = maxErrors(
      unit,
      (x) => noisyReluClosedForm(x, s) - noisyReluClosedForm(x - 1, s),
      (x) => normalCdf(x / s) - normalCdf((x - 1) / s),
      -4,
      5,
    );
    expect(ev).toBeLessThan(1e-10);
    expect(es).toBeLessThan(1e-7);
  });
});

describe("noisy linear unit", () => {
  it("is the identity with slope 1, since E[x + sigma Z] = x", () => {
    const unit = createUnit({ kind: "noisy", base: { kind: "linear" }, sigma: 2, resolution: 16 });
    check(
      fc.property(fc.double({ min: -1e3, max: 1e3, noNaN: true }), (x) => {
        expectClose(unit.value(x), x, 1e-13, `x=${x}`);
        expectClose(unit.slope(x), 1, 1e-13, `x=${x}`);
      }),
    );
  });
});

describe("noisy units: symmetries of the averaged function", () => {
  const logisticUnit = createUnit({ kind: "noisy", base: { kind: "logistic", gain: 1.5, offset: 0.5 }, sigma: 0.8 });
  const tanhUnit = createUnit({ kind: "noisy", base: { kind: "tanh" }, sigma: 1.2 });
  it("noisy logistic is one half at the offset and point-symmetric about it (Z and -Z have the same law)", () => {
    expectClose(logisticUnit.value(0.5), 0.5, 1e-14);
    check(
      fc.property(fc.double({ min: 0, max: 40, noNaN: true }), (d) => {
        expectClose(logisticUnit.value(0.5 - d), 1 - logisticUnit.value(0.5 + d), 1e-12, `d=${d}`);
      }),
    );
  });
  it("noisy tanh is odd", () => {
    check(
      fc.property(fc.double({ min: 0, max: 40, noNaN: true }), (d) => {
        expectClose(tanhUnit.value(-d), -tanhUnit.value(d), 1e-12, `d=${d}`);
      }),
    );
  });
});

describe("noisy units against a Monte Carlo average (independent of the quadrature)", () => {
  const cases: [string, Parameters<typeof createUnit>[0], (t: number) => number, number, number[]][] = [
    ["logistic gain 2", { kind: "noisy", base: { kind: "logistic", gain: 2 }, sigma: 0.6 }, (t) => logistic(t, 2), 0.6, [-1, 0.3, 1.5]],
    ["tanh", { kind: "noisy", base: { kind: "tanh" }, sigma: 1 }, tanh, 1, [-0.8, 0.4]],
    ["saturating gain 3 threshold 0.5", { kind: "noisy", base: { kind: "saturating", gain: 3, threshold: 0.5 }, sigma: 0.4 }, (t) => saturating(t, 3, 0.5), 0.4, [0, 0.5, 1.2]],
    ["softplus gain 4", { kind: "noisy", base: { kind: "softplus", gain: 4 }, sigma: 0.5 }, (t) => softplus(t, 4), 0.5, [-0.5, 0, 0.7]],
  ];
  it.each(cases)("%s: table within 5 standard errors of a 100000-sample mean", (name, spec, f, sigma, xs) => {
    const unit = createUnit(spec);
    const rng = createRandom(20240611).child(`noisy-mc/${name}`);
    const n = 100_000;
    for (const x of xs) {
      let sum = 0;
      let sum2 = 0;
      for (let i = 0; i < n; i++) {
        const v = f(x + sigma * rng.normal());
        sum += v;
        sum2 += v * v;
      }
      const mean = sum / n;
      const se = Math.sqrt((sum2 / n - mean * mean) / n);
      expect(Math.abs(unit.value(x) - mean), `${name} x=${x} mean=${mean} se=${se}`).toBeLessThan(5 * se);
    }
  });
});

describe("nested noise", () => {
  it("noisy(noisy(f, s1), s2) equals noisy(f, sqrt(s1^2 + s2^2)) (independent Gaussian variances add)", () => {
    const nested = createUnit({ kind: "noisy", base: { kind: "noisy", base: { kind: "relu" }, sigma: 0.3 }, sigma: 0.4 });
    for (const x of [-2, -0.5, 0, 0.25, 1, 3]) {
      expectClose(nested.value(x), noisyReluClosedForm(x, 0.5), 1e-10, `x=${x}`);
      expectClose(nested.slope(x), normalCdf(x / 0.5), 1e-7, `slope x=${x}`);
    }
    expect(tabulateNoisyRate({ kind: "noisy", base: { kind: "noisy", base: { kind: "relu" }, sigma: 0.3 }, sigma: 0.4 }).sigma).toBeCloseTo(0.5, 15);
  });
});

describe("beyond the table", () => {
  it("joins continuously at both ends", () => {
    const unit = createUnit({ kind: "noisy", base: { kind: "logistic" }, sigma: 1, range: [-3, 4], resolution: 200 });
    for (const edge of [-3, 4]) {
      const eps = 1e-9;
      expectClose(unit.value(edge - eps), unit.value(edge + eps), 1e-8, `edge ${edge}`);
    }
  });
  it("clamps into the base's bounds when a narrow user range leaves a shift that would cross them (slope 0 there)", () => {
    // saturating base, table only on [2, 3] where the average lies below the base (concave part):
    // the shifted base alone would go negative below the threshold.
    const unit = createUnit({ kind: "noisy", base: { kind: "saturating" }, sigma: 1, range: [2, 3], resolution: 32 });
    expect(unit.value(-5)).toBe(0);
    expect(unit.slope(-5)).toBe(0);
    expect(unit.value(50)).toBeLessThanOrEqual(1);
  });
  it("noisyRate and noisyRateSlope read the same table as the unit object", () => {
    const spec = { kind: "noisy", base: { kind: "softplus", gain: 2 }, sigma: 0.5, resolution: 100 } as const;
    const table = tabulateNoisyRate(spec);
    const unit = createUnit(spec);
    expect(unit.spec).toEqual(table.spec);
    expect(table.values.length).toBe(100);
    expect(table.step).toBeCloseTo((table.high - table.low) / 99, 14);
    for (const x of [-30, -2, 0, 1.234, 30]) {
      expect(noisyRate(table, x)).toBe(unit.value(x));
      expect(noisyRateSlope(table, x)).toBe(unit.slope(x));
    }
  });
});
