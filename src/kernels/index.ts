/**
 * Typed-array hot loops: matrix products, outer-product accumulation,
 * elementwise operations and reductions on flat row-major arrays.
 *
 * Conventions shared by every kernel:
 * - output first: the destination is the first argument and is returned;
 * - nothing is allocated and nothing is checked (validate once at the edge
 *   with `checkGemm`, `checkGemv`, `checkGer` or call the
 *   members of `kernelsChecked`);
 * - `Float32Array` and `Float64Array` are both accepted, also mixed (values
 *   are rounded to the storage type of the output when stored);
 * - each kernel documents whether `out` may alias an input.
 * @module
 */
export type { ReadonlyFloatArray } from "./types.js";
export { gemm } from "./gemm.js";
export { gemv } from "./gemv.js";
export { ger } from "./ger.js";
export { add, sub, mul, axpy, axpby, scale, fill, copy } from "./elementwise.js";
export { maxAbsDiff, allFinite, maxAbs, dot, sumSquares } from "./reductions.js";
export { addRowVector, sumRows } from "./rows.js";
export { checkGemm, checkGemv, checkGer, kernelsChecked } from "./checked.js";
export type { BackendName, KernelBackend } from "./backend.js";
export { typescriptBackend } from "./typescript-backend.js";
export { fillUnit, type UnitFillKind } from "./units.js";
export {
  compressRows,
  expandRows,
  gatherRows,
  storedEntries,
  sparseDrive,
  sparseDriveTransposed,
  sparseSampledProduct,
  typescriptSparseKernels,
  type RowCompressed,
  type SparseAllocator,
  type SparseKernels,
} from "./sparse.js";
export { activeProduct, activeProductNN, listActive, typescriptActiveKernels, ACTIVE_FEEDBACK_CROSSOVER, ACTIVE_PRODUCT_CROSSOVER, type ActiveKernels } from "./active.js";
export { chooseStorage, localMask, maskDensity, SPARSE_DENSITY_CROSSOVER, type StorageOption } from "./storage.js";
export {
  convolve,
  convolveTransposed,
  convolutionChange,
  convolutionChangeByRows,
  convolutionChangeDirect,
  convolutionGeometry,
  convolutionMatrix,
  convolveByRows,
  convolveDirect,
  convolveTransposedByRows,
  convolveTransposedDirect,
  fieldRowsLength,
  fieldSize,
  fieldsToRows,
  inputUnits,
  outputUnits,
  rowsToFields,
  type ConvolutionGeometry,
} from "./convolution.js";
