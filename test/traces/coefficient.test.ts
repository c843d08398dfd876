import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { smoothingCoefficient } from "../../src/traces/index.js";
import { expectEbbflowError } from "./expect-error.js";
import { check } from "../helpers/property.js";
import { expectClose, EPS64 } from "../helpers/tolerance.js";

function expectParameterError(fn: () => unknown, path: string): void {
  expectEbbflowError(fn, "invalid_parameter", path);
}

describe("smoothingCoefficient", () => {
  it("exact coefficient for tau = 10, dt = 1 is 0.095162582", () => {
    // methods.md item 13 [DER]: a = 1 - exp(-dt/tau) = 0.095162582
    expectClose(smoothingCoefficient(10, 1), 0.095162582, 1e-9, "a");
  });

  it("Euler coefficient is dt/tau", () => {
    // methods.md item 13 [DER]: Euler y[k+1] = y[k] + (dt/tau)(x[k] - y[k])
    expect(smoothingCoefficient(10, 1, "euler")).toBe(0.1);
    expect(smoothingCoefficient(5, 1, "euler")).toBe(0.2);
  });

  it("exact coefficient equals 1 - exp(-dt/tau) and lies in (0, 1)", () => {
    // methods.md item 13 [DER]: zero-order-hold coefficient
    check(
      fc.property(fc.double({ min: 1e-3, max: 1e3, noNaN: true }), fc.double({ min: 1e-3, max: 1e3, noNaN: true }), (tau, dt) => {
        const a = smoothingCoefficient(tau, dt);
        expect(a).toBeGreaterThan(0);
        expect(a).toBeLessThanOrEqual(1);
        expectClose(a, 1 - Math.exp(-dt / tau), 4 * EPS64, "a");
      }),
    );
  });

  it("exact coefficient agrees with Euler to second order: a = r - r^2/2 + O(r^3)", () => {
    // methods.md item 13 [DER]: a = dt/tau - (dt/tau)^2/2 + ...
    check(
      fc.property(fc.double({ min: 1e-6, max: 1e-2, noNaN: true }), (r) => {
        const a = smoothingCoefficient(1, r);
        expect(Math.abs(a - (r - (r * r) / 2))).toBeLessThanOrEqual((r * r * r) / 6 + 4 * EPS64 * r);
      }),
    );
  });

  it("keeps full relative precision for tiny dt/tau (expm1)", () => {
    // Taylor series of 1 - exp(-r) (textbook): for r = 1e-12, a = r (1 - r/2) to double precision
    const r = 1e-12;
    expectClose(smoothingCoefficient(1, r) / r, 1 - r / 2, 4 * EPS64, "a/r");
  });

  it("rejects tau <= 0, NaN and infinite tau, naming tau", () => {
    for (const tau of [0, -1, Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY]) {
      expectParameterError(() => smoothingCoefficient(tau, 1), "tau");
    }
  });

  it("rejects dt <= 0, NaN and infinite dt, naming dt", () => {
    for (const dt of [0, -0.5, Number.NaN, Number.POSITIVE_INFINITY]) {
      expectParameterError(() => smoothingCoefficient(10, dt), "dt");
    }
  });

  it("rejects an unstable Euler step dt/tau >= 2, naming dt and its value", () => {
    // methods.md item 13 [DER]: Euler is stable for 0 < dt/tau < 2
    expect(expectEbbflowError(() => smoothingCoefficient(1, 2, "euler"), "invalid_parameter", "dt").received).toBe("2");
    expectParameterError(() => smoothingCoefficient(1, 3, "euler"), "dt");
    expect(smoothingCoefficient(1, 1.999, "euler")).toBeCloseTo(1.999, 12);
  });

  it("rejects an unknown method, naming method", () => {
    expectParameterError(() => smoothingCoefficient(1, 1, "midpoint" as never), "method");
  });

  it("rejects a ratio dt/tau that underflows the coefficient", () => {
    expectParameterError(() => smoothingCoefficient(1e300, 1e-300), "dt");
  });
});
