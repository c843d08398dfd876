import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { gemm as tsGemm } from "../../src/kernels/index.js";
import type { Dtype, FloatArray } from "../../src/types/index.js";
import { check } from "../helpers/property.js";
import { arb, epsOf, expectExact, expectWithinBound, naiveGemm, randomArray } from "../kernels/reference.js";
import { inArena, wasmBackends } from "./backends.js";

/**
 * Runs the WASM gemm twice on the same random data, once on arena views (no
 * copy) and once on ordinary arrays (copied through scratch), and compares
 * each with the naive triple loop within the forward error bound of a sum of
 * k products (Higham 2002, section 3.1, as in test/kernels): both paths run
 * the same kernel, so they must also agree bit for bit.
 */
function compare(m: number, n: number, k: number, transA: boolean, transB: boolean, alpha: number, beta: number, dtype: Dtype, seed: number): void {
  for (const be of wasmBackends) {
    const a = randomArray(dtype, m * k, seed, "a");
    const b = randomArray(dtype, k * n, seed, "b");
    const c0 = randomArray(dtype, m * n, seed, "c");
    // beta = 0 must overwrite whatever is in out, NaN included
    if (beta === 0) c0.fill(Number.NaN);
    const ref = naiveGemm(Array.from(c0), a, b, m, n, k, transA, transB, alpha, beta);
    const label = `${be.name} ${dtype} ${m}x${n}x${k} tA=${transA} tB=${transB} alpha=${alpha} beta=${beta}`;

    const [out, av, bv] = inArena(be, c0, a, b);
    const returned = be.gemm(out, av, bv, m, n, k, transA, transB, alpha, beta);
    expect(returned).toBe(out);
    expectWithinBound(out, ref, k + 4, epsOf(out), `${label} (arena)`);

    const plain = c0.slice();
    expect(be.gemm(plain, a, b, m, n, k, transA, transB, alpha, beta)).toBe(plain);
    expectExact(plain, out, `${label} (ordinary arrays = arena)`);
  }
}

