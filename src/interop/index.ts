/**
 * Interoperation with other array code and with NumPy: `ndarray`-layout views
 * of weights, biases, states and activity records, `ndarray`-like inputs, and
 * `.npy` / `.npz` files written and read bit for bit (no Node built-ins).
 * @module
 */
export {
  biasView,
  feedbackView,
  flatBatch,
  isNdArrayLike,
  ndView,
  recordView,
  rowMajorStrides,
  rowMajorValues,
  stateView,
  weightView,
  type BatchInput,
  type LayerInputs,
  type NdArrayLike,
  type NdView,
} from "./ndarray.js";
export { decodeNpy, decodeNpyText, encodeNpy, encodeNpyText, type NpyArray, type NumericArray } from "./npy.js";
export { crc32, readZip, writeZip } from "./zip.js";
export { arrayToCsv, modelArrays, modelFromNpz, modelToNpz, type ModelArray } from "./model.js";
