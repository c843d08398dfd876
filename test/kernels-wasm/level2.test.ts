import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { check } from "../helpers/property.js";
import { EPS32 } from "../helpers/tolerance.js";
import { arb, epsOf, expectExact, expectWithinBound, naiveGemv, randomArray } from "../kernels/reference.js";
import { inArena, wasmBackends } from "./backends.js";

/** A + alpha x yᵀ by the definition in float64 (the value) with the magnitudes |A| + |alpha x y| (the error scale). */
function naiveGer(a0: ArrayLike<number>, x: ArrayLike<number>, y: ArrayLike<number>, m: number, n: number, alpha: number) {
  const value = new Float64Array(m * n);
  const magnitude = new Float64Array(m * n);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < n; j++) {
      const t = alpha * (x[i] as number) * (y[j] as number);
      value[i * n + j] = (a0[i * n + j] as number) + t;
      magnitude[i * n + j] = Math.abs(a0[i * n + j] as number) + Math.abs(t);
    }
  }
  return { value, magnitude };
}

describe("WASM gemv", () => {
  it("equals the naive double loop for A x and Aᵀ x, shapes 1..40, alpha and beta incl. 0 and 1, both dtypes, arena and ordinary arrays", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 40 }), fc.integer({ min: 1, max: 40 }), fc.boolean(), arb.alpha, arb.beta, arb.dtype, arb.seed, (rows, cols, trans, alpha, beta, dtype, seed) => {
        for (const be of wasmBackends) {
          const a = randomArray(dtype, rows * cols, seed, "a");
          const x = randomArray(dtype, trans ? rows : cols, seed, "x");
          const y0 = randomArray(dtype, trans ? cols : rows, seed, "y");
          if (beta === 0) y0.fill(Number.NaN); // beta = 0 must overwrite garbage
          const ref = naiveGemv(Array.from(y0), a, x, rows, cols, trans, alpha, beta);
          const [y, av, xv] = inArena(be, y0.slice(), a, x);
          expect(be.gemv(y, av, xv, rows, cols, trans, alpha, beta)).toBe(y);
          const label = `${be.name} gemv ${dtype} ${rows}x${cols} trans=${trans} alpha=${alpha} beta=${beta}`;
          expectWithinBound(y, ref, (trans ? rows : cols) + 4, epsOf(y), label);
          const plain = y0.slice();
          be.gemv(plain, a, x, rows, cols, trans, alpha, beta);
          expectExact(plain, y, `${label} (ordinary = arena)`);
        }
      }),
      200,
    );
  });

  it("gives the hand-computed products of [1 2 3; 4 5 6] with ones exactly", () => {
    // closed form: row sums [6, 15], column sums [5, 7, 9]
    for (const be of wasmBackends) {
      const [A, x3, x2, y2, y3] = inArena(be, Float64Array.of(1, 2, 3, 4, 5, 6), Float64Array.of(1, 1, 1), Float64Array.of(1, 1), new Float64Array(2), new Float64Array(3));
      expectExact(be.gemv(y2, A, x3, 2, 3, false, 1, 0), [6, 15], `${be.name} A x`);
      expectExact(be.gemv(y3, A, x2, 2, 3, true, 1, 0), [5, 7, 9], `${be.name} Aᵀ x`);
    }
  });

  it("with alpha = 0 scales y by beta without reading A or x (BLAS convention)", () => {
    for (const be of wasmBackends) {
      for (const trans of [false, true]) {
        const [nan, out] = inArena(be, new Float64Array(6).fill(Number.NaN), Float64Array.of(1, 2, 3));
        be.gemv(out, nan, nan, trans ? 2 : 3, trans ? 3 : 2, trans, 0, 3);
        expectExact(out, [3, 6, 9], `${be.name} trans=${trans}`);
      }
    }
  });

  it("writes only the first rows (or cols) entries of out", () => {
    for (const be of wasmBackends) {
      const [out] = inArena(be, new Float64Array(10).fill(7));
      be.gemv(out, randomArray("float64", 15, 1, "a"), randomArray("float64", 5, 1, "x"), 3, 5, false, 1, 0);
      expectExact(out.subarray(3), [7, 7, 7, 7, 7, 7, 7], `${be.name} A x tail`);
      be.gemv(out, randomArray("float64", 15, 1, "a"), randomArray("float64", 3, 1, "x"), 3, 5, true, 1, 0);
      expectExact(out.subarray(5), [7, 7, 7, 7, 7], `${be.name} Aᵀ x tail`);
    }
  });
});

