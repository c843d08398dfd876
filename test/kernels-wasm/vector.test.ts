import fc from "fast-check";
import { describe, expect, it } from "vitest";
import * as ts from "../../src/kernels/index.js";
import type { FloatArray } from "../../src/types/index.js";
import { check } from "../helpers/property.js";
import { arb, epsOf, expectExact, expectWithinBound, make, randomArray } from "../kernels/reference.js";
import { inArena, wasmBackends } from "./backends.js";

const len = fc.integer({ min: 0, max: 45 });

/**
 * The elementwise kernels evaluate one expression per element and round it
 * once to the storage type (float32 data in float64 lanes where a float64
 * scale enters; sums, differences and products of two float32 values are
 * exact in float32 lanes because float64 carries at least 2 * 24 + 2 bits:
 * Figueroa 1995, "When is double rounding innocuous?", ACM SIGNUM Newsletter
 * 30(3):21-26, from memory). So they equal the definition, computed here in
 * float64 and stored in an array of the same dtype, bit for bit.
 */
function definition(out: FloatArray, f: (i: number) => number, n: number): FloatArray {
  const r = out.slice();
  for (let i = 0; i < n; i++) r[i] = f(i);
  return r;
}

describe("WASM elementwise kernels", () => {
  it("add, sub, mul, axpy, axpby, scale, fill and copy equal their definitions exactly, both dtypes, arena and ordinary arrays", () => {
    check(
      fc.property(len, arb.alpha, arb.beta, arb.dtype, arb.seed, fc.boolean(), (n, alpha, beta, dtype, seed, arena) => {
        for (const be of wasmBackends) {
          const a0 = randomArray(dtype, n, seed, "a");
          const b0 = randomArray(dtype, n, seed, "b");
          const o = randomArray(dtype, n, seed, "o");
          const at = (x: FloatArray, i: number) => x[i] as number;
          const cases: [string, (out: FloatArray, a: FloatArray, b: FloatArray) => FloatArray, (i: number) => number][] = [
            ["add", (out, a, b) => be.add(out, a, b), (i) => at(a0, i) + at(b0, i)],
            ["sub", (out, a, b) => be.sub(out, a, b), (i) => at(a0, i) - at(b0, i)],
            ["mul", (out, a, b) => be.mul(out, a, b), (i) => at(a0, i) * at(b0, i)],
            ["axpy", (out, a) => be.axpy(out, a, alpha), (i) => alpha * at(a0, i) + at(o, i)],
            ["axpby", (out, a, b) => be.axpby(out, a, b, alpha, beta), (i) => alpha * at(a0, i) + beta * at(b0, i)],
            ["scale", (out, a) => be.scale(out, a, alpha), (i) => alpha * at(a0, i)],
            ["fill", (out) => be.fill(out, alpha), () => alpha],
            ["copy", (out, a) => be.copy(out, a), (i) => at(a0, i)],
          ];
          for (const [name, run, f] of cases) {
            const [out, a, b] = arena ? inArena(be, o.slice(), a0, b0) : [o.slice(), a0, b0];
            const expected = definition(o, f, n);
            expect(run(out, a, b), name).toBe(out);
            expectExact(out, expected, `${be.name} ${name} ${dtype} n=${n} arena=${arena}`);
          }
        }
      }),
      150,
    );
  });

  it("give the correct result when out is a, when out is b, and when out is both (aliasing allowed)", () => {
    check(
      fc.property(len, arb.alpha, arb.beta, arb.dtype, arb.seed, fc.boolean(), (n, alpha, beta, dtype, seed, arena) => {
        for (const be of wasmBackends) {
          const a0 = randomArray(dtype, n, seed, "a");
          const b0 = randomArray(dtype, n, seed, "b");
          const binary: [string, (o: FloatArray, x: FloatArray, y: FloatArray) => FloatArray, typeof ts.add][] = [
            ["add", (o, x, y) => be.add(o, x, y), ts.add],
            ["sub", (o, x, y) => be.sub(o, x, y), ts.sub],
            ["mul", (o, x, y) => be.mul(o, x, y), ts.mul],
            ["axpby", (o, x, y) => be.axpby(o, x, y, alpha, beta), (o, x, y) => ts.axpby(o, x, y, alpha, beta)],
          ];
          for (const [name, f, ref] of binary) {
            const expected = ref(make(dtype, n), a0, b0);
            const [a, b] = arena ? inArena(be, a0.slice(), b0.slice()) : [a0.slice(), b0.slice()];
            f(a, a, b);
            expectExact(a, expected, `${be.name} ${name}: out is a`);
            expectExact(b, b0, `${be.name} ${name}: b untouched`);
            const [a2, b2] = arena ? inArena(be, a0.slice(), b0.slice()) : [a0.slice(), b0.slice()];
            f(b2, a2, b2);
            expectExact(b2, expected, `${be.name} ${name}: out is b`);
            expectExact(a2, a0, `${be.name} ${name}: a untouched`);
            const [x] = arena ? inArena(be, a0.slice()) : [a0.slice()];
            f(x, x, x);
            expectExact(x, ref(make(dtype, n), a0, a0), `${be.name} ${name}: out is a is b`);
          }
          // axpy reads out: with out = a it computes alpha*a + a; scale in place
          const [x, y] = arena ? inArena(be, a0.slice(), a0.slice()) : [a0.slice(), a0.slice()];
          expectExact(be.axpy(x, x, alpha), ts.axpy(a0.slice(), a0, alpha), `${be.name} axpy: out is a`);
          expectExact(be.scale(y, y, alpha), ts.scale(a0.slice(), a0, alpha), `${be.name} scale: out is a`);
        }
      }),
      100,
    );
  });

  it("touch only the first n elements when n is given", () => {
    for (const be of wasmBackends) {
      const runs: [string, (o: Float64Array, a: Float64Array, b: Float64Array) => Float64Array][] = [
        ["add", (o, a, b) => be.add(o, a, b, 2)],
        ["sub", (o, a, b) => be.sub(o, a, b, 2)],
        ["mul", (o, a, b) => be.mul(o, a, b, 2)],
        ["axpy", (o, a) => be.axpy(o, a, 2, 2)],
        ["axpby", (o, a, b) => be.axpby(o, a, b, 2, 3, 2)],
        ["scale", (o, a) => be.scale(o, a, 2, 2)],
        ["fill", (o) => be.fill(o, 5, 2)],
        ["copy", (o, a) => be.copy(o, a, 2)],
      ];
      for (const [name, run] of runs) {
        for (const arena of [false, true]) {
          const init = [Float64Array.of(-1, -1, -7, -7), Float64Array.of(1, 2, 3, 4), Float64Array.of(10, 20, 30, 40)] as const;
          const [out, a, b] = arena ? inArena(be, ...init) : init;
          run(out, a, b);
          expectExact(out.subarray(2), [-7, -7], `${be.name} ${name} arena=${arena}`);
          expect(out[0], name).not.toBe(-1);
        }
      }
    }
  });

  it("propagate NaN and Infinity as IEEE arithmetic does; axpby with beta = 0 still evaluates 0 * Infinity = NaN", () => {
    for (const be of wasmBackends) {
      const [a, b, o] = inArena(be, Float64Array.of(Number.NaN, Number.POSITIVE_INFINITY, 1), Float64Array.of(1, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY), new Float64Array(3));
      expectExact(be.add(o, a, b), [Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY], "add");
      expectExact(be.sub(o, a, b), [Number.NaN, Number.NaN, Number.POSITIVE_INFINITY], "sub");
      expectExact(be.axpby(o, a, b, 1, 0), [Number.NaN, Number.NaN, Number.NaN], "axpby beta=0");
    }
  });

  it("fill and copy round to float32 as Math.fround does", () => {
    check(
      fc.property(len, arb.seed, (n, seed) => {
        for (const be of wasmBackends) {
          const src = randomArray("float64", n, seed, "a");
          const [down] = inArena(be, new Float32Array(n));
          expectExact(be.copy(down, src), Array.from(src, Math.fround), "float64 -> float32");
          const [f] = inArena(be, new Float32Array(3));
          expectExact(be.fill(f, 0.1), [Math.fround(0.1), Math.fround(0.1), Math.fround(0.1)], "fill");
        }
      }),
      30,
    );
  });
});

