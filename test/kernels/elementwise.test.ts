import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { add, axpby, axpy, copy, fill, mul, scale, sub } from "../../src/kernels/index.js";
import type { FloatArray } from "../../src/types/index.js";
import { check } from "../helpers/property.js";
import { arb, expectExact, make, randomArray } from "./reference.js";

/**
 * Each kernel evaluates one arithmetic expression per element in float64 and
 * stores it in the dtype of out, so the reference (the same expression,
 * stored in an array of the same dtype) must match exactly.
 */
function definition(out: FloatArray, f: (i: number) => number, n: number): FloatArray {
  const r = out.slice();
  for (let i = 0; i < n; i++) r[i] = f(i);
  return r;
}

const len = fc.integer({ min: 0, max: 40 });

describe("elementwise kernels", () => {
  it("add, sub, mul, axpy, axpby, scale and copy equal their definitions exactly, both dtypes", () => {
    check(
      fc.property(len, arb.alpha, arb.beta, arb.dtype, arb.seed, (n, alpha, beta, dtype, seed) => {
        const a = randomArray(dtype, n, seed, "a");
        const b = randomArray(dtype, n, seed, "b");
        const o = randomArray(dtype, n, seed, "o");
        const at = (x: FloatArray, i: number) => x[i] as number;
        const cases: [string, (out: FloatArray) => FloatArray, (i: number) => number][] = [
          ["add", (out) => add(out, a, b), (i) => at(a, i) + at(b, i)],
          ["sub", (out) => sub(out, a, b), (i) => at(a, i) - at(b, i)],
          ["mul", (out) => mul(out, a, b), (i) => at(a, i) * at(b, i)],
          ["axpy", (out) => axpy(out, a, alpha), (i) => alpha * at(a, i) + at(o, i)],
          ["axpby", (out) => axpby(out, a, b, alpha, beta), (i) => alpha * at(a, i) + beta * at(b, i)],
          ["scale", (out) => scale(out, a, alpha), (i) => alpha * at(a, i)],
          ["copy", (out) => copy(out, a), (i) => at(a, i)],
        ];
        for (const [name, run, f] of cases) {
          const out = o.slice();
          const expected = definition(o, f, n);
          expect(run(out), name).toBe(out);
          expectExact(out, expected, name);
        }
      }),
      200,
    );
  });

  it("give the correct result when out is a, when out is b, and when out is both (aliasing allowed)", () => {
    check(
      fc.property(len, arb.alpha, arb.beta, arb.dtype, arb.seed, (n, alpha, beta, dtype, seed) => {
        const a0 = randomArray(dtype, n, seed, "a");
        const b0 = randomArray(dtype, n, seed, "b");
        const binary: [string, (o: FloatArray, x: FloatArray, y: FloatArray) => FloatArray][] = [
          ["add", (o, x, y) => add(o, x, y)],
          ["sub", (o, x, y) => sub(o, x, y)],
          ["mul", (o, x, y) => mul(o, x, y)],
          ["axpby", (o, x, y) => axpby(o, x, y, alpha, beta)],
        ];
        for (const [name, f] of binary) {
          const expected = f(make(dtype, n), a0, b0);
          // out is a: the result is right and b is untouched
          const a = a0.slice();
          const b = b0.slice();
          f(a, a, b);
          expectExact(a, expected, `${name}: out is a`);
          expectExact(b, b0, `${name}: b untouched`);
          // out is b
          const a2 = a0.slice();
          const b2 = b0.slice();
          f(b2, a2, b2);
          expectExact(b2, expected, `${name}: out is b`);
          expectExact(a2, a0, `${name}: a untouched`);
          // out is a is b
          const x = a0.slice();
          const expectedSelf = f(make(dtype, n), a0, a0);
          f(x, x, x);
          expectExact(x, expectedSelf, `${name}: out is a is b`);
        }
        const unary: [string, (o: FloatArray, x: FloatArray) => FloatArray][] = [
          ["scale", (o, x) => scale(o, x, alpha)],
          ["copy", (o, x) => copy(o, x)],
          ["axpy", (o, x) => axpy(o, x, alpha)],
        ];
        for (const [name, f] of unary) {
          // axpy reads out too: with out = a it computes alpha*a + a
          const expected = name === "axpy" ? f(a0.slice(), a0) : f(make(dtype, n), a0);
          const a = a0.slice();
          f(a, a);
          expectExact(a, expected, `${name}: out is a`);
        }
      }),
      100,
    );
  });

  it("mul(x, x, x) squares x and add(x, x, x) doubles it", () => {
    const x = Float64Array.of(1.5, -2, 3);
    mul(x, x, x);
    expectExact(x, [2.25, 4, 9], "square");
    add(x, x, x);
    expectExact(x, [4.5, 8, 18], "double");
  });

  it("touch only the first n elements when n is given", () => {
    const a = Float64Array.of(1, 2, 3, 4);
    const b = Float64Array.of(10, 20, 30, 40);
    const runs: [string, (o: Float64Array) => Float64Array][] = [
      ["add", (o) => add(o, a, b, 2)],
      ["sub", (o) => sub(o, a, b, 2)],
      ["mul", (o) => mul(o, a, b, 2)],
      ["axpy", (o) => axpy(o, a, 2, 2)],
      ["axpby", (o) => axpby(o, a, b, 2, 3, 2)],
      ["scale", (o) => scale(o, a, 2, 2)],
      ["fill", (o) => fill(o, 5, 2)],
      ["copy", (o) => copy(o, a, 2)],
    ];
    for (const [name, run] of runs) {
      const out = Float64Array.of(-1, -1, -7, -7);
      run(out);
      expectExact(out.subarray(2), [-7, -7], name);
      expect(out[0], name).not.toBe(-1);
    }
  });

  it("fill writes the value rounded to the dtype of out, NaN included", () => {
    expectExact(fill(new Float32Array(3), 0.1), [Math.fround(0.1), Math.fround(0.1), Math.fround(0.1)], "float32");
    expectExact(fill(new Float64Array(2), Number.NaN), [Number.NaN, Number.NaN], "NaN");
  });

  it("copy rounds float64 values to float32 as Math.fround does, and copies float32 to float64 exactly", () => {
    check(
      fc.property(len, arb.seed, (n, seed) => {
        const src = randomArray("float64", n, seed, "a");
        const down = copy(new Float32Array(n), src);
        expectExact(down, Array.from(src, Math.fround), "float64 -> float32");
        const up = copy(new Float64Array(n), down);
        expectExact(up, down, "float32 -> float64");
      }),
      50,
    );
  });

  it("propagate NaN and Infinity as IEEE arithmetic does (no silent skipping)", () => {
    const a = Float64Array.of(Number.NaN, Number.POSITIVE_INFINITY, 1);
    const b = Float64Array.of(1, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY);
    expectExact(add(new Float64Array(3), a, b), [Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY], "add");
    expectExact(sub(new Float64Array(3), a, b), [Number.NaN, Number.NaN, Number.POSITIVE_INFINITY], "sub");
    // axpby evaluates both terms: 0 * Infinity is NaN
    expectExact(axpby(new Float64Array(3), a, b, 1, 0), [Number.NaN, Number.NaN, Number.NaN], "axpby beta=0");
  });
});
