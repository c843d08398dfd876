import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { exponentialTrace, type TraceMethod } from "../../src/traces/index.js";
import { expectEbbflowError } from "./expect-error.js";
import { check } from "../helpers/property.js";
import { expectClose, EPS64 } from "../helpers/tolerance.js";

const tauArb = fc.double({ min: 0.05, max: 200, noNaN: true });
const valueArb = fc.double({ min: -1e3, max: 1e3, noNaN: true });
const methodArb = fc.constantFrom<TraceMethod>("exact", "euler");

describe("exponentialTrace: published check values", () => {
  it("exact step response at n = 10 (tau = 10, dt = 1) is 0.632120559", () => {
    // methods.md item 13 [DER]: exact y[10] = 1 - exp(-1) = 0.632120559
    const t = exponentialTrace({ tau: 10, dt: 1 });
    for (let k = 0; k < 10; k++) t.update(1);
    expectClose(t.value, 0.632120559, 1e-9, "y[10]");
  });

  it("Euler step response at n = 10 (tau = 10, dt = 1) is 0.651321560", () => {
    // methods.md item 13 [DER]: Euler y[10] = 1 - 0.9^10 = 0.651321560
    const t = exponentialTrace({ tau: 10, dt: 1, method: "euler" });
    for (let k = 0; k < 10; k++) t.update(1);
    expectClose(t.value, 0.65132156, 1e-9, "y[10]");
  });

  it("step response equals 1 - (1 - a)^n for any tau, dt, method and n", () => {
    // methods.md item 13 [DER]: y[n] = 1 - (1 - a)^n
    check(
      fc.property(tauArb, fc.double({ min: 0.01, max: 1, noNaN: true }), methodArb, fc.integer({ min: 1, max: 300 }), (tau, frac, method, n) => {
        const t = exponentialTrace({ tau, dt: frac * tau, method });
        for (let k = 0; k < n; k++) t.update(1);
        expectClose(t.value, 1 - (1 - t.coefficient) ** n, 1e-12, "y[n]");
      }),
    );
  });

  it("exact step response equals the continuous solution 1 - exp(-t/tau) at t = n dt", () => {
    // methods.md item 13 [DER]: exact discretisation matches the ODE at the sample times
    check(
      fc.property(tauArb, fc.double({ min: 0.001, max: 3, noNaN: true }), fc.integer({ min: 1, max: 200 }), (tau, frac, n) => {
        const dt = frac * tau;
        const t = exponentialTrace({ tau, dt });
        for (let k = 0; k < n; k++) t.update(1);
        expectClose(t.value, 1 - Math.exp((-n * dt) / tau), 1e-12, "y(n dt)");
      }),
    );
  });

  it("half-life is tau ln 2", () => {
    // methods.md item 13 [DER]: t_1/2 = tau ln 2 (exact discretisation is exact at sample times)
    const tau = 3;
    const t = exponentialTrace({ tau, dt: tau * Math.LN2, initial: 1 });
    expectClose(t.update(0), 0.5, 4 * EPS64, "y(t_1/2)");
  });
});