describe("WASM reductions", () => {
  it("maxAbsDiff and maxAbs equal the maximum taken by the definition exactly, arena and ordinary arrays", () => {
    check(
      fc.property(len, arb.dtype, arb.seed, fc.boolean(), (n, dtype, seed, arena) => {
        for (const be of wasmBackends) {
          const a0 = randomArray(dtype, n, seed, "a");
          const b0 = randomArray(dtype, n, seed, "b");
          let d = 0;
          let m = 0;
          for (let i = 0; i < n; i++) {
            d = Math.max(d, Math.abs(a0[i]! - b0[i]!));
            m = Math.max(m, Math.abs(a0[i]!));
          }
          const [a, b] = arena ? inArena(be, a0, b0) : [a0, b0];
          expect(be.maxAbsDiff(a, b)).toBe(d);
          expect(be.maxAbs(a)).toBe(m);
        }
      }),
      200,
    );
  });

  it("maxAbsDiff and maxAbs return NaN for a NaN at any position; allFinite finds NaN and ±Infinity at any position", () => {
    const nonFinite = fc.constantFrom(Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY);
    check(
      fc.property(fc.integer({ min: 1, max: 45 }), fc.nat(), fc.boolean(), nonFinite, arb.dtype, arb.seed, (n, where, inB, bad, dtype, seed) => {
        for (const be of wasmBackends) {
          const [a, b] = inArena(be, randomArray(dtype, n, seed, "a"), randomArray(dtype, n, seed, "b"));
          expect(be.allFinite(a)).toBe(true);
          (inB ? b : a)[where % n] = Number.NaN;
          expect(be.maxAbsDiff(a, b)).toBeNaN();
          expect(be.maxAbs(inB ? b : a)).toBeNaN();
          (inB ? b : a)[where % n] = bad;
          expect(be.allFinite(inB ? b : a)).toBe(false);
          // a bad value beyond the first n elements is not looked at
          expect(be.allFinite(inB ? b : a, where % n)).toBe(true);
        }
      }),
      200,
    );
  });

  it("maxAbsDiff is Infinity for an infinity facing a finite value and NaN for the same infinity on both sides; allFinite accepts the largest finite values", () => {
    for (const be of wasmBackends) {
      const [a, b, c, d, e] = inArena(
        be,
        Float64Array.of(0, Number.NEGATIVE_INFINITY),
        Float64Array.of(0, 1),
        Float32Array.of(Number.POSITIVE_INFINITY),
        Float64Array.of(Number.MAX_VALUE, -Number.MAX_VALUE, -0, Number.MIN_VALUE),
        Float32Array.of(3.4028234663852886e38, -0, 1, 2, 3),
      );
      expect(be.maxAbsDiff(a, b)).toBe(Number.POSITIVE_INFINITY);
      expect(be.maxAbsDiff(c, c.slice())).toBeNaN();
      expect(be.allFinite(d)).toBe(true);
      expect(be.allFinite(e)).toBe(true);
      expect(be.maxAbs(e)).toBe(3.4028234663852886e38);
    }
  });

  it("dot and sumSquares equal the sums of the definition within n float64 rounding errors of the sum of |terms|", () => {
    check(
      fc.property(len, arb.dtype, arb.seed, fc.boolean(), (n, dtype, seed, arena) => {
        for (const be of wasmBackends) {
          const a0 = randomArray(dtype, n, seed, "a");
          const b0 = randomArray(dtype, n, seed, "b");
          let s = 0;
          let sm = 0;
          let q = 0;
          for (let i = 0; i < n; i++) {
            s += a0[i]! * b0[i]!;
            sm += Math.abs(a0[i]! * b0[i]!);
            q += a0[i]! ** 2;
          }
          const [a, b] = arena ? inArena(be, a0, b0) : [a0, b0];
          // the kernels sum in float64 whatever the storage
          const eps = epsOf(new Float64Array(0));
          expectWithinBound([be.dot(a, b, n)], { value: Float64Array.of(s), magnitude: Float64Array.of(sm) }, n + 2, eps, "dot");
          expectWithinBound([be.sumSquares(a)], { value: Float64Array.of(q), magnitude: Float64Array.of(q) }, n + 2, eps, "sumSquares");
        }
      }),
      200,
    );
  });

  it("empty inputs give 0 for the maxima and sums and true for allFinite; dot and sumSquares give the hand-computed 32 and 25", () => {
    for (const be of wasmBackends) {
      const e = be.allocate("float64", 0);
      expect(be.maxAbsDiff(e, e)).toBe(0);
      expect(be.maxAbs(e)).toBe(0);
      expect(be.dot(e, e)).toBe(0);
      expect(be.sumSquares(e)).toBe(0);
      expect(be.allFinite(e)).toBe(true);
      const [x, y, z] = inArena(be, Float64Array.of(1, 2, 3), Float64Array.of(4, 5, 6), Float32Array.of(3, 4));
      expect(be.dot(x, y)).toBe(32);
      expect(be.sumSquares(z)).toBe(25);
    }
  });
});

