/**
 * The activity-sparse contrastive update (sparseOuterSum): entries of the change whose row has a zero phase difference or whose column a zero activity
 * (in every pattern) are skipped; the result must equal the dense product bit for bit on the TypeScript
 * kernels (the same sums; analytic property: a skipped entry's dense sum is Σ (±0) = 0) and within the
 * rounding bound of two orders of the same sum on every WebAssembly build this engine runs.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { typescriptBackend } from "../../src/kernels/index.js";
import type { KernelBackend } from "../../src/kernels/backend.js";
import { outerSum, sparseOuterSum } from "../../src/rules/base.js";
import { check } from "../helpers/property.js";
import { wasmBackends } from "./backends.js";

const backends: readonly KernelBackend[] = [typescriptBackend, ...wasmBackends];

/** A case: batch, post and pre sizes, which post rows are active, differences, pre activities (many exact zeros), weights. */
const caseArb = fc
  .record({ batch: fc.integer({ min: 2, max: 9 }), n: fc.integer({ min: 2, max: 23 }), m: fc.integer({ min: 1, max: 37 }), seed: fc.integer(), density: fc.double({ min: 0, max: 1, noNaN: true }) })
  .map(({ batch, n, m, seed, density }) => {
    let s = seed >>> 0;
    const next = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
    const active = Array.from({ length: n }, () => next() < density);
    const diff = Array.from({ length: batch * n }, (_, k) => (active[k % n] && next() < 0.7 ? next() * 2 - 1 : 0));
    const zeros = next() < 0.3 ? 0 : 0.6; // some cases with every column active (the whole-row path)
    const pre = Array.from({ length: batch * m }, () => (next() < zeros ? 0 : next() + 0.01));
    const w = Array.from({ length: n * m }, () => next() * 2 - 1);
    return { batch, n, m, diff, pre, w, alpha: next() * 0.3 + 0.01 };
  });

describe("activity-sparse contrastive update (rows and columns)", () => {
  for (const be of backends) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name}, ${dtype}: equals the dense product (bit for bit on TypeScript, within two orders of one sum on WebAssembly), in place and overwriting`, () => {
        check(
          fc.property(caseArb, fc.constantFrom(0 as const, 1 as const), ({ batch, n, m, diff, pre, w, alpha }, beta) => {
            const arr = (v: number[]) => {
              const a = be.allocate(dtype, v.length);
              a.set(v);
              return a;
            };
            const d = arr(diff);
            const x = arr(pre);
            const dense = arr(w);
            const sparse = arr(w);
            outerSum(be, dense, alpha, d, x, batch, n, m, beta);
            // crossover above 1: always the sparse path
            const took = sparseOuterSum(be, sparse, alpha, d, x, batch, n, m, beta, 1.01);
            expect(took).toBe(true);
            if (be.name === "typescript") expect(Array.from(sparse)).toEqual(Array.from(dense));
            else {
              // the WebAssembly gemm picks its path by shape (small products apply alpha to the sum, packed
              // ones to each term), so the blocks may round differently: within the bound of two orders of
              // the same sum, 2·γ_{B+2}·(|out| + |alpha|·Σ_b |diff·pre|) (Higham 2002, Accuracy and Stability
              // of Numerical Algorithms, §3.1), u the unit roundoff of the dtype
              const u = dtype === "float32" ? 2 ** -24 : 2 ** -53;
              const gamma = ((batch + 2) * u) / (1 - (batch + 2) * u);
              for (let i = 0; i < n; i++) {
                for (let j = 0; j < m; j++) {
                  let mag = beta === 1 ? Math.abs(w[i * m + j]!) : 0;
                  for (let b = 0; b < batch; b++) mag += Math.abs(alpha * (d[b * n + i] as number) * (x[b * m + j] as number));
                  expect(Math.abs((sparse[i * m + j] as number) - (dense[i * m + j] as number))).toBeLessThanOrEqual(2 * gamma * mag);
                }
              }
            }
          }),
          60,
        );
      });
    }
    it(`${be.name}: leaves the dense product to the caller at or above the crossover`, () => {
      const d = be.allocate("float32", 2 * 4).fill(1);
      const x = be.allocate("float32", 2 * 3).fill(1);
      const out = be.allocate("float32", 4 * 3);
      expect(sparseOuterSum(be, out, 1, d, x, 2, 4, 3, 0)).toBe(false);
      expect(Array.from(out)).toEqual(new Array(12).fill(0));
    });
  }
});
