/**
 * The activity-sparse contrastive update (rowSparseOuterSum): rows of the change whose phase difference is
 * exactly zero in every pattern are skipped; the result must equal the dense product bit for bit (the
 * dense kernel's own sums; analytic property: a skipped row's dense sum is Σ (+0 · finite) = +0), on the
 * TypeScript kernels and on every WebAssembly build this engine runs.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { typescriptBackend } from "../../src/kernels/index.js";
import type { KernelBackend } from "../../src/kernels/backend.js";
import { outerSum, rowSparseOuterSum } from "../../src/rules/base.js";
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
    const pre = Array.from({ length: batch * m }, () => (next() < 0.6 ? 0 : next()));
    const w = Array.from({ length: n * m }, () => next() * 2 - 1);
    return { batch, n, m, diff, pre, w, alpha: next() * 0.3 + 0.01 };
  });

describe("row-sparse contrastive update", () => {
  for (const be of backends) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name}, ${dtype}: equals the dense product bit for bit, in place (beta 1) and overwriting (beta 0)`, () => {
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
            // crossover 1: take the sparse path whenever a row is inactive
            const took = rowSparseOuterSum(be, sparse, alpha, d, x, batch, n, m, beta, 1.01);
            expect(took).toBe(true);
            expect(Array.from(sparse)).toEqual(Array.from(dense));
          }),
          60,
        );
      });
    }
    it(`${be.name}: leaves the dense product to the caller at or above the crossover`, () => {
      const d = be.allocate("float32", 2 * 4).fill(1);
      const x = be.allocate("float32", 2 * 3).fill(1);
      const out = be.allocate("float32", 4 * 3);
      expect(rowSparseOuterSum(be, out, 1, d, x, 2, 4, 3, 0)).toBe(false);
      expect(Array.from(out)).toEqual(new Array(12).fill(0));
    });
  }
});