describe("WASM row kernels", () => {
  it("addRowVector adds bias[j] to every row exactly, shapes 1..17, both dtypes", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dtype, arb.seed, fc.boolean(), (rows, cols, dtype, seed, arena) => {
        for (const be of wasmBackends) {
          const out0 = randomArray(dtype, rows * cols, seed, "x");
          const bias0 = randomArray(dtype, cols, seed, "bias");
          const expected = out0.slice();
          for (let r = 0; r < rows; r++) for (let j = 0; j < cols; j++) expected[r * cols + j] = out0[r * cols + j]! + bias0[j]!;
          const [out, bias] = arena ? inArena(be, out0.slice(), bias0) : [out0.slice(), bias0];
          expect(be.addRowVector(out, bias, rows, cols)).toBe(out);
          expectExact(out, expected, `${be.name} addRowVector`);
        }
      }),
      200,
    );
  });

  it("sumRows equals alpha times the column sums plus beta times out within rows + 4 roundings, beta = 0 overwriting NaN", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.alpha, arb.beta, arb.dtype, arb.seed, fc.boolean(), (rows, cols, alpha, beta, dtype, seed, arena) => {
        for (const be of wasmBackends) {
          const a0 = randomArray(dtype, rows * cols, seed, "a");
          const out0 = randomArray(dtype, cols, seed, "out");
          if (beta === 0) out0.fill(Number.NaN);
          const value = new Float64Array(cols);
          const magnitude = new Float64Array(cols);
          for (let j = 0; j < cols; j++) {
            let s = 0;
            let m = 0;
            for (let r = 0; r < rows; r++) {
              s += a0[r * cols + j]!;
              m += Math.abs(a0[r * cols + j]!);
            }
            const old = beta === 0 ? 0 : beta * out0[j]!;
            value[j] = alpha * s + old;
            magnitude[j] = Math.abs(alpha) * m + Math.abs(old);
          }
          const [out, a] = arena ? inArena(be, out0.slice(), a0) : [out0.slice(), a0];
          expect(be.sumRows(out, a, rows, cols, alpha, beta)).toBe(out);
          expectWithinBound(out, { value, magnitude }, rows + 4, epsOf(out), `${be.name} sumRows ${rows}x${cols}`);
        }
      }),
      200,
    );
  });

  it("sumRows with alpha = 0 scales out by beta without reading a", () => {
    for (const be of wasmBackends) {
      const [out, nan] = inArena(be, Float64Array.of(1, 2), new Float64Array(4).fill(Number.NaN));
      be.sumRows(out, nan, 2, 2, 0, 0.5);
      expectExact(out, [0.5, 1], `${be.name} alpha=0`);
    }
  });
});
