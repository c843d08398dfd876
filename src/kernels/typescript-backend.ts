/**
 * The TypeScript kernels as a kernel backend.
 * @module
 */
import type { Dtype, FloatArray } from "../types/index.js";
import { checkAllocation, type KernelBackend } from "./backend.js";
import { add, axpby, axpy, copy, fill, mul, scale, sub } from "./elementwise.js";
import { gemm } from "./gemm.js";
import { gemv } from "./gemv.js";
import { ger } from "./ger.js";
import { allFinite, dot, maxAbs, maxAbsDiff, sumSquares } from "./reductions.js";
import { addRowVector, sumRows } from "./rows.js";
import { typescriptSparseKernels } from "./sparse.js";
import { typescriptActiveKernels } from "./active.js";

/**
 * The TypeScript kernels as a {@link KernelBackend}: the functions of the
 * kernels module unchanged; `allocate` returns an ordinary zeroed
 * `Float32Array`/`Float64Array`. Works wherever JavaScript runs.
 * @category Kernels
 * @example
 * ```ts
 * const be = typescriptBackend;
 * const c = be.gemm(be.allocate("float64", 1), Float64Array.of(1, 2), Float64Array.of(3, 4), 1, 1, 2, false, false, 1, 0);
 * // Float64Array [11]
 * ```
 */
export const typescriptBackend: KernelBackend = Object.freeze({
  name: "typescript",
  allocate(dtype: Dtype, n: number): FloatArray {
    checkAllocation(dtype, n);
    return dtype === "float32" ? new Float32Array(n) : new Float64Array(n);
  },
  gemm,
  gemv,
  ger,
  add,
  sub,
  mul,
  axpy,
  axpby,
  scale,
  fill,
  copy,
  maxAbsDiff,
  allFinite,
  maxAbs,
  dot,
  sumSquares,
  addRowVector,
  sumRows,
  sparse: typescriptSparseKernels,
  active: typescriptActiveKernels,
} as const);
