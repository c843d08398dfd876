import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { addRowVector, sumRows } from "../../src/kernels/index.js";
import { check } from "../helpers/property.js";
import { arb, epsOf, expectExact, expectWithinBound, randomArray } from "./reference.js";

describe("addRowVector", () => {
  it("adds bias[j] to every row exactly, shapes 1..17, both dtypes", () => {
    // each entry is a single addition, so the result is exact against the definition
    check(
      fc.property(arb.dim, arb.dim, arb.dtype, arb.seed, (rows, cols, dtype, seed) => {
        const out = randomArray(dtype, rows * cols, seed, "x");
        const bias = randomArray(dtype, cols, seed, "bias");
        const expected = out.slice();
        for (let r = 0; r < rows; r++) for (let j = 0; j < cols; j++) expected[r * cols + j] = (out[r * cols + j] as number) + (bias[j] as number);
        expect(addRowVector(out, bias, rows, cols)).toBe(out);
        expectExact(out, expected, "addRowVector");
      }),
      200,
    );
  });

  it("gives the hand-computed [1 2; 3 4] + [10 20] = [11 22; 13 24]", () => {
    expectExact(addRowVector(Float64Array.of(1, 2, 3, 4), Float64Array.of(10, 20), 2, 2), [11, 22, 13, 24], "example");
  });
});

describe("sumRows", () => {
  it("equals alpha times the column sums plus beta times out, shapes 1..17, both dtypes", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.alpha, arb.beta, arb.dtype, arb.seed, (rows, cols, alpha, beta, dtype, seed) => {
        const a = randomArray(dtype, rows * cols, seed, "a");
        const out = randomArray(dtype, cols, seed, "out");
        if (beta === 0) out.fill(Number.NaN); // beta = 0 must overwrite garbage
        const value = new Float64Array(cols);
        const magnitude = new Float64Array(cols);
        for (let j = 0; j < cols; j++) {
          let s = 0;
          let m = 0;
          for (let r = 0; r < rows; r++) {
            s += a[r * cols + j] as number;
            m += Math.abs(a[r * cols + j] as number);
          }
          const old = beta === 0 ? 0 : beta * (out[j] as number);
          value[j] = alpha * s + old;
          magnitude[j] = Math.abs(alpha) * m + Math.abs(old);
        }
        expect(sumRows(out, a, rows, cols, alpha, beta)).toBe(out);
        expectWithinBound(out, { value, magnitude }, rows + 4, epsOf(out), `sumRows ${rows}x${cols}`);
      }),
      200,
    );
  });

  it("gives the hand-computed column sums of [1 2; 3 4; 5 6] = [9 12]", () => {
    expectExact(sumRows(new Float64Array(2), Float64Array.of(1, 2, 3, 4, 5, 6), 3, 2, 1, 0), [9, 12], "example");
  });

  it("with alpha = 0 scales out by beta without reading a", () => {
    const out = Float64Array.of(1, 2);
    sumRows(out, new Float64Array(4).fill(Number.NaN), 2, 2, 0, 0.5);
    expectExact(out, [0.5, 1], "alpha=0");
  });

  it("undoes addRowVector: summing a broadcast bias over r rows gives r times the bias", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.seed, (rows, cols, seed) => {
        const bias = Float64Array.from(randomArray("float64", cols, seed, "bias"));
        const x = addRowVector(new Float64Array(rows * cols), bias, rows, cols);
        const s = sumRows(new Float64Array(cols), x, rows, cols, 1 / rows, 0);
        const mag = Float64Array.from(bias, Math.abs);
        expectWithinBound(s, { value: bias, magnitude: mag }, rows + 4, epsOf(s), "mean of broadcast rows");
      }),
      50,
    );
  });
});
