import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { gemm } from "../../src/kernels/index.js";
import type { Dtype } from "../../src/types/index.js";
import { check } from "../helpers/property.js";
import { arb, epsOf, expectExact, expectWithinBound, naiveGemm, randomArray } from "./reference.js";

/** Runs gemm and the naive reference on the same random data and compares within the rounding bound. */
function compare(
  dtype: Dtype,
  outDtype: Dtype,
  m: number,
  n: number,
  k: number,
  transA: boolean,
  transB: boolean,
  alpha: number,
  beta: number,
  seed: number,
): void {
  const a = randomArray(dtype, m * k, seed, "a");
  const b = randomArray(dtype, k * n, seed, "b");
  const out = randomArray(outDtype, m * n, seed, "c");
  // beta = 0 must overwrite whatever is in out, NaN included
  if (beta === 0) out.fill(Number.NaN);
  const ref = naiveGemm(Array.from(out), a, b, m, n, k, transA, transB, alpha, beta);
  const returned = gemm(out, a, b, m, n, k, transA, transB, alpha, beta);
  expect(returned).toBe(out);
  // forward error bound of a sum of k products, plus the alpha and beta roundings
  const eps = Math.max(epsOf(out), epsOf(a));
  expectWithinBound(out, ref, k + 4, eps, `gemm ${dtype}->${outDtype} ${m}x${n}x${k} tA=${transA} tB=${transB} alpha=${alpha} beta=${beta}`);
}