describe("WASM ger", () => {
  it("float64: equals A + alpha x yᵀ exactly (one multiply and one add per entry, never fused), shapes 1..40", () => {
    // IEEE 754 float64 multiply and add round the same in JavaScript and WebAssembly
    check(
      fc.property(fc.integer({ min: 1, max: 40 }), fc.integer({ min: 1, max: 40 }), arb.alpha, arb.seed, fc.boolean(), (m, n, alpha, seed, arena) => {
        for (const be of wasmBackends) {
          const x = randomArray("float64", m, seed, "x");
          const y = randomArray("float64", n, seed, "y");
          const a0 = randomArray("float64", m * n, seed, "a");
          const expected = a0.slice();
          for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) expected[i * n + j] = a0[i * n + j]! + alpha * x[i]! * y[j]!;
          const [out, xv, yv] = arena ? inArena(be, a0.slice(), x, y) : [a0.slice(), x, y];
          expect(be.ger(out, xv, yv, m, n, alpha)).toBe(out);
          expectExact(out, expected, `${be.name} ger ${m}x${n} alpha=${alpha} arena=${arena}`);
        }
      }),
      200,
    );
  });

  it("float32: within three float32 roundings of the exact A + alpha x yᵀ (f32 lanes), shapes 1..40", () => {
    // alpha x_i, its product with y_j and the sum are each rounded to float32 once
    check(
      fc.property(fc.integer({ min: 1, max: 40 }), fc.integer({ min: 1, max: 40 }), arb.alpha, arb.seed, (m, n, alpha, seed) => {
        for (const be of wasmBackends) {
          const x = randomArray("float32", m, seed, "x");
          const y = randomArray("float32", n, seed, "y");
          const a0 = randomArray("float32", m * n, seed, "a");
          const ref = naiveGer(a0, x, y, m, n, alpha);
          const [out, xv, yv] = inArena(be, a0.slice(), x, y);
          be.ger(out, xv, yv, m, n, alpha);
          expectWithinBound(out, ref, 3, EPS32, `${be.name} ger f32 ${m}x${n}`);
          const plain = a0.slice();
          be.ger(plain, x, y, m, n, alpha);
          expectExact(plain, out, `${be.name} ger f32 (ordinary = arena)`);
        }
      }),
      200,
    );
  });

  it("accepts the same array as x and y: A + x xᵀ is exactly symmetric", () => {
    check(
      fc.property(arb.dim, arb.dtype, arb.seed, (m, dtype, seed) => {
        for (const be of wasmBackends) {
          const x0 = randomArray(dtype, m, seed, "x");
          const [x, out] = inArena(be, x0, x0.constructor === Float32Array ? new Float32Array(m * m) : new Float64Array(m * m));
          be.ger(out, x, x, m, m, 1);
          for (let i = 0; i < m; i++) for (let j = 0; j < i; j++) expect(out[i * m + j]).toBe(out[j * m + i]);
        }
      }),
      50,
    );
  });

  it("with alpha = 0 leaves A untouched without reading x or y, and propagates a NaN in x to exactly its row", () => {
    for (const be of wasmBackends) {
      const [out, x, y] = inArena(be, Float64Array.of(1, 2, 3, 4), Float64Array.of(Number.NaN, 1), Float64Array.of(1, Number.NaN));
      be.ger(out, x, y, 2, 2, 0);
      expectExact(out, [1, 2, 3, 4], `${be.name} alpha=0`);
      const [a9, x3, y3] = inArena(be, new Float32Array(9), Float32Array.of(1, Number.NaN, 2), Float32Array.of(1, 2, 3));
      be.ger(a9, x3, y3, 3, 3, 1);
      for (let q = 0; q < 9; q++) expect(Number.isNaN(a9[q]), `${be.name} A[${q}]`).toBe(q >= 3 && q < 6);
    }
  });
});
