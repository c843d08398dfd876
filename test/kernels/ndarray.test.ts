/**
 * Independent reference: the general-purpose `ndarray` + `ndarray-ops`
 * libraries (strided views and cwise loops, no code shared with ebbflow).
 * Matrix products are assembled from views (`transpose`, `pick`) and the
 * library's elementwise product and sum; elementwise kernels and reductions
 * are compared with the library's own operations.
 */
import ndarray from "ndarray";
import ops from "ndarray-ops";
import { describe, expect, it } from "vitest";
import {
  add, addRowVector, axpby, axpy, copy, dot, fill, gemm, gemv, ger, maxAbs, maxAbsDiff, mul, scale, sub, sumRows, sumSquares,
} from "../../src/kernels/index.js";
import type { Dtype } from "../../src/types/index.js";
import { EPS64 } from "../helpers/tolerance.js";
import { epsOf, make, randomArray } from "./reference.js";

/** C = alpha op(A) op(B) + beta C through ndarray views and ndarray-ops (float64 throughout). */
function libraryGemm(c0: ArrayLike<number>, a: ArrayLike<number>, b: ArrayLike<number>, m: number, n: number, k: number, tA: boolean, tB: boolean, alpha: number, beta: number) {
  const A = tA ? ndarray(Float64Array.from(a), [k, m]).transpose(1, 0) : ndarray(Float64Array.from(a), [m, k]);
  const B = tB ? ndarray(Float64Array.from(b), [n, k]).transpose(1, 0) : ndarray(Float64Array.from(b), [k, n]);
  const C = ndarray(Float64Array.from(c0), [m, n]);
  const tmp = ndarray(new Float64Array(k), [k]);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < n; j++) {
      ops.mul(tmp, A.pick(i, null), B.pick(null, j));
      const old = beta === 0 ? 0 : beta * C.get(i, j);
      C.set(i, j, alpha * ops.sum(tmp) + old);
    }
  }
  return C.data as Float64Array;
}

/** Largest |x - y| through ndarray-ops (finite data only: its norminf skips NaN). */
function libraryMaxAbsDiff(x: ArrayLike<number>, y: ArrayLike<number>): number {
  const d = ndarray(new Float64Array(x.length));
  ops.sub(d, ndarray(Float64Array.from(x)), ndarray(Float64Array.from(y)));
  return ops.norminf(d);
}

const cases: [Dtype, number, number, number, number][] = [
  ["float64", 7, 5, 9, 11],
  ["float64", 1, 13, 4, 12],
  ["float32", 16, 3, 17, 13],
  ["float32", 9, 9, 8, 14],
];