describe("gemm", () => {
  it("equals the naive triple loop for every transposition, shape 1..17, alpha and beta incl. 0 and 1, both dtypes", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dim, fc.boolean(), fc.boolean(), arb.alpha, arb.beta, arb.dtype, arb.seed,
        (m, n, k, transA, transB, alpha, beta, dtype, seed) => {
          compare(dtype, dtype, m, n, k, transA, transB, alpha, beta, seed);
        }),
      300,
    );
  });

  it("equals the naive triple loop with mixed precision (float32 out, float64 inputs and the reverse)", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dim, fc.boolean(), fc.boolean(), arb.alpha, arb.beta, fc.boolean(), arb.seed,
        (m, n, k, transA, transB, alpha, beta, out32, seed) => {
          compare(out32 ? "float64" : "float32", out32 ? "float32" : "float64", m, n, k, transA, transB, alpha, beta, seed);
        }),
      100,
    );
  });

  it("equals the naive triple loop on larger shapes that run every blocked path and every remainder", () => {
    for (const [m, n, k] of [[33, 40, 29], [64, 64, 64], [8, 4, 16], [2, 1, 9], [1, 5, 24]] as const) {
      for (const transA of [false, true]) {
        for (const transB of [false, true]) {
          for (const dtype of ["float32", "float64"] as const) compare(dtype, dtype, m, n, k, transA, transB, 0.75, 0.5, m * 1000 + n);
        }
      }
    }
  });

  it("gives the hand-computed product [1 2; 3 4][5 6; 7 8] = [19 22; 43 50] exactly in every transposition", () => {
    // closed form; the transposed cases store the transposed operands
    const A = Float64Array.of(1, 2, 3, 4);
    const At = Float64Array.of(1, 3, 2, 4);
    const B = Float64Array.of(5, 6, 7, 8);
    const Bt = Float64Array.of(5, 7, 6, 8);
    const expected = [19, 22, 43, 50];
    expectExact(gemm(new Float64Array(4), A, B, 2, 2, 2, false, false, 1, 0), expected, "NN");
    expectExact(gemm(new Float64Array(4), At, B, 2, 2, 2, true, false, 1, 0), expected, "TN");
    expectExact(gemm(new Float64Array(4), A, Bt, 2, 2, 2, false, true, 1, 0), expected, "NT");
    expectExact(gemm(new Float64Array(4), At, Bt, 2, 2, 2, true, true, 1, 0), expected, "TT");
  });

  it("overwrites NaN and Infinity garbage in out when beta = 0, for every transposition", () => {
    for (const transA of [false, true]) {
      for (const transB of [false, true]) {
        const a = randomArray("float64", 5 * 7, 1, "a");
        const b = randomArray("float64", 7 * 3, 1, "b");
        const out = Float64Array.from({ length: 15 }, (_, q) => (q % 2 === 0 ? Number.NaN : Number.POSITIVE_INFINITY));
        gemm(out, a, b, 5, 3, 7, transA, transB, 1, 0);
        const ref = naiveGemm(new Float64Array(15), a, b, 5, 3, 7, transA, transB, 1, 0);
        expectWithinBound(out, ref, 11, epsOf(out), `tA=${transA} tB=${transB}`);
      }
    }
  });

  it("with alpha = 0 scales out by beta without reading A or B (BLAS convention)", () => {
    for (const transB of [false, true]) {
      const nan = new Float64Array(12).fill(Number.NaN);
      const out = Float64Array.of(1, 2, 3, 4, 5, 6);
      gemm(out, nan, nan, 2, 3, 4, false, transB, 0, -2);
      expectExact(out, [-2, -4, -6, -8, -10, -12], `transB=${transB}`);
      gemm(out, nan, nan, 2, 3, 4, false, transB, 0, 0);
      expectExact(out, [0, 0, 0, 0, 0, 0], `transB=${transB}, beta=0`);
    }
  });

  it("with k = 0 (an empty sum) gives beta * C", () => {
    const out = Float32Array.of(1, -2, 3);
    gemm(out, new Float32Array(0), new Float32Array(0), 1, 3, 0, false, false, 1, 0.5);
    expectExact(out, [0.5, -1, 1.5], "k=0");
  });

  it("propagates a NaN in A to exactly the row of C it enters, and leaves the other rows finite", () => {
    for (const transB of [false, true]) {
      const m = 5;
      const n = 6;
      const k = 9;
      const a = randomArray("float64", m * k, 3, "a");
      const b = randomArray("float64", k * n, 3, "b");
      a[2 * k + 4] = Number.NaN; // A[2, 4]
      const out = gemm(new Float64Array(m * n), a, b, m, n, k, false, transB, 1, 0);
      for (let i = 0; i < m; i++) {
        for (let j = 0; j < n; j++) expect(Number.isNaN(out[i * n + j]), `C[${i},${j}]`).toBe(i === 2);
      }
    }
  });

  it("writes only the first m*n entries of out", () => {
    for (const transB of [false, true]) {
      const out = new Float64Array(3 * 4 + 5).fill(7);
      gemm(out, randomArray("float64", 3 * 5, 2, "a"), randomArray("float64", 5 * 4, 2, "b"), 3, 4, 5, false, transB, 1, 0);
      expectExact(out.subarray(12), [7, 7, 7, 7, 7], `transB=${transB}`);
    }
  });

  it("accepts the same array as A and B: A Aᵀ equals the naive product and is symmetric", () => {
    // aliasing between the two inputs is allowed (only out must be separate)
    check(
      fc.property(arb.dim, arb.dim, arb.seed, (m, k, seed) => {
        const a = randomArray("float64", m * k, seed, "a");
        const out = gemm(new Float64Array(m * m), a, a, m, m, k, false, true, 1, 0);
        expectWithinBound(out, naiveGemm(new Float64Array(m * m), a, a, m, m, k, false, true, 1, 0), k + 4, epsOf(out), "A Aᵀ");
        for (let i = 0; i < m; i++) for (let j = 0; j < i; j++) expect(out[i * m + j]).toBe(out[j * m + i]);
      }),
      50,
    );
  });

  it("does nothing when m or n is 0", () => {
    const out = Float64Array.of(4, 5);
    gemm(out, new Float64Array(0), new Float64Array(6), 0, 2, 3, false, false, 1, 0);
    gemm(out, new Float64Array(6), new Float64Array(0), 2, 0, 3, false, true, 1, 0);
    expectExact(out, [4, 5], "untouched");
  });
});
