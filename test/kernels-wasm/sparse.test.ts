/**
 * The row-compressed sparse kernels on every backend (TypeScript, WebAssembly SIMD, relaxed SIMD) against
 * the dense masked product: the naive triple loop of the definition on the dense form with zeros outside
 * the pattern (level-3 BLAS xGEMM semantics, Dongarra et al. 1990) within the inner-product rounding bound
 * γ_t Σ|terms| (Higham 2002, §3.1), and the project's dense `gemm` kernel on the same matrix. Between the
 * TypeScript kernels and the plain SIMD build the results are bit-identical (same terms, same order, both
 * summed in float64).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { compressRows, expandRows, gatherRows, storedEntries, typescriptBackend, typescriptSparseKernels, type KernelBackend, type RowCompressed, type SparseKernels } from "../../src/kernels/index.js";
import { createRandom } from "../../src/random/index.js";
import type { Dtype, FloatArray } from "../../src/types/index.js";
import { check } from "../helpers/property.js";
import { arb, epsOf, expectExact, expectWithinBound, make, naiveGemm, randomArray } from "../kernels/reference.js";
import { simd, wasmBackends } from "./backends.js";

const backends: readonly KernelBackend[] = [typescriptBackend, ...wasmBackends];

/** A random 0/1 mask of rows × cols with the given density, from a seeded stream. */
function randomMask(rows: number, cols: number, density: number, seed: number): Uint8Array {
  const rng = createRandom(seed).child("mask");
  const m = new Uint8Array(rows * cols);
  for (let q = 0; q < m.length; q++) m[q] = rng.uniform() < density ? 1 : 0;
  return m;
}

/** The matrix compressed with the backend's allocator (arena arrays for a WASM backend), and its dense form. */
function sparseOn(be: KernelBackend, mask: Uint8Array, rows: number, cols: number, dtype: Dtype, seed: number): { s: RowCompressed; dense: FloatArray } {
  const w = randomArray(dtype, rows * cols, seed, "w");
  const s = compressRows(mask, rows, cols, dtype, w, (be.sparse as SparseKernels).allocator);
  if (be !== typescriptBackend) {
    // the fast path: values and index arrays all in the backend's memory
    const wasm = be as (typeof wasmBackends)[number];
    expect(wasm.isArenaView(s.values) && s.rowStart.buffer === s.values.buffer && s.columnIndex.buffer === s.values.buffer).toBe(true);
  }
  return { s, dense: expandRows(make(dtype, rows * cols), s) };
}

/** A copy of `x` where the backend's kernels read it without copies. */
function place(be: KernelBackend, x: FloatArray): FloatArray {
  const v = be.allocate(x instanceof Float32Array ? "float32" : "float64", x.length);
  v.set(x);
  return v;
}

const shape = fc.record({
  rows: fc.integer({ min: 1, max: 24 }),
  cols: fc.integer({ min: 1, max: 24 }),
  batch: fc.integer({ min: 1, max: 9 }),
  density: fc.oneof(fc.constantFrom(0, 1), fc.double({ min: 0, max: 1, noNaN: true })),
});

describe("row-compressed storage", () => {
  it("stores exactly the masked entries and round-trips through the dense form", () => {
    check(
      fc.property(shape, arb.dtype, arb.seed, ({ rows, cols, density }, dtype, seed) => {
        const mask = randomMask(rows, cols, density, seed);
        const w = randomArray(dtype, rows * cols, seed, "w");
        const s = compressRows(mask, rows, cols, dtype, w);
        expect(storedEntries(s)).toBe(mask.reduce((a, b) => a + b, 0));
        const dense = expandRows(make(dtype, rows * cols), s);
        for (let q = 0; q < rows * cols; q++) expect(dense[q]).toBe(mask[q] ? w[q] : 0);
        const back = compressRows(mask, rows, cols, dtype);
        gatherRows(back, dense);
        expectExact(back.values, s.values, "gather");
        for (let i = 0; i < rows; i++) for (let k = s.rowStart[i]! + 1; k < s.rowStart[i + 1]!; k++) expect(s.columnIndex[k]! > s.columnIndex[k - 1]!).toBe(true);
      }),
    );
  });

  it("gives the hand-worked compression of [[3, 0, 5], [0, 0, 0], [0, 7, 0]]", () => {
    // worked example: CSR of this matrix (Saad 2003, §3.4 layout): rowStart [0, 2, 2, 3], columns [0, 2, 1]
    const s = compressRows([1, 0, 1, 0, 0, 0, 0, 1, 0], 3, 3, "float64", Float64Array.of(3, 0, 5, 0, 0, 0, 0, 7, 0));
    expect(Array.from(s.rowStart)).toEqual([0, 2, 2, 3]);
    expect(Array.from(s.columnIndex)).toEqual([0, 2, 1]);
    expect(Array.from(s.values)).toEqual([3, 5, 7]);
    // drive of x = [1, 2, 4]: W x = [3 + 20, 0, 14]
    const y = typescriptSparseKernels.sparseDrive(new Float64Array(3), s.values, s.rowStart, s.columnIndex, Float64Array.of(1, 2, 4), 3, 3, 1, 1, 0);
    expect(Array.from(y)).toEqual([23, 0, 14]);
    // transposed drive of z = [1, 2, 4]: Wᵀ z = [3, 28, 5]
    const t = typescriptSparseKernels.sparseDriveTransposed(new Float64Array(3), s.values, s.rowStart, s.columnIndex, Float64Array.of(1, 2, 4), 3, 3, 1, 1, 0);
    expect(Array.from(t)).toEqual([3, 28, 5]);
  });

  it("refuses a mask shorter than the matrix with a typed error", () => {
    expect(() => compressRows([1, 0], 2, 2, "float64")).toThrow(/mask/);
  });
});