describe("kernels against ndarray + ndarray-ops (independent general-purpose library reference)", () => {
  it("gemm equals products assembled from ndarray views in all four transpositions", () => {
    for (const [dtype, m, n, k, seed] of cases) {
      for (const tA of [false, true]) {
        for (const tB of [false, true]) {
          const a = randomArray(dtype, m * k, seed, "a");
          const b = randomArray(dtype, k * n, seed, "b");
          const out = randomArray(dtype, m * n, seed, "c");
          const expected = libraryGemm(out, a, b, m, n, k, tA, tB, -0.75, 0.5);
          gemm(out, a, b, m, n, k, tA, tB, -0.75, 0.5);
          // entries are O(1) sums of k products of values in [-1, 1]
          const d = libraryMaxAbsDiff(out, expected);
          expect(d, `${dtype} ${m}x${n}x${k} tA=${tA} tB=${tB}`).toBeLessThanOrEqual((k + 4) * epsOf(out) * (k + 1));
        }
      }
    }
  });

  it("gemv and ger equal their ndarray-view counterparts", () => {
    for (const [dtype, rows, cols, , seed] of cases) {
      const a = randomArray(dtype, rows * cols, seed, "a");
      for (const trans of [false, true]) {
        const x = randomArray(dtype, trans ? rows : cols, seed, "x");
        const out = make(dtype, trans ? cols : rows);
        gemv(out, a, x, rows, cols, trans, 2, 0);
        const expected = libraryGemm(new Float64Array(trans ? cols : rows), a, x, trans ? cols : rows, 1, trans ? rows : cols, trans, false, 2, 0);
        expect(libraryMaxAbsDiff(out, expected)).toBeLessThanOrEqual(4 * (rows + cols + 4) * epsOf(out));
      }
      const x = randomArray(dtype, rows, seed, "u");
      const y = randomArray(dtype, cols, seed, "v");
      const out = randomArray(dtype, rows * cols, seed, "w");
      // A + alpha x yᵀ is gemm with k = 1 and beta = 1
      const expected = libraryGemm(out, x, y, rows, cols, 1, false, false, 1.5, 1);
      ger(out, x, y, rows, cols, 1.5);
      expect(libraryMaxAbsDiff(out, expected)).toBeLessThanOrEqual(4 * epsOf(out));
    }
  });

  it("elementwise kernels equal ndarray-ops add, sub, mul, muls, assign and assigns", () => {
    for (const [dtype, n, , , seed] of cases) {
      const len = n * 3;
      const a = randomArray(dtype, len, seed, "a");
      const b = randomArray(dtype, len, seed, "b");
      const view = (x: ArrayLike<number>) => ndarray(Float64Array.from(x));
      const lib = (f: (o: ReturnType<typeof view>) => void) => {
        const o = view(new Float64Array(len));
        f(o);
        // store in the kernel's dtype so both sides round alike
        return copy(make(dtype, len), o.data as Float64Array);
      };
      const tol = 0;
      const same = (x: ArrayLike<number>, y: ArrayLike<number>, name: string) =>
        expect(libraryMaxAbsDiff(x, y), name).toBeLessThanOrEqual(tol);
      same(add(make(dtype, len), a, b), lib((o) => ops.add(o, view(a), view(b))), "add");
      same(sub(make(dtype, len), a, b), lib((o) => ops.sub(o, view(a), view(b))), "sub");
      same(mul(make(dtype, len), a, b), lib((o) => ops.mul(o, view(a), view(b))), "mul");
      same(scale(make(dtype, len), a, -1.25), lib((o) => ops.muls(o, view(a), -1.25)), "scale");
      same(copy(make(dtype, len), a), lib((o) => ops.assign(o, view(a))), "copy");
      same(fill(make(dtype, len), 0.3), lib((o) => ops.assigns(o, 0.3)), "fill");
      same(axpy(b.slice(), a, 0.5), lib((o) => {
        ops.muls(o, view(a), 0.5);
        ops.addeq(o, view(b));
      }), "axpy");
      same(axpby(make(dtype, len), a, b, 0.5, -2), lib((o) => {
        const t = view(new Float64Array(len));
        ops.muls(o, view(a), 0.5);
        ops.muls(t, view(b), -2);
        ops.addeq(o, t);
      }), "axpby");
    }
  });

  it("reductions equal ndarray-ops norminf, norm2squared and sum of products", () => {
    for (const [dtype, n, , , seed] of cases) {
      const a = randomArray(dtype, n * 4, seed, "a");
      const b = randomArray(dtype, n * 4, seed, "b");
      expect(maxAbsDiff(a, b)).toBe(libraryMaxAbsDiff(a, b));
      expect(maxAbs(a)).toBe(ops.norminf(ndarray(Float64Array.from(a))));
      const prod = ndarray(new Float64Array(a.length));
      ops.mul(prod, ndarray(Float64Array.from(a)), ndarray(Float64Array.from(b)));
      expect(Math.abs(dot(a, b) - ops.sum(prod))).toBeLessThanOrEqual(a.length * EPS64 * ops.norm1(prod));
      const sq = ops.norm2squared(ndarray(Float64Array.from(a)));
      expect(Math.abs(sumSquares(a) - sq)).toBeLessThanOrEqual(a.length * EPS64 * sq);
    }
  });

  it("addRowVector and sumRows equal row-wise addeq and column-wise sum on ndarray views", () => {
    for (const [dtype, rows, cols, , seed] of cases) {
      const x = randomArray(dtype, rows * cols, seed, "x");
      const bias = randomArray(dtype, cols, seed, "bias");
      const X = ndarray(Float64Array.from(x), [rows, cols]);
      for (let r = 0; r < rows; r++) ops.addeq(X.pick(r, null), ndarray(Float64Array.from(bias)));
      addRowVector(x, bias, rows, cols);
      expect(libraryMaxAbsDiff(x, copy(make(dtype, rows * cols), X.data as Float64Array))).toBe(0);
      const sums = sumRows(make(dtype, cols), x, rows, cols, 1, 0);
      const Xs = ndarray(Float64Array.from(x), [rows, cols]);
      const expected = Array.from({ length: cols }, (_, j) => ops.sum(Xs.pick(null, j)));
      expect(libraryMaxAbsDiff(sums, expected)).toBeLessThanOrEqual((rows + 4) * epsOf(sums) * rows * 2);
    }
  });
});