describe("WASM gemm", () => {
  it("equals the naive triple loop for every transposition, shapes 1..17, alpha and beta incl. 0 and 1, both dtypes", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dim, fc.boolean(), fc.boolean(), arb.alpha, arb.beta, arb.dtype, arb.seed, (m, n, k, tA, tB, alpha, beta, dtype, seed) => {
        compare(m, n, k, tA, tB, alpha, beta, dtype, seed);
      }),
      200,
    );
  });

  it("equals the naive triple loop on shapes that cross every block edge (k > 256, m > 128, n > 512) and every remainder", () => {
    // the kernel packs blocks of 256 steps, 128 rows and 512 columns into register tiles of 4 rows x 2 vectors;
    // A Bᵀ with m <= 16, or m <= 64 and k >= 256, runs as 2 x 4 tiles of dot products instead (41 x 9 x 301)
    const shapes: [number, number, number][] = [[130, 9, 261], [5, 517, 7], [33, 40, 29], [41, 9, 301], [64, 64, 64], [4, 8, 256], [1, 1, 300], [9, 3, 2]];
    for (const [m, n, k] of shapes) {
      for (const tA of [false, true]) {
        for (const tB of [false, true]) {
          for (const dtype of ["float32", "float64"] as const) compare(m, n, k, tA, tB, 0.75, 0.5, dtype, m * 1000 + n);
        }
      }
    }
    compare(130, 20, 300, false, true, 1, 0, "float32", 7);
    compare(7, 530, 260, false, false, -1.5, 1, "float64", 8);
  });

  it("gives the hand-computed product [1 2; 3 4][5 6; 7 8] = [19 22; 43 50] exactly in every transposition", () => {
    // closed form; the transposed cases store the transposed operands
    for (const be of wasmBackends) {
      for (const dtype of ["float32", "float64"] as const) {
        const arr = (...v: number[]) => (dtype === "float32" ? Float32Array.from(v) : Float64Array.from(v));
        const [A, At, B, Bt, C] = inArena(be, arr(1, 2, 3, 4), arr(1, 3, 2, 4), arr(5, 6, 7, 8), arr(5, 7, 6, 8), arr(0, 0, 0, 0));
        const expected = [19, 22, 43, 50];
        expectExact(be.gemm(C, A, B, 2, 2, 2, false, false, 1, 0), expected, `${be.name} NN`);
        expectExact(be.gemm(C, At, B, 2, 2, 2, true, false, 1, 0), expected, `${be.name} TN`);
        expectExact(be.gemm(C, A, Bt, 2, 2, 2, false, true, 1, 0), expected, `${be.name} NT`);
        expectExact(be.gemm(C, At, Bt, 2, 2, 2, true, true, 1, 0), expected, `${be.name} TT`);
      }
    }
  });

  it("with alpha = 0 scales out by beta without reading A or B, and with k = 0 gives beta * C (BLAS convention)", () => {
    for (const be of wasmBackends) {
      for (const transB of [false, true]) {
        const [nan, out] = inArena(be, new Float64Array(12).fill(Number.NaN), Float64Array.of(1, 2, 3, 4, 5, 6));
        be.gemm(out, nan, nan, 2, 3, 4, false, transB, 0, -2);
        expectExact(out, [-2, -4, -6, -8, -10, -12], `${be.name} transB=${transB}`);
        be.gemm(out, nan, nan, 2, 3, 4, false, transB, 0, 0);
        expectExact(out, [0, 0, 0, 0, 0, 0], `${be.name} transB=${transB}, beta=0`);
      }
      const out = Float32Array.of(1, -2, 3);
      be.gemm(out, new Float32Array(0), new Float32Array(0), 1, 3, 0, false, false, 1, 0.5);
      expectExact(out, [0.5, -1, 1.5], `${be.name} k=0`);
    }
  });

  it("propagates a NaN in A to exactly the row of C it enters", () => {
    for (const be of wasmBackends) {
      for (const transB of [false, true]) {
        const [m, n, k] = [9, 10, 11];
        const a = randomArray("float32", m * k, 3, "a");
        a[2 * k + 4] = Number.NaN; // A[2, 4]
        const [c, av, bv] = inArena(be, new Float32Array(m * n), a, randomArray("float32", k * n, 3, "b"));
        const out = be.gemm(c, av, bv, m, n, k, false, transB, 1, 0);
        for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) expect(Number.isNaN(out[i * n + j]), `${be.name} C[${i},${j}]`).toBe(i === 2);
      }
    }
  });

  it("writes only the first m*n entries of out, on arena views and on ordinary arrays", () => {
    for (const be of wasmBackends) {
      for (const transB of [false, true]) {
        for (const arena of [false, true]) {
          const out0 = new Float64Array(3 * 4 + 5).fill(7);
          const [out] = arena ? inArena(be, out0) : [out0];
          be.gemm(out, randomArray("float64", 15, 2, "a"), randomArray("float64", 20, 2, "b"), 3, 4, 5, false, transB, 1, 0);
          expectExact(out.subarray(12), [7, 7, 7, 7, 7], `${be.name} transB=${transB} arena=${arena}`);
        }
      }
    }
  });

  it("accepts the same array as A and B: A Aᵀ equals the naive product and is exactly symmetric", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.seed, fc.boolean(), (m, k, seed, arena) => {
        for (const be of wasmBackends) {
          const a0 = randomArray("float64", m * k, seed, "a");
          const [a, c] = arena ? inArena(be, a0, new Float64Array(m * m)) : [a0, new Float64Array(m * m)];
          const out = be.gemm(c, a, a, m, m, k, false, true, 1, 0);
          expectWithinBound(out, naiveGemm(new Float64Array(m * m), a0, a0, m, m, k, false, true, 1, 0), k + 4, epsOf(out), "A Aᵀ");
          // entries (i, j) and (j, i) add the same products in the same order (multiplication commutes exactly)
          for (let i = 0; i < m; i++) for (let j = 0; j < i; j++) expect(out[i * m + j]).toBe(out[j * m + i]);
        }
      }),
      50,
    );
  });

  it("with mixed dtypes runs the TypeScript kernel (same result bit for bit)", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dim, fc.boolean(), fc.boolean(), arb.alpha, arb.beta, arb.seed, (m, n, k, tA, tB, alpha, beta, seed) => {
        for (const be of wasmBackends) {
          const a = randomArray("float64", m * k, seed, "a");
          const b = randomArray("float32", k * n, seed, "b");
          const c: FloatArray = randomArray("float32", m * n, seed, "c");
          const expected = tsGemm(c.slice(), a, b, m, n, k, tA, tB, alpha, beta);
          const [cv, av] = inArena(be, c, a);
          expectExact(be.gemm(cv, av, b, m, n, k, tA, tB, alpha, beta), expected, `${be.name} mixed`);
        }
      }),
      50,
    );
  });

  it("does nothing when m or n is 0", () => {
    for (const be of wasmBackends) {
      const [out] = inArena(be, Float64Array.of(4, 5));
      be.gemm(out, new Float64Array(0), new Float64Array(6), 0, 2, 3, false, false, 1, 0);
      be.gemm(out, new Float64Array(6), new Float64Array(0), 2, 0, 3, false, true, 1, 0);
      expectExact(out, [4, 5], "untouched");
    }
  });
});