describe("sparse kernels equal the dense masked product on every backend", () => {
  it("drive out = alpha X Wᵀ + beta out", () => {
    check(
      fc.property(shape, arb.alpha, arb.beta, arb.dtype, arb.seed, ({ rows, cols, batch, density }, alpha, beta, dtype, seed) => {
        const mask = randomMask(rows, cols, density, seed);
        const x = randomArray(dtype, batch * cols, seed, "x");
        const y0 = randomArray(dtype, batch * rows, seed, "y");
        if (beta === 0) y0.fill(Number.NaN);
        let first: FloatArray | null = null;
        for (const be of backends) {
          const { s, dense } = sparseOn(be, mask, rows, cols, dtype, seed);
          const ref = naiveGemm(Array.from(y0), x, dense, batch, rows, cols, false, true, alpha, beta);
          const y = place(be, y0);
          const label = `${be.name} ${dtype} ${rows}x${cols} b=${batch} d=${density} alpha=${alpha} beta=${beta}`;
          expect(be.sparse!.sparseDrive(y, s.values, s.rowStart, s.columnIndex, place(be, x), rows, cols, batch, alpha, beta)).toBe(y);
          expectWithinBound(y, ref, cols + 4, epsOf(y), label);
          const viaDense = be.gemm(place(be, y0), place(be, x), dense, batch, rows, cols, false, true, alpha, beta);
          expectWithinBound(y, { value: Float64Array.from(viaDense), magnitude: ref.magnitude }, 2 * (cols + 4), epsOf(y), `${label} vs gemm`);
          if (first === null) first = y;
          else if (be === simd) expectExact(y, first, `${label}: plain SIMD = TypeScript`);
        }
      }),
      150,
    );
  });

  it("transposed drive out = alpha Z W + beta out (the feedback through the same weights)", () => {
    check(
      fc.property(shape, arb.alpha, arb.beta, arb.dtype, arb.seed, ({ rows, cols, batch, density }, alpha, beta, dtype, seed) => {
        const mask = randomMask(rows, cols, density, seed);
        const z = randomArray(dtype, batch * rows, seed, "z");
        const y0 = randomArray(dtype, batch * cols, seed, "y");
        if (beta === 0) y0.fill(Number.NaN);
        let first: FloatArray | null = null;
        for (const be of backends) {
          const { s, dense } = sparseOn(be, mask, rows, cols, dtype, seed);
          const ref = naiveGemm(Array.from(y0), z, dense, batch, cols, rows, false, false, alpha, beta);
          const y = place(be, y0);
          const label = `${be.name} ${dtype} ${rows}x${cols} b=${batch} d=${density} alpha=${alpha} beta=${beta}`;
          be.sparse!.sparseDriveTransposed(y, s.values, s.rowStart, s.columnIndex, place(be, z), rows, cols, batch, alpha, beta);
          // float32 output rounds after every term (each addition is stored): t + 4 roundings of the storage type
          expectWithinBound(y, ref, rows + 4, epsOf(y), label);
          if (first === null) first = y;
          else if (be === simd) expectExact(y, first, `${label}: plain SIMD = TypeScript`);
        }
      }),
      150,
    );
  });

  it("sampled product: the contrastive change alpha postᵀ pre + beta W at the stored entries only", () => {
    check(
      fc.property(shape, arb.alpha, arb.beta, arb.dtype, arb.seed, ({ rows, cols, batch, density }, alpha, beta, dtype, seed) => {
        const mask = randomMask(rows, cols, density, seed);
        const post = randomArray(dtype, rows * batch, seed, "post");
        const pre = randomArray(dtype, batch * cols, seed, "pre");
        let first: FloatArray | null = null;
        for (const be of backends) {
          const { s, dense } = sparseOn(be, mask, rows, cols, dtype, seed);
          // the dense change of the contrast forms: gemm(W, post (rows×B), pre (B×cols), rows, cols, B, ...)
          const ref = naiveGemm(dense, post, pre, rows, cols, batch, false, false, alpha, beta);
          if (beta === 0) s.values.fill(Number.NaN);
          const label = `${be.name} ${dtype} ${rows}x${cols} b=${batch} d=${density} alpha=${alpha} beta=${beta}`;
          be.sparse!.sparseSampledProduct(s.values, s.rowStart, s.columnIndex, place(be, post), place(be, pre), rows, cols, batch, alpha, beta);
          const got = expandRows(make(dtype, rows * cols), s);
          const onPattern = { value: ref.value.map((v, q) => (mask[q] ? v : 0)), magnitude: ref.magnitude.map((v, q) => (mask[q] ? v : 0)) };
          expectWithinBound(got, onPattern, batch + 4, epsOf(got), label);
          for (let q = 0; q < rows * cols; q++) if (!mask[q]) expect(got[q]).toBe(0);
          if (first === null) first = s.values.slice();
          else if (be === simd) expectExact(s.values, first, `${label}: plain SIMD = TypeScript`);
        }
      }),
      150,
    );
  });

  it("runs the TypeScript kernel for ordinary arrays on a WASM backend, with the same bits", () => {
    const mask = randomMask(7, 5, 0.4, 3);
    for (const be of wasmBackends) {
      const s = compressRows(mask, 7, 5, "float64", randomArray("float64", 35, 3, "w"));
      const x = randomArray("float64", 3 * 5, 3, "x");
      const a = be.sparse!.sparseDrive(new Float64Array(21), s.values, s.rowStart, s.columnIndex, x, 7, 5, 3, 1, 0);
      const b = typescriptSparseKernels.sparseDrive(new Float64Array(21), s.values, s.rowStart, s.columnIndex, x, 7, 5, 3, 1, 0);
      expectExact(a, b, be.name);
    }
  });
});
