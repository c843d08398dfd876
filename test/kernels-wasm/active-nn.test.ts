/**
 * The activity-sparse tied-feedback product (activeProductNN): C = alpha·X·W + beta·C skipping the entries
 * of X at exactly zero must give the dense gemm's (no transposes) bits on every backend and build.
 * Analytic property (IEEE 754-2019 §6.3): s + (±0) = s for s ≠ −0, and an exact zero sum is −0 only when
 * both terms are, so leaving out terms x·w with x = ±0 and w finite, in the dense kernel's grouping,
 * changes no bit. Shapes cover odd sizes, n and k not multiples of the lane count, m/n/k = 1, and k past
 * the WebAssembly kernel's block of 256 steps; C holds −0 entries (beta ≠ 0 keeps them).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { typescriptBackend } from "../../src/kernels/index.js";
import type { KernelBackend } from "../../src/kernels/backend.js";
import { check } from "../helpers/property.js";
import { wasmBackends } from "./backends.js";

const backends: readonly KernelBackend[] = [typescriptBackend, ...wasmBackends];

/** Bits of every entry (NaN as one value, payloads not compared): tells −0 from +0. */
function bits(a: ArrayLike<number>): string[] {
  return Array.from(a, (v) => (Number.isNaN(v) ? "NaN" : Object.is(v, -0) ? "-0" : String(v)));
}

interface Case {
  m: number;
  n: number;
  k: number;
  x: number[];
  w: number[];
  c: number[];
  alpha: number;
  beta: number;
}

function caseArb(m: fc.Arbitrary<number>, n: fc.Arbitrary<number>, k: fc.Arbitrary<number>): fc.Arbitrary<Case> {
  return fc
    .record({
      m,
      n,
      k,
      seed: fc.integer(),
      zeros: fc.double({ min: 0, max: 1, noNaN: true }),
      nan: fc.boolean(),
      negZeroC: fc.boolean(),
      alpha: fc.constantFrom(1, -0.75, 0.3, 0),
      beta: fc.constantFrom(0, 1, 0.5, -1),
    })
    .map(({ m, n, k, seed, zeros, nan, negZeroC, alpha, beta }) => {
      let s = seed >>> 0;
      const next = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
      const x = Array.from({ length: m * k }, () => {
        const r = next();
        return r < zeros ? (next() < 0.3 ? -0 : 0) : next() * 2 - 1;
      });
      if (nan) x[Math.floor(next() * x.length)] = Number.NaN;
      // weights with exact zeros of both signs, so that zero terms of either sign arise from active entries too
      const w = Array.from({ length: k * n }, () => {
        const r = next();
        return r < 0.05 ? 0 : r < 0.1 ? -0 : next() * 2 - 1;
      });
      const c = Array.from({ length: m * n }, () => {
        const r = next();
        return r < 0.1 ? 0 : negZeroC && r < 0.5 ? -0 : next() * 2 - 1;
      });
      return { m, n, k, x, w, c, alpha, beta };
    });
}

function run(be: KernelBackend, dtype: "float32" | "float64", arena: boolean, t: Case): { dense: string[]; active: string[] } {
  const a = be.active!;
  const arr = (v: number[]) => {
    const r = arena ? be.allocate(dtype, v.length) : dtype === "float32" ? new Float32Array(v.length) : new Float64Array(v.length);
    r.set(v);
    return r;
  };
  const x = arr(t.x);
  const w = arr(t.w);
  const dense = arr(t.c);
  const out = arr(t.c);
  const index = arena ? a.indices(t.m * t.k) : new Int32Array(t.m * t.k);
  const start = arena ? a.indices(t.m + 1) : new Int32Array(t.m + 1);
  be.gemm(dense, x, w, t.m, t.n, t.k, false, false, t.alpha, t.beta);
  const listed = a.listEntries(x, t.m, t.k, index, start);
  // the listing: ascending non-zero entries per row (NaN counts, ±0 not)
  expect(start[t.m]).toBe(listed);
  for (let r = 0; r < t.m; r++) {
    const want = Array.from(x.subarray(r * t.k, (r + 1) * t.k)).flatMap((v, p) => (v !== 0 ? [p] : []));
    expect(Array.from(index.subarray(start[r], start[r + 1]))).toEqual(want);
  }
  a.activeProductNN(out, x, w, t.m, t.n, t.k, index, start, t.alpha, t.beta);
  return { dense: bits(dense), active: bits(out) };
}