describe("exponentialTrace: properties", () => {
  it("output stays within the range of the initial state and the input history (no overshoot for dt/tau <= 1)", () => {
    // methods.md item 13 [DER]: the step is a convex combination when 0 < a <= 1 (Euler monotone for dt/tau <= 1)
    check(
      fc.property(tauArb, fc.double({ min: 0.01, max: 1, noNaN: true }), methodArb, valueArb, fc.array(valueArb, { minLength: 1, maxLength: 60 }), (tau, frac, method, y0, xs) => {
        const t = exponentialTrace({ tau, dt: frac * tau, method, initial: y0 });
        let lo = y0;
        let hi = y0;
        for (const x of xs) {
          lo = Math.min(lo, x);
          hi = Math.max(hi, x);
          const y = t.update(x);
          const slack = 4 * EPS64 * Math.max(Math.abs(lo), Math.abs(hi));
          expect(y).toBeGreaterThanOrEqual(lo - slack);
          expect(y).toBeLessThanOrEqual(hi + slack);
        }
      }),
    );
  });

  it("is linear: filtering alpha x + beta z from alpha y0 + beta z0 gives alpha Fx + beta Fz", () => {
    // superposition for a linear time-invariant filter (methods.md item 13 [DER]: linear recursion)
    check(
      fc.property(
        tauArb,
        fc.double({ min: 0.01, max: 1.5, noNaN: true }),
        methodArb,
        fc.double({ min: -10, max: 10, noNaN: true }),
        fc.double({ min: -10, max: 10, noNaN: true }),
        fc.array(fc.tuple(valueArb, valueArb), { minLength: 1, maxLength: 50 }),
        valueArb,
        valueArb,
        (tau, frac, method, alpha, beta, pairs, y0, z0) => {
          const opts = { tau, dt: frac * tau, method };
          const fx = exponentialTrace({ ...opts, initial: y0 });
          const fz = exponentialTrace({ ...opts, initial: z0 });
          const fs = exponentialTrace({ ...opts, initial: alpha * y0 + beta * z0 });
          const scale = (Math.abs(alpha) + Math.abs(beta)) * 1e3;
          for (const [x, z] of pairs) {
            const a = fx.update(x);
            const b = fz.update(z);
            const s = fs.update(alpha * x + beta * z);
            expect(Math.abs(s - (alpha * a + beta * b))).toBeLessThanOrEqual(1e-12 * Math.max(1, scale));
          }
        },
      ),
    );
  });

  it("a constant input equal to the state is an exact fixed point", () => {
    // methods.md item 13 [DER]: x = y gives dy = a (x - y) = 0
    check(
      fc.property(tauArb, fc.double({ min: 0.01, max: 1.9, noNaN: true }), methodArb, valueArb, fc.integer({ min: 1, max: 50 }), (tau, frac, method, c, steps) => {
        const t = exponentialTrace({ tau, dt: frac * tau, method, initial: c });
        for (let k = 0; k < steps; k++) expect(t.update(c) === c).toBe(true);
      }),
    );
  });

  it("a constant input is approached geometrically: |y - c| shrinks by |1 - a| per step", () => {
    // methods.md item 13 [DER]: y[k] - c = (1 - a)^k (y[0] - c)
    check(
      fc.property(tauArb, fc.double({ min: 0.01, max: 1.9, noNaN: true }), methodArb, valueArb, valueArb, fc.integer({ min: 1, max: 40 }), (tau, frac, method, c, y0, n) => {
        const t = exponentialTrace({ tau, dt: frac * tau, method, initial: y0 });
        for (let k = 0; k < n; k++) t.update(c);
        expectClose(t.value - c, (1 - t.coefficient) ** n * (y0 - c), 1e-10 * 2e3, "y[n] - c");
      }),
    );
  });
});

describe("exponentialTrace: state", () => {
  it("reset sets the output; saveState/loadState round-trip through JSON", () => {
    const t = exponentialTrace({ tau: 7, dt: 0.5 });
    t.update(3);
    t.update(-1);
    const saved = JSON.parse(JSON.stringify(t.saveState())) as ReturnType<typeof t.saveState>;
    const next = t.update(2);
    t.loadState(saved);
    expect(t.update(2)).toBe(next);
    t.reset(0.25);
    expect(t.value).toBe(0.25);
    t.reset();
    expect(t.value).toBe(0);
  });

  it("loadState rejects a wrong length or a non-finite value and leaves the state untouched", () => {
    const t = exponentialTrace({ tau: 2, initial: 0.5 });
    expectEbbflowError(() => t.loadState({ values: [1, 2] }), "shape_mismatch", "state.values");
    expectEbbflowError(() => t.loadState({ values: [Number.NaN] }), "invalid_parameter", "state.values[0]");
    expectEbbflowError(() => t.loadState({ values: [Number.POSITIVE_INFINITY] }), "invalid_parameter", "state.values[0]");
    expectEbbflowError(() => t.loadState({} as never), "invalid_parameter", "state.values");
    expect(t.value).toBe(0.5);
  });

  it("rejects bad parameters with invalid_parameter naming them", () => {
    const cases: [() => unknown, string][] = [
      [() => exponentialTrace({ tau: -1 }), "tau"],
      [() => exponentialTrace({ tau: Number.NaN }), "tau"],
      [() => exponentialTrace({ tau: 1, dt: 0 }), "dt"],
      [() => exponentialTrace({ tau: 1, dt: Number.POSITIVE_INFINITY }), "dt"],
      [() => exponentialTrace({ tau: 1, dt: 2.5, method: "euler" }), "dt"],
      [() => exponentialTrace({ tau: 1, initial: Number.NaN }), "initial"],
      [() => exponentialTrace({ tau: 1 }).reset(Number.NEGATIVE_INFINITY), "value"],
    ];
    for (const [fn, path] of cases) expectEbbflowError(fn, "invalid_parameter", path);
  });
});
