/**
 * The activity-sparse product kernels of a WebAssembly backend (`activeBlocks`, `activeProductNT`, exports
 * declared in assembly/layout.mjs; see assembly/active.ts): the fast path on arena views of one dtype (index
 * arrays included). Other arrays are listed in JavaScript and multiplied by the backend's dense `gemm`,
 * which gives the same bits. Written here, like ./sparse.ts, because the generated wrappers stage float
 * arrays only.
 * @module
 */
import type { Dtype, FloatArray } from "../../types/index.js";
import { listActive, listActiveBlocks, type ActiveKernels } from "../active.js";
import type { KernelBackend } from "../backend.js";
import type { ReadonlyFloatArray } from "../types.js";
import type { KernelExports } from "./generated/layout.js";

type ActiveExports = Pick<
  KernelExports,
  "activeBlocksF32" | "activeBlocksF64" | "activeProductNTF32" | "activeProductNTF64" | "activeEntriesF32" | "activeEntriesF64" | "activeProductNNF32" | "activeProductNNF64"
>;

/**
 * Whether `activeProductNN` gives the WebAssembly `gemm`'s A·B (m rows, inner dimension k, no transposes) bit
 * for bit: where gemm runs packed blocks (m ≥ 2, k ≥ 2) or, for m = 1, a matrix-vector product (assembly/gemm.ts);
 * not for k = 1 with m ≥ 2 (an outer product there, which the caller runs dense).
 * @internal
 */
export function wasmFeedbackExact(m: number, k: number): boolean {
  return m === 1 || k >= 2;
}

/**
 * Whether the WebAssembly `gemm` forms A·Bᵀ (m rows, inner dimension k) with the dot-product tiles that
 * `activeProductNT` mirrors (useDotPath in assembly/gemm.ts; k = 1 runs as an outer product there).
 * @internal
 */
export function wasmDotPath(m: number, k: number): boolean {
  return k >= 2 && (m <= 16 || (m <= 64 && k >= 256));
}

/**
 * Builds the activity-sparse kernels of a WASM backend on its exports, its test of arena views, its
 * allocator and its dense gemm.
 * @internal
 */
export function createActiveKernels(X: ActiveExports, own: (b: ArrayBufferLike) => boolean, allocate: (dtype: Dtype, n: number) => FloatArray, gemm: KernelBackend["gemm"]): ActiveKernels {
  const width = (x: ReadonlyFloatArray): number => (x instanceof Float32Array ? 4 : 2);
  /** Whether a product can run on the exports: one dtype, alpha not 0, every array an arena view. */
  const onExports = (out: FloatArray, x: ReadonlyFloatArray, w: ReadonlyFloatArray, index: Int32Array, start: Int32Array, alpha: number): boolean =>
    (out instanceof Float32Array ? x instanceof Float32Array && w instanceof Float32Array : x instanceof Float64Array && w instanceof Float64Array) &&
    alpha !== 0 &&
    own(out.buffer) &&
    own(x.buffer) &&
    own(w.buffer) &&
    own(index.buffer) &&
    own(start.buffer);
  return Object.freeze({
    blockWidth: (dtype: Dtype) => (dtype === "float32" ? 4 : 2),
    listActive(x: ReadonlyFloatArray, rows: number, k: number, index: Int32Array, start: Int32Array): number {
      if (rows > 0 && k > 0 && own(x.buffer) && own(index.buffer) && own(start.buffer)) {
        return (x instanceof Float32Array ? X.activeBlocksF32 : X.activeBlocksF64)(x.byteOffset, rows, k, index.byteOffset, start.byteOffset);
      }
      return listActiveBlocks(x, rows, k, width(x), index, start);
    },
    activeProduct<T extends FloatArray>(out: T, x: ReadonlyFloatArray, w: ReadonlyFloatArray, m: number, n: number, k: number, index: Int32Array, start: Int32Array, alpha: number, beta: number): T {
      if (m <= 0 || n <= 0) return out;
      if (!wasmDotPath(m, k) || !onExports(out, x, w, index, start, alpha)) return gemm(out, x, w, m, n, k, false, true, alpha, beta);
      (out instanceof Float32Array ? X.activeProductNTF32 : X.activeProductNTF64)(out.byteOffset, x.byteOffset, w.byteOffset, m, n, k, index.byteOffset, start.byteOffset, alpha, beta);
      return out;
    },
    exact: wasmDotPath,
    listEntries(x: ReadonlyFloatArray, rows: number, k: number, index: Int32Array, start: Int32Array): number {
      if (rows > 0 && k > 0 && own(x.buffer) && own(index.buffer) && own(start.buffer)) {
        return (x instanceof Float32Array ? X.activeEntriesF32 : X.activeEntriesF64)(x.byteOffset, rows, k, index.byteOffset, start.byteOffset);
      }
      return listActive(x, rows, k, index, start);
    },
    activeProductNN<T extends FloatArray>(out: T, x: ReadonlyFloatArray, w: ReadonlyFloatArray, m: number, n: number, k: number, index: Int32Array, start: Int32Array, alpha: number, beta: number): T {
      if (m <= 0 || n <= 0) return out;
      if (!wasmFeedbackExact(m, k) || !onExports(out, x, w, index, start, alpha)) return gemm(out, x, w, m, n, k, false, false, alpha, beta);
      (out instanceof Float32Array ? X.activeProductNNF32 : X.activeProductNNF64)(out.byteOffset, x.byteOffset, w.byteOffset, m, n, k, index.byteOffset, start.byteOffset, alpha, beta);
      return out;
    },
    exactNN: wasmFeedbackExact,
    indices: (n: number): Int32Array => {
      // a float32 allocation of the same length viewed as i32 (same bytes, same alignment), as for the sparse kernels
      const f = allocate("float32", n);
      return new Int32Array(f.buffer, f.byteOffset, n);
    },
  });
}
