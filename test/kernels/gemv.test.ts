import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { gemm, gemv } from "../../src/kernels/index.js";
import { check } from "../helpers/property.js";
import { arb, epsOf, expectExact, expectWithinBound, naiveGemm, naiveGemv, randomArray } from "./reference.js";

describe("gemv", () => {
  it("equals the naive double loop for A x and Aᵀ x, shapes 1..17, alpha and beta incl. 0 and 1, both dtypes", () => {
    check(
      fc.property(arb.dim, arb.dim, fc.boolean(), arb.alpha, arb.beta, arb.dtype, arb.seed, (rows, cols, trans, alpha, beta, dtype, seed) => {
        const a = randomArray(dtype, rows * cols, seed, "a");
        const x = randomArray(dtype, trans ? rows : cols, seed, "x");
        const out = randomArray(dtype, trans ? cols : rows, seed, "y");
        if (beta === 0) out.fill(Number.NaN); // beta = 0 must overwrite garbage
        const ref = naiveGemv(Array.from(out), a, x, rows, cols, trans, alpha, beta);
        expect(gemv(out, a, x, rows, cols, trans, alpha, beta)).toBe(out);
        expectWithinBound(out, ref, (trans ? rows : cols) + 4, epsOf(out), `gemv ${rows}x${cols} trans=${trans}`);
      }),
      300,
    );
  });

  it("gives the hand-computed products of [1 2 3; 4 5 6] with ones exactly", () => {
    // closed form: row sums [6, 15], column sums [5, 7, 9]
    const A = Float64Array.of(1, 2, 3, 4, 5, 6);
    expectExact(gemv(new Float64Array(2), A, Float64Array.of(1, 1, 1), 2, 3, false, 1, 0), [6, 15], "A x");
    expectExact(gemv(new Float64Array(3), A, Float64Array.of(1, 1), 2, 3, true, 1, 0), [5, 7, 9], "Aᵀ x");
  });

  it("agrees with gemm on a one-column right-hand side", () => {
    // gemv(A, x) is gemm(A, x) with n = 1; Aᵀ x is gemm with transA
    check(
      fc.property(arb.dim, arb.dim, fc.boolean(), arb.seed, (rows, cols, trans, seed) => {
        const a = randomArray("float64", rows * cols, seed, "a");
        const x = randomArray("float64", trans ? rows : cols, seed, "x");
        const viaGemv = gemv(new Float64Array(trans ? cols : rows), a, x, rows, cols, trans, 1.5, 0);
        const m = trans ? cols : rows;
        const k = trans ? rows : cols;
        const ref = naiveGemm(new Float64Array(m), a, x, m, 1, k, trans, false, 1.5, 0);
        expectWithinBound(viaGemv, ref, k + 4, epsOf(viaGemv), "gemv vs definition");
        const viaGemm = gemm(new Float64Array(m), a, x, m, 1, k, trans, false, 1.5, 0);
        expectWithinBound(viaGemv, { value: viaGemm, magnitude: ref.magnitude }, 2 * k + 8, epsOf(viaGemv), "gemv vs gemm");
      }),
      100,
    );
  });

  it("with alpha = 0 scales y by beta without reading A or x (BLAS convention)", () => {
    const nan = new Float64Array(6).fill(Number.NaN);
    for (const trans of [false, true]) {
      const out = Float64Array.of(1, 2, 3);
      // A is 3×2 for A x and 2×3 for Aᵀ x, so out has 3 entries either way
      gemv(out, nan, nan, trans ? 2 : 3, trans ? 3 : 2, trans, 0, 3);
      expectExact(out, [3, 6, 9], `trans=${trans}`);
    }
  });

  it("writes only the first rows (or cols) entries of out", () => {
    const out = new Float64Array(10).fill(7);
    gemv(out, randomArray("float64", 15, 1, "a"), randomArray("float64", 5, 1, "x"), 3, 5, false, 1, 0);
    expectExact(out.subarray(3), [7, 7, 7, 7, 7, 7, 7], "A x tail");
    gemv(out, randomArray("float64", 15, 1, "a"), randomArray("float64", 3, 1, "x"), 3, 5, true, 1, 0);
    expectExact(out.subarray(5), [7, 7, 7, 7, 7], "Aᵀ x tail");
  });
});