describe("activity-sparse tied-feedback product X·W", () => {
  const small = caseArb(fc.integer({ min: 1, max: 9 }), fc.integer({ min: 1, max: 37 }), fc.integer({ min: 1, max: 41 }));
  const deep = caseArb(fc.integer({ min: 1, max: 5 }), fc.integer({ min: 1, max: 19 }), fc.integer({ min: 250, max: 530 }));
  for (const be of backends) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name}, ${dtype}: the dense gemm's bits, arrays in the backend's memory`, () => {
        expect(be.active!.exactNN(3, 5)).toBe(true);
        check(
          fc.property(small, (t) => {
            // shapes where the kernel is not exact (m = 1 or k = 1 on WebAssembly) run the dense gemm: equal too
            const r = run(be, dtype, true, t);
            expect(r.active).toEqual(r.dense);
          }),
          60,
        );
        check(
          fc.property(deep, (t) => {
            const r = run(be, dtype, true, t);
            expect(r.active).toEqual(r.dense);
          }),
          8,
        );
      });
    }
    it(`${be.name}: −0 in C that receives only zero terms (some listed, some not) keeps gemm's sign`, () => {
      // gemm adds every zero term, so C = −0 stays −0 only if all of them are −0 (IEEE 754-2019 §6.3)
      for (const m of [1, 3]) {
        for (const [k, n] of [
          [7, 13],
          [9, 45],
        ] as const) {
          let s = 5;
          const next = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
          // rows of zeros of both signs, with here and there a listed entry whose weights are zeros of both signs
          // (one pattern's x for all rows, so that the even columns below get −0 terms only, in every row)
          const row = Array.from({ length: k }, () => (next() < 0.15 ? 0.5 : next() < 0.5 ? -0 : 0));
          const x = Array.from({ length: m * k }, (_, e) => row[e % k]!);
          const c = Array.from({ length: m * n }, () => -0);
          for (const dtype of ["float32", "float64"] as const) {
            for (const [alpha, beta] of [
              [1, 1],
              [-0.5, 0.5],
            ] as const) {
              // even columns: every term alpha·x·w is −0, so gemm keeps C at −0; odd columns: zeros of random sign
              const w = Array.from({ length: k * n }, (_, e) => {
                const p = Math.floor(e / n);
                const positive = (alpha > 0) === !Object.is(row[p], -0);
                return (e % n) % 2 === 0 ? (positive ? -0 : 0) : next() < 0.5 ? -0 : 0;
              });
              const r = run(be, dtype, true, { m, n, k, x, w, c, alpha, beta });
              expect(r.active).toEqual(r.dense);
              // the case has both signs to get right where gemm adds into C (TypeScript; gemv for one row on
              // WebAssembly; its packed blocks form alpha·s + beta·C with s from +0 instead)
              if (be.name === "typescript" || m === 1) {
                expect(r.dense).toContain("0");
                expect(r.dense).toContain("-0");
              }
            }
          }
        }
      }
    });
    it(`${be.name}: the dense gemm's bits for ordinary arrays and at the benchmarks' shapes (m = 20, 64; k = 10, 500) and for one and two patterns`, () => {
      check(
        fc.property(small, (t) => {
          const r = run(be, "float32", false, t);
          expect(r.active).toEqual(r.dense);
        }),
        20,
      );
      // and one and two patterns with many groups of three listed entries among four or eight (the trees' shapes)
      for (const [m, k, zeros] of [
        [20, 10, 0.7],
        [64, 500, 0.7],
        [1, 40, 0.3],
        [1, 40, 0.5],
        [2, 80, 0.5],
      ] as const) {
        let s = 11;
        const next = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
        const n = 45;
        const t: Case = {
          m,
          n,
          k,
          x: Array.from({ length: m * k }, () => (next() < zeros ? 0 : next())),
          w: Array.from({ length: k * n }, () => next() - 0.5),
          c: Array.from({ length: m * n }, () => next()),
          alpha: 1,
          beta: 1,
        };
        for (const dtype of ["float32", "float64"] as const) {
          const r = run(be, dtype, true, t);
          expect(r.active).toEqual(r.dense);
        }
      }
    });
  }
});
