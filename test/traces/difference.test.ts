import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { traceDifference, vectorTrace } from "../../src/traces/index.js";
import { check } from "../helpers/property.js";
import { expectEbbflowError } from "./expect-error.js";

const pairArb = fc
  .integer({ min: 0, max: 16 })
  .chain((n) =>
    fc.tuple(
      fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), { minLength: n, maxLength: n }),
      fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), { minLength: n, maxLength: n }),
    ),
  );

describe("traceDifference", () => {
  it("writes fast - slow elementwise into out and returns out", () => {
    // definition: IEEE-754 subtraction, correctly rounded
    check(
      fc.property(pairArb, ([fast, slow]) => {
        const out = new Float64Array(fast.length);
        const r = traceDifference(out, Float64Array.from(fast), Float64Array.from(slow));
        expect(r).toBe(out);
        for (let i = 0; i < fast.length; i++) expect(out[i]).toBe((fast[i] as number) - (slow[i] as number));
      }),
    );
  });

  it("is antisymmetric and zero for equal traces", () => {
    // algebra of subtraction: a - b = -(b - a), a - a = 0
    check(
      fc.property(pairArb, ([fast, slow]) => {
        const f = Float64Array.from(fast);
        const s = Float64Array.from(slow);
        const d1 = traceDifference(new Float64Array(f.length), f, s);
        const d2 = traceDifference(new Float64Array(f.length), s, f);
        const d0 = traceDifference(new Float64Array(f.length), f, f);
        for (let i = 0; i < f.length; i++) {
          expect(d1[i] === -(d2[i] as number)).toBe(true);
          expect(d0[i]).toBe(0);
        }
      }),
    );
  });

  it("out may alias fast or slow", () => {
    // aliasing contract (style.md, gl-matrix): each element is read before it is written
    const fast = new Float64Array([1, 2, 3]);
    const slow = new Float64Array([0.5, 4, -1]);
    traceDifference(fast, fast, slow);
    expect(Array.from(fast)).toEqual([0.5, -2, 4]);
    const f2 = new Float64Array([1, 2, 3]);
    traceDifference(slow, f2, slow);
    expect(Array.from(slow)).toEqual([0.5, -2, 4]);
  });

  it("keeps the output precision and works on live trace views (band-pass of a step)", () => {
    // methods.md item 13 [DER]: exact step responses 1 - exp(-n dt/tau); their difference is exp(-n/tau_s) - exp(-n/tau_f)
    const fast = vectorTrace({ tau: 2, n: 1, dtype: "float32" });
    const slow = vectorTrace({ tau: 20, n: 1, dtype: "float32" });
    const out = new Float32Array(1);
    const one = new Float32Array([1]);
    for (let k = 0; k < 5; k++) {
      fast.update(one);
      slow.update(one);
    }
    traceDifference(out, fast.value, slow.value);
    expect(out).toBeInstanceOf(Float32Array);
    expect(out[0]).toBeCloseTo(Math.exp(-5 / 20) - Math.exp(-5 / 2), 6);
  });

  it("rejects arrays of different lengths", () => {
    expectEbbflowError(() => traceDifference(new Float64Array(2), new Float64Array(3), new Float64Array(2)), "shape_mismatch", "fast");
    expectEbbflowError(() => traceDifference(new Float64Array(2), new Float64Array(2), new Float32Array(1)), "shape_mismatch", "slow");
  });
});
