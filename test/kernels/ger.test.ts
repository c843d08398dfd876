import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { ger } from "../../src/kernels/index.js";
import { check } from "../helpers/property.js";
import { arb, expectExact, make, randomArray } from "./reference.js";

/** A += alpha x yᵀ by the definition, computed in float64 and stored in the dtype of A: the kernel must match exactly. */
function naiveGer(a0: Float32Array | Float64Array, x: ArrayLike<number>, y: ArrayLike<number>, m: number, n: number, alpha: number) {
  const out = a0.slice();
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) out[i * n + j] = (a0[i * n + j] as number) + alpha * (x[i] as number) * (y[j] as number);
  return out;
}

describe("ger", () => {
  it("equals A + alpha x yᵀ entry by entry exactly, shapes 1..17, both dtypes", () => {
    // every entry is one multiply-add evaluated in the same order as the definition
    check(
      fc.property(arb.dim, arb.dim, arb.alpha, arb.dtype, arb.seed, (m, n, alpha, dtype, seed) => {
        const x = randomArray(dtype, m, seed, "x");
        const y = randomArray(dtype, n, seed, "y");
        const out = randomArray(dtype, m * n, seed, "a");
        const expected = naiveGer(out, x, y, m, n, alpha);
        expect(ger(out, x, y, m, n, alpha)).toBe(out);
        expectExact(out, expected, `ger ${m}x${n} alpha=${alpha}`);
      }),
      300,
    );
  });

  it("gives the hand-computed update 0.5 [1; 2][1 10 100]", () => {
    expectExact(ger(new Float64Array(6), Float64Array.of(1, 2), Float64Array.of(1, 10, 100), 2, 3, 0.5), [0.5, 5, 50, 1, 10, 100], "ger");
  });

  it("accepts the same array as x and y: A + x xᵀ stays symmetric", () => {
    check(
      fc.property(arb.dim, arb.dtype, arb.seed, (m, dtype, seed) => {
        const x = randomArray(dtype, m, seed, "x");
        const out = ger(make(dtype, m * m), x, x, m, m, 1);
        for (let i = 0; i < m; i++) for (let j = 0; j < i; j++) expect(out[i * m + j]).toBe(out[j * m + i]);
      }),
      50,
    );
  });

  it("with alpha = 0 leaves A untouched without reading x or y (BLAS convention)", () => {
    const out = Float64Array.of(1, 2, 3, 4);
    ger(out, Float64Array.of(Number.NaN, 1), Float64Array.of(1, Number.NaN), 2, 2, 0);
    expectExact(out, [1, 2, 3, 4], "alpha=0");
  });

  it("propagates a NaN in x to exactly its row of A", () => {
    const out = ger(new Float64Array(9), Float64Array.of(1, Number.NaN, 2), Float64Array.of(1, 2, 3), 3, 3, 1);
    for (let q = 0; q < 9; q++) expect(Number.isNaN(out[q]), `A[${q}]`).toBe(q >= 3 && q < 6);
  });
});
