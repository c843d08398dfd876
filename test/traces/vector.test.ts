import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { exponentialTrace, vectorTrace, type TraceMethod } from "../../src/traces/index.js";
import { check } from "../helpers/property.js";
import { expectClose, EPS32 } from "../helpers/tolerance.js";
import { expectEbbflowError } from "./expect-error.js";

const methodArb = fc.constantFrom<TraceMethod>("exact", "euler");
const valueArb = fc.double({ min: -100, max: 100, noNaN: true });

describe("vectorTrace", () => {
  it("a float64 bank equals n independent scalar traces, bit for bit", () => {
    // the vector step is the scalar step of methods.md item 13 applied per unit
    check(
      fc.property(
        fc.double({ min: 0.1, max: 100, noNaN: true }),
        fc.double({ min: 0.01, max: 1.9, noNaN: true }),
        methodArb,
        fc.integer({ min: 1, max: 8 }),
        fc.array(valueArb, { minLength: 8 * 20, maxLength: 8 * 20 }),
        valueArb,
        (tau, frac, method, n, flat, initial) => {
          const opts = { tau, dt: frac * tau, method, initial };
          const bank = vectorTrace({ ...opts, n });
          const scalars = Array.from({ length: n }, () => exponentialTrace(opts));
          const input = new Float64Array(n);
          for (let step = 0; step < 20; step++) {
            for (let i = 0; i < n; i++) input[i] = flat[step * 8 + i] as number;
            const out = bank.update(input);
            expect(out).toBe(bank.value);
            for (let i = 0; i < n; i++) expect(out[i]).toBe((scalars[i] as ReturnType<typeof exponentialTrace>).update(input[i] as number));
          }
        },
      ),
    );
  });

  it("a float32 bank tracks the float64 bank within float32 rounding", () => {
    // precision choice by type (style.md practice 9); each step adds at most ~1 ulp of float32 relative error, and the filter contracts old errors
    check(
      fc.property(fc.double({ min: 1, max: 50, noNaN: true }), methodArb, fc.array(valueArb, { minLength: 4 * 50, maxLength: 4 * 50 }), (tau, method, flat) => {
        const n = 4;
        const b32 = vectorTrace({ tau, method, n, dtype: "float32" });
        const b64 = vectorTrace({ tau, method, n, dtype: "float64" });
        expect(b32.value).toBeInstanceOf(Float32Array);
        expect(b64.value).toBeInstanceOf(Float64Array);
        const x32 = new Float32Array(n);
        const x64 = new Float64Array(n);
        for (let step = 0; step < 50; step++) {
          for (let i = 0; i < n; i++) x64[i] = x32[i] = Math.fround(flat[step * n + i] as number);
          b32.update(x32);
          b64.update(x64);
        }
        for (let i = 0; i < n; i++) expectClose(b32.value[i] as number, b64.value[i] as number, 100 * 4 * EPS32, `y[${i}]`);
      }),
    );
  });

  it("a constant input equal to the state is a fixed point (input may alias the state)", () => {
    // methods.md item 13 [DER]: x = y is an equilibrium
    const t = vectorTrace({ tau: 3, n: 5, dtype: "float32", initial: 0.7 });
    const before = Float32Array.from(t.value);
    t.update(t.value);
    expect(Array.from(t.value)).toEqual(Array.from(before));
  });

  it("exposes a live view that update writes into, and reset fills", () => {
    const t = vectorTrace({ tau: 10, n: 3 });
    const view = t.value;
    t.update(new Float64Array([1, 2, 3]));
    expect(t.value).toBe(view);
    // methods.md item 13 [DER]: one exact step from 0 gives a x, a = 0.095162582 (tau = 10, dt = 1)
    expectClose(view[2] as number, 3 * 0.095162582, 1e-8, "y[2]");
    t.reset(2);
    expect(Array.from(view)).toEqual([2, 2, 2]);
  });

  it("saveState/loadState round-trip through JSON, for float32 exactly", () => {
    const t = vectorTrace({ tau: 4, n: 3, dtype: "float32" });
    t.update(new Float32Array([0.1, -0.2, 0.3]));
    const saved = JSON.parse(JSON.stringify(t.saveState())) as ReturnType<typeof t.saveState>;
    const expected = Float32Array.from(t.update(new Float32Array([1, 1, 1])));
    t.loadState(saved);
    expect(Array.from(t.update(new Float32Array([1, 1, 1])))).toEqual(Array.from(expected));
  });

  it("loadState validates length and finiteness and leaves the state untouched on failure", () => {
    const t = vectorTrace({ tau: 4, n: 3, initial: 0.5 });
    expectEbbflowError(() => t.loadState({ values: [1, 2] }), "shape_mismatch", "state.values");
    expectEbbflowError(() => t.loadState({ values: [1, 2, Number.NaN] }), "invalid_parameter", "state.values[2]");
    expectEbbflowError(() => t.loadState({ values: [1, "2", 3] as never }), "invalid_parameter", "state.values[1]");
    expect(Array.from(t.value)).toEqual([0.5, 0.5, 0.5]);
  });

  it("update rejects an input of the wrong length", () => {
    const t = vectorTrace({ tau: 4, n: 3 });
    expectEbbflowError(() => t.update(new Float64Array(4)), "shape_mismatch", "input");
  });

  it("rejects bad parameters naming them", () => {
    expectEbbflowError(() => vectorTrace({ tau: 0, n: 3 }), "invalid_parameter", "tau");
    expectEbbflowError(() => vectorTrace({ tau: 1, dt: -1, n: 3 }), "invalid_parameter", "dt");
    expectEbbflowError(() => vectorTrace({ tau: 1, n: 0 }), "invalid_parameter", "n");
    expectEbbflowError(() => vectorTrace({ tau: 1, n: 2.5 }), "invalid_parameter", "n");
    expectEbbflowError(() => vectorTrace({ tau: 1, n: 2, dtype: "float16" as never }), "invalid_parameter", "dtype");
    expectEbbflowError(() => vectorTrace({ tau: 1, n: 2, initial: Number.POSITIVE_INFINITY }), "invalid_parameter", "initial");
    expectEbbflowError(() => vectorTrace({ tau: 1, n: 2 }).reset(Number.NaN), "invalid_parameter", "value");
  });
});
