/**
 * Conductance-based point neuron and leaky integrate-and-fire rate
 * (methods.md item 10a/10b).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import {
  conductanceRate,
  conductanceRateSlope,
  createConductanceRate,
  effectiveTimeConstant,
  lifRate,
  lifRateSlope,
  steadyStatePotential,
  thresholdExcitatoryConductance,
  type LifParams,
} from "../../src/units/index.js";
import { check } from "../helpers/property.js";
import { EPS64, expectClose } from "../helpers/tolerance.js";

function expectParameterError(run: () => unknown, path: string): void {
  try {
    run();
    expect.unreachable(`expected invalid_parameter at ${path}`);
  } catch (e) {
    expect(e).toBeInstanceOf(EbbflowError);
    expect((e as EbbflowError).code).toBe("invalid_parameter");
    expect((e as EbbflowError).path).toBe(path);
  }
}

// methods.md item 10a [DER]: g_e = 10 nS, g_i = 5 nS, g_L = 10 nS, E_e = 0, E_i = -80, E_L = -70 mV, C = 200 pF
const item10a = { gExc: 10, gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70 } as const;

describe("steady-state potential and effective time constant (methods.md item 10a)", () => {
  it("V_ss = (0 - 400 - 700)/25 = -44 mV [DER, methods.md 10a]", () => {
    expectClose(steadyStatePotential(item10a), -44, 1e-12);
  });
  it("tau_eff = 200 pF / 25 nS = 8 ms [DER, methods.md 10a]", () => {
    expectClose(effectiveTimeConstant(200, item10a), 8, 1e-12);
  });
  it("is a conductance-weighted mean: between the lowest and highest reversal potential without current", () => {
    const g = fc.double({ min: 0, max: 100, noNaN: true });
    const e = fc.double({ min: -100, max: 50, noNaN: true });
    check(
      fc.property(g, g, fc.double({ min: 0.1, max: 100, noNaN: true }), e, e, e, (gExc, gInh, gLeak, eExc, eInh, eLeak) => {
        const v = steadyStatePotential({ gExc, gInh, gLeak, eExc, eInh, eLeak });
        expect(v).toBeGreaterThanOrEqual(Math.min(eExc, eInh, eLeak) - 1e-9);
        expect(v).toBeLessThanOrEqual(Math.max(eExc, eInh, eLeak) + 1e-9);
      }),
    );
  });
  it("is the fixed point of C dV/dt = sum g_k (E_k - V) + I: the right-hand side vanishes there", () => {
    const g = fc.double({ min: 0, max: 50, noNaN: true });
    check(
      fc.property(g, g, fc.double({ min: 0.5, max: 50, noNaN: true }), fc.double({ min: -500, max: 500, noNaN: true }), (gExc, gInh, gLeak, current) => {
        const p = { gExc, gInh, gLeak, eExc: 0, eInh: -75, eLeak: -65, current };
        const v = steadyStatePotential(p);
        const drive = gLeak * (p.eLeak - v) + gExc * (p.eExc - v) + gInh * (p.eInh - v) + current;
        expect(Math.abs(drive)).toBeLessThan(1e-9 * (1 + Math.abs(current) + 75 * (gExc + gInh + gLeak)));
      }),
    );
  });
  it("adds current/total conductance for an injected current (pA / nS = mV) [DER]", () => {
    expectClose(steadyStatePotential({ ...item10a, current: 50 }), -44 + 50 / 25, 1e-12);
  });
  it("rejects bad parameters, naming each", () => {
    expectParameterError(() => steadyStatePotential({ ...item10a, gExc: -1 }), "gExc");
    expectParameterError(() => steadyStatePotential({ ...item10a, gInh: Number.NaN }), "gInh");
    expectParameterError(() => steadyStatePotential({ ...item10a, gLeak: 0 }), "gLeak");
    expectParameterError(() => steadyStatePotential({ ...item10a, eInh: -Infinity }), "eInh");
    expectParameterError(() => steadyStatePotential({ ...item10a, current: Number.NaN }), "current");
    expectParameterError(() => effectiveTimeConstant(0, item10a), "capacitance");
    expectParameterError(() => effectiveTimeConstant(Number.NaN, item10a), "capacitance");
    expectParameterError(() => effectiveTimeConstant(200, { ...item10a, gLeak: -3 }), "gLeak");
  });
});

// g_i, g_L and potentials of item 10a with a threshold of -50 mV:
// g_e* = (10 (-50 + 70) + 5 (-50 + 80)) / (0 + 50) = (200 + 150) / 50 = 7 nS [DER, arithmetic here]
const thresholdParams = { gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70, threshold: -50 } as const;

describe("threshold excitatory conductance", () => {
  it("is 7 nS for the item-10a conductances and a -50 mV threshold [DER]", () => {
    expectClose(thresholdExcitatoryConductance(thresholdParams), 7, 1e-14);
  });
  it("holds V_ss exactly at threshold (defining equation)", () => {
    const g = fc.double({ min: 0, max: 50, noNaN: true });
    check(
      fc.property(g, fc.double({ min: 0.5, max: 50, noNaN: true }), fc.double({ min: -60, max: -40, noNaN: true }), fc.double({ min: -200, max: 200, noNaN: true }), (gInh, gLeak, threshold, current) => {
        const p = { gInh, gLeak, eExc: 0, eInh: -80, eLeak: -70, threshold, current };
        const gExc = thresholdExcitatoryConductance(p);
        if (gExc < 0) return; // already above threshold without excitation
        const v = steadyStatePotential({ gExc, gInh, gLeak, eExc: 0, eInh: -80, eLeak: -70, current });
        expectClose(v, threshold, 1e-11, `gExc=${gExc}`);
      }),
    );
  });
  it("is negative when the rest of the membrane already sits above threshold", () => {
    expect(thresholdExcitatoryConductance({ ...thresholdParams, threshold: -75, gInh: 0 })).toBeLessThan(0);
  });
  it("rejects a threshold at or above the excitatory reversal potential, and bad fields", () => {
    expectParameterError(() => thresholdExcitatoryConductance({ ...thresholdParams, threshold: 0 }), "eExc");
    expectParameterError(() => thresholdExcitatoryConductance({ ...thresholdParams, threshold: Number.NaN }), "threshold");
    expectParameterError(() => thresholdExcitatoryConductance({ ...thresholdParams, gLeak: -1 }), "gLeak");
  });
});

describe("conductance rate (saturating read-out of g_e above g_e*)", () => {
  const p = { ...thresholdParams, gain: 0.5 };
  it("is 0 up to g_e* = 7 nS and one half at 1/gain = 2 nS above it [DER]", () => {
    expect(conductanceRate(0, p)).toBe(0);
    expect(conductanceRate(7, p)).toBe(0);
    expectClose(conductanceRate(9, p), 0.5, EPS64);
    expectClose(conductanceRateSlope(9, p), 0.125, EPS64);
    expect(conductanceRateSlope(7, p)).toBe(0.5);
    expect(conductanceRateSlope(6.9, p)).toBe(0);
  });
  it("is positive exactly when V_ss is above threshold", () => {
    check(
      fc.property(fc.double({ min: 0, max: 40, noNaN: true }), (gExc) => {
        const above = steadyStatePotential({ gExc, gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70 }) > -50 + 1e-9;
        const below = steadyStatePotential({ gExc, gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70 }) < -50 - 1e-9;
        const r = conductanceRate(gExc, p);
        if (above) expect(r).toBeGreaterThan(0);
        if (below) expect(r).toBe(0);
      }),
    );
  });
  it("is non-decreasing, in [0, 1), with slope equal to a centred finite difference away from g_e*", () => {
    const r = createConductanceRate(p);
    expect(r.thresholdConductance).toBeCloseTo(7, 14);
    check(
      fc.property(fc.double({ min: 0, max: 1000, noNaN: true }), fc.double({ min: 0, max: 1000, noNaN: true }), (a, b) => {
        const [lo, hi] = a <= b ? [a, b] : [b, a];
        expect(r.value(lo)).toBeLessThanOrEqual(r.value(hi));
        expect(r.value(hi)).toBeGreaterThanOrEqual(0);
        expect(r.value(hi)).toBeLessThan(1);
        const h = 1e-5 * Math.max(1, a);
        if (Math.abs(a - 7) > 4 * h) expectClose(r.slope(a), (r.value(a + h) - r.value(a - h)) / (2 * h), 1e-6, `g=${a}`);
      }),
    );
  });
  it("rejects bad gain and conductance", () => {
    expectParameterError(() => conductanceRate(9, { ...p, gain: 0 }), "gain");
    expectParameterError(() => conductanceRate(-1, p), "gExc");
    expectParameterError(() => conductanceRateSlope(Number.NaN, p), "gExc");
    expectParameterError(() => createConductanceRate({ ...p, gain: Number.NaN }), "gain");
  });
});

// methods.md item 10b: tau_m = 10 ms, E_L = V_reset = -65 mV, V_th = -50 mV, R = 10 MOhm
// (parameters D&A-style [MEM]; rates [DER])
const lif = { resistance: 10, tauM: 10, eLeak: -65, vThreshold: -50, vReset: -65 } as const;

describe("leaky integrate-and-fire rate (methods.md item 10b)", () => {
  it.each([
    [1.5, 0, 0],
    [1.5, 2, 0],
    [2, 0, 72.134752],
    [2, 2, 63.040002],
    [3, 0, 144.269504],
    [3, 2, 111.963629],
  ])("I = %s nA, t_ref = %s ms gives %s Hz [DER, methods.md 10b]", (current, refractory, hz) => {
    // table values are printed to 6 decimals
    expect(Math.abs(lifRate({ ...lif, current, refractory }) - hz)).toBeLessThan(5e-7);
  });
  it("gives exactly 0 at the rheobase (V_th - E_L)/R = 1.5 nA and below", () => {
    expect(lifRate({ ...lif, current: 1.5 })).toBe(0);
    expect(lifRate({ ...lif, current: -3 })).toBe(0);
    expect(lifRateSlope({ ...lif, current: 1.5 })).toBe(0);
  });
  it("approaches the large-current form (RI + E_L - (V_th + V_reset)/2) / (tau_m (V_th - V_reset)), error -> 0 like Delta/(12 a tau_m) [DER, methods.md 10b]", () => {
    // a = RI + E_L - V_reset, Delta = V_th - V_reset, u = Delta/a. With the Gregory series
    // 1/(-ln(1-u)) = 1/u - 1/2 - u/12 - u^2/24 - ... (from memory), the error of the large-current
    // form is (1000/tau_m)(u/12 + u^2/24 + O(u^3)), i.e. its leading term times 1 + u/2 + O(u^2).
    const delta = lif.vThreshold - lif.vReset;
    let previous = Infinity;
    for (const current of [5, 10, 20, 40, 80, 160, 320, 640]) {
      const a = lif.resistance * current + lif.eLeak - lif.vReset;
      const u = delta / a;
      const approx = (1000 * (a - delta / 2)) / (lif.tauM * delta);
      const err = Math.abs(lifRate({ ...lif, current }) - approx);
      expect(err).toBeLessThan(previous);
      const leading = (1000 * u) / (12 * lif.tauM);
      expectClose(err / leading, 1 + u / 2, u * u, `I=${current}`);
      previous = err;
    }
  });
  it("is non-decreasing in the current, below 1/t_ref, with slope equal to a centred finite difference above rheobase", () => {
    check(
      fc.property(fc.double({ min: -5, max: 100, noNaN: true }), fc.double({ min: -5, max: 100, noNaN: true }), fc.double({ min: 0, max: 5, noNaN: true }), (a, b, refractory) => {
        const [lo, hi] = a <= b ? [a, b] : [b, a];
        const p: LifParams = { ...lif, current: lo, refractory };
        const q: LifParams = { ...lif, current: hi, refractory };
        expect(lifRate(p)).toBeLessThanOrEqual(lifRate(q));
        if (refractory > 0) expect(lifRate(q)).toBeLessThan(1000 / refractory);
        if (lo > 1.6) {
          const h = 1e-6 * lo;
          const fd = (lifRate({ ...p, current: lo + h }) - lifRate({ ...p, current: lo - h })) / (2 * h);
          expectClose(lifRateSlope(p), fd, 1e-5, `I=${lo} tref=${refractory}`);
        }
      }),
    );
  });
  it("rejects bad parameters, naming each", () => {
    expectParameterError(() => lifRate({ ...lif, current: Number.NaN }), "current");
    expectParameterError(() => lifRate({ ...lif, current: 2, resistance: 0 }), "resistance");
    expectParameterError(() => lifRate({ ...lif, current: 2, tauM: -1 }), "tauM");
    expectParameterError(() => lifRate({ ...lif, current: 2, vReset: -50 }), "vReset");
    expectParameterError(() => lifRate({ ...lif, current: 2, refractory: -1 }), "refractory");
    expectParameterError(() => lifRate({ ...lif, current: 2, eLeak: Infinity }), "eLeak");
    expectParameterError(() => lifRateSlope({ ...lif, current: 2, vThreshold: Number.NaN }), "vThreshold");
  });
});
