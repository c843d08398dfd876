/**
 * The `ebbflow/kernels` entry: the BLAS-style kernels on flat typed arrays (`gemm`, `gemv`,
 * `ger`, `axpy`, `axpby`, `scale`, `fill`, `copy`, `add`, `sub`, `mul`, reductions, row
 * broadcasts, checked variants), the kernel backend interface with its TypeScript and WebAssembly
 * SIMD implementations, and backend selection.
 *
 * ```ts
 * import { gemm, selectBackend } from "ebbflow/kernels";
 * ```
 * @module
 */
export * from "./index.js";
export * from "./wasm/index.js";
