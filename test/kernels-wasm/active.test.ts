/**
 * The activity-sparse product (activeProduct): C = alpha·X·Wᵀ + beta·C skipping the presynaptic entries
 * (TypeScript) or vector blocks (WebAssembly) at exactly zero must give the dense gemm's bits on every backend.
 * Analytic property (IEEE 754-2019 §6.3): a sum that starts at +0 is never −0 in round-to-nearest, and
 * s + (±0) = s for s ≠ −0, so leaving out terms x·w with x = ±0 and w finite changes no bit.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { typescriptBackend } from "../../src/kernels/index.js";
import type { KernelBackend } from "../../src/kernels/backend.js";
import { check } from "../helpers/property.js";
import { wasmBackends } from "./backends.js";

const backends: readonly KernelBackend[] = [typescriptBackend, ...wasmBackends];

/** Bits of every entry (NaN as one value): a bit-for-bit comparison that also tells −0 from +0. */
function bits(a: ArrayLike<number>): string[] {
  return Array.from(a, (v) => (Number.isNaN(v) ? "NaN" : Object.is(v, -0) ? "-0" : String(v)));
}

/** A case: m patterns of k sending units (zeros, −0 and the odd NaN among them), n receiving units, weights, C. */
const caseArb = fc
  .record({
    m: fc.integer({ min: 1, max: 20 }),
    n: fc.integer({ min: 1, max: 13 }),
    k: fc.integer({ min: 1, max: 41 }),
    seed: fc.integer(),
    zeros: fc.double({ min: 0, max: 1, noNaN: true }),
    nan: fc.boolean(),
    alpha: fc.constantFrom(1, -0.75, 0.3, 0),
    beta: fc.constantFrom(0, 1, 0.5),
  })
  .map(({ m, n, k, seed, zeros, nan, alpha, beta }) => {
    let s = seed >>> 0;
    const next = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
    const x = Array.from({ length: m * k }, () => {
      const r = next();
      return r < zeros ? (next() < 0.2 ? -0 : 0) : next() * 2 - 1;
    });
    if (nan) x[Math.floor(next() * x.length)] = Number.NaN;
    const w = Array.from({ length: n * k }, () => next() * 2 - 1);
    const c = Array.from({ length: m * n }, () => (next() < 0.1 ? 0 : next() * 2 - 1));
    return { m, n, k, x, w, c, alpha, beta };
  });

function run(be: KernelBackend, dtype: "float32" | "float64", arena: boolean, t: { m: number; n: number; k: number; x: number[]; w: number[]; c: number[]; alpha: number; beta: number }): { dense: string[]; active: string[] } {
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
  be.gemm(dense, x, w, t.m, t.n, t.k, false, true, t.alpha, t.beta);
  const listed = a.listActive(x, t.m, t.k, index, start);
  // the listing: ascending blocks per row, each with a non-zero entry (NaN counts, ±0 not)
  const width = a.blockWidth(dtype);
  expect(start[t.m]).toBe(listed);
  for (let r = 0; r < t.m; r++) {
    let expected = 0;
    for (let q = 0; q < Math.floor(t.k / width); q++) if (Array.from(x.subarray(r * t.k + q * width, r * t.k + (q + 1) * width)).some((v) => v !== 0)) expected++;
    expect(start[r + 1]! - start[r]!).toBe(expected);
  }
  a.activeProduct(out, x, w, t.m, t.n, t.k, index, start, t.alpha, t.beta);
  return { dense: bits(dense), active: bits(out) };
}

describe("activity-sparse product X·Wᵀ", () => {
  for (const be of backends) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name}, ${dtype}: the dense gemm's bits, arrays in the backend's memory`, () => {
        check(
          fc.property(caseArb, (t) => {
            const r = run(be, dtype, true, t);
            expect(r.active).toEqual(r.dense);
          }),
          60,
        );
      });
    }
    it(`${be.name}: the dense gemm's bits for ordinary arrays and at the batch sizes of the benchmarks (m = 20, 64; k = 300)`, () => {
      check(
        fc.property(caseArb, (t) => {
          const r = run(be, "float32", false, t);
          expect(r.active).toEqual(r.dense);
        }),
        30,
      );
      for (const m of [20, 64, 65]) {
        let s = 7;
        const next = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
        const k = 300;
        const n = 11;
        const t = {
          m,
          n,
          k,
          x: Array.from({ length: m * k }, () => (next() < 0.8 ? 0 : next())),
          w: Array.from({ length: n * k }, () => next() - 0.5),
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
