/**
 * The sparse kernels of a WebAssembly backend (`sparseDrive`, `sparseDriveTransposed`,
 * `sparseSampledProduct`, exports declared in assembly/layout.mjs): the fast path only, on arena views of
 * one dtype (index arrays included, allocated in the arena by the backend's `allocator`); any other call
 * runs the TypeScript kernel, which gives the same results (bit for bit in the plain SIMD build, see
 * assembly/sparse.ts). These wrappers are written here rather than generated from the template of
 * scripts/build-wasm.mjs because that template stages float arrays only.
 * @module
 */
import type { Dtype, FloatArray } from "../../types/index.js";
import { sparseDrive, sparseDriveTransposed, sparseSampledProduct, type SparseKernels } from "../sparse.js";
import type { ReadonlyFloatArray } from "../types.js";
import type { KernelExports } from "./generated/layout.js";

type SparseExports = Pick<KernelExports, "sparseDriveF32" | "sparseDriveF64" | "sparseDriveTransposedF32" | "sparseDriveTransposedF64" | "sparseSampledProductF32" | "sparseSampledProductF64">;

/**
 * Builds the sparse kernels of a WASM backend on its exports, its test of arena views and its allocator.
 * @internal
 */
export function createSparseKernels(X: SparseExports, own: (b: ArrayBufferLike) => boolean, allocate: (dtype: Dtype, n: number) => FloatArray): SparseKernels {
  /** 4 or 8 when the three float arrays share a dtype and every array is an arena view, else 0. */
  const fast = (a: ReadonlyFloatArray, b: ReadonlyFloatArray, c: ReadonlyFloatArray, r: Int32Array, ci: Int32Array): number => {
    const w = a instanceof Float32Array ? (b instanceof Float32Array && c instanceof Float32Array ? 4 : 0) : b instanceof Float64Array && c instanceof Float64Array ? 8 : 0;
    return w !== 0 && own(a.buffer) && own(b.buffer) && own(c.buffer) && own(r.buffer) && own(ci.buffer) ? w : 0;
  };
  return Object.freeze({
    sparseDrive<T extends FloatArray>(out: T, values: ReadonlyFloatArray, rowStart: Int32Array, columnIndex: Int32Array, x: ReadonlyFloatArray, rows: number, columns: number, batch: number, alpha: number, beta: number): T {
      const w = fast(out, values, x, rowStart, columnIndex);
      if (w === 0) return sparseDrive(out, values, rowStart, columnIndex, x, rows, columns, batch, alpha, beta);
      if (rows > 0 && batch > 0) (w === 4 ? X.sparseDriveF32 : X.sparseDriveF64)(out.byteOffset, values.byteOffset, rowStart.byteOffset, columnIndex.byteOffset, x.byteOffset, rows, columns, batch, alpha, beta);
      return out;
    },
    sparseDriveTransposed<T extends FloatArray>(out: T, values: ReadonlyFloatArray, rowStart: Int32Array, columnIndex: Int32Array, z: ReadonlyFloatArray, rows: number, columns: number, batch: number, alpha: number, beta: number): T {
      const w = fast(out, values, z, rowStart, columnIndex);
      if (w === 0) return sparseDriveTransposed(out, values, rowStart, columnIndex, z, rows, columns, batch, alpha, beta);
      if (columns > 0 && batch > 0) (w === 4 ? X.sparseDriveTransposedF32 : X.sparseDriveTransposedF64)(out.byteOffset, values.byteOffset, rowStart.byteOffset, columnIndex.byteOffset, z.byteOffset, rows, columns, batch, alpha, beta);
      return out;
    },
    sparseSampledProduct<T extends FloatArray>(values: T, rowStart: Int32Array, columnIndex: Int32Array, post: ReadonlyFloatArray, pre: ReadonlyFloatArray, rows: number, columns: number, batch: number, alpha: number, beta: number): T {
      const w = fast(values, post, pre, rowStart, columnIndex);
      if (w === 0) return sparseSampledProduct(values, rowStart, columnIndex, post, pre, rows, columns, batch, alpha, beta);
      if (rows > 0) (w === 4 ? X.sparseSampledProductF32 : X.sparseSampledProductF64)(values.byteOffset, rowStart.byteOffset, columnIndex.byteOffset, post.byteOffset, pre.byteOffset, rows, columns, batch, alpha, beta);
      return values;
    },
    allocator: {
      values: allocate,
      // an index array is a float32 allocation of the same length viewed as i32 (same bytes, same alignment)
      indices: (n: number): Int32Array => {
        const f = allocate("float32", n);
        return new Int32Array(f.buffer, f.byteOffset, n);
      },
    },
  });
}
