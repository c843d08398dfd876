import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { allFinite, dot, maxAbs, maxAbsDiff, sumSquares } from "../../src/kernels/index.js";
import { check } from "../helpers/property.js";
import { arb, epsOf, expectWithinBound, randomArray } from "./reference.js";

const len = fc.integer({ min: 0, max: 40 });
const nonFinite = fc.constantFrom(Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY);

describe("reductions", () => {
  it("maxAbsDiff and maxAbs equal the maximum taken by the definition exactly (a maximum has no rounding)", () => {
    check(
      fc.property(len, arb.dtype, arb.seed, (n, dtype, seed) => {
        const a = randomArray(dtype, n, seed, "a");
        const b = randomArray(dtype, n, seed, "b");
        let d = 0;
        let m = 0;
        for (let i = 0; i < n; i++) {
          d = Math.max(d, Math.abs((a[i] as number) - (b[i] as number)));
          m = Math.max(m, Math.abs(a[i] as number));
        }
        expect(maxAbsDiff(a, b)).toBe(d);
        expect(maxAbs(a)).toBe(m);
      }),
      200,
    );
  });

  it("maxAbsDiff returns NaN when either input holds a NaN at any position (not silently skipped)", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 40 }), fc.nat(), fc.boolean(), arb.dtype, arb.seed, (n, where, inB, dtype, seed) => {
        const a = randomArray(dtype, n, seed, "a");
        const b = randomArray(dtype, n, seed, "b");
        (inB ? b : a)[where % n] = Number.NaN;
        expect(maxAbsDiff(a, b)).toBeNaN();
        expect(maxAbs(inB ? b : a)).toBeNaN();
      }),
      200,
    );
  });

  it("maxAbsDiff is Infinity for an infinity facing a finite value and NaN for the same infinity on both sides", () => {
    // Infinity - Infinity is NaN in IEEE 754 arithmetic
    expect(maxAbsDiff(Float64Array.of(0, Number.NEGATIVE_INFINITY), Float64Array.of(0, 1))).toBe(Number.POSITIVE_INFINITY);
    expect(maxAbsDiff(Float32Array.of(Number.POSITIVE_INFINITY), Float32Array.of(Number.POSITIVE_INFINITY))).toBeNaN();
    expect(maxAbs(Float32Array.of(1, Number.NEGATIVE_INFINITY, 2))).toBe(Number.POSITIVE_INFINITY);
  });

  it("allFinite detects a NaN, +Infinity or -Infinity at any position and accepts finite data", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 40 }), fc.nat(), nonFinite, arb.dtype, arb.seed, (n, where, bad, dtype, seed) => {
        const a = randomArray(dtype, n, seed, "a");
        expect(allFinite(a)).toBe(true);
        a[where % n] = bad;
        expect(allFinite(a)).toBe(false);
        // a bad value beyond the first n elements is not looked at
        expect(allFinite(a, where % n)).toBe(true);
      }),
      200,
    );
  });

  it("allFinite accepts the largest finite values and signed zeros", () => {
    expect(allFinite(Float64Array.of(Number.MAX_VALUE, -Number.MAX_VALUE, -0, Number.MIN_VALUE))).toBe(true);
    expect(allFinite(Float32Array.of(3.4028234663852886e38, -0))).toBe(true);
  });

  it("empty inputs give 0 for the maxima and sums and true for allFinite", () => {
    const e = new Float64Array(0);
    expect(maxAbsDiff(e, e)).toBe(0);
    expect(maxAbs(e)).toBe(0);
    expect(dot(e, e)).toBe(0);
    expect(sumSquares(e)).toBe(0);
    expect(allFinite(e)).toBe(true);
  });

  it("dot and sumSquares equal the sums of the definition within n rounding errors of the sum of |terms|", () => {
    check(
      fc.property(len, arb.dtype, arb.seed, (n, dtype, seed) => {
        const a = randomArray(dtype, n, seed, "a");
        const b = randomArray(dtype, n, seed, "b");
        let s = 0;
        let sm = 0;
        let q = 0;
        for (let i = 0; i < n; i++) {
          const t = (a[i] as number) * (b[i] as number);
          s += t;
          sm += Math.abs(t);
          q += (a[i] as number) ** 2;
        }
        // the kernels sum in float64 whatever the storage
        const eps = epsOf(new Float64Array(0));
        expectWithinBound([dot(a, b, n)], { value: Float64Array.of(s), magnitude: Float64Array.of(sm) }, n + 2, eps, "dot");
        expectWithinBound([sumSquares(a)], { value: Float64Array.of(q), magnitude: Float64Array.of(q) }, n + 2, eps, "sumSquares");
      }),
      200,
    );
  });

  it("dot and sumSquares give the hand-computed 32 and 25", () => {
    expect(dot(Float64Array.of(1, 2, 3), Float64Array.of(4, 5, 6))).toBe(32);
    expect(sumSquares(Float32Array.of(3, 4))).toBe(25);
  });

  it("dot and sumSquares propagate NaN and Infinity", () => {
    expect(dot(Float64Array.of(1, 2, 3, 4, 5), Float64Array.of(1, 1, 1, 1, Number.NaN))).toBeNaN();
    expect(sumSquares(Float64Array.of(1, Number.NEGATIVE_INFINITY))).toBe(Number.POSITIVE_INFINITY);
  });
});
