/**
 * Numeric types shared by every module.
 * @module
 */

/** Float typed array ebbflow computes in. @category Numbers */
export type FloatArray = Float32Array | Float64Array;

/** Precision of a network's state and weights. @category Numbers */
export type Dtype = "float32" | "float64";

/** Allocates a zeroed float array of the given precision. @category Numbers */
export function allocate(dtype: Dtype, length: number): FloatArray {
  return dtype === "float32" ? new Float32Array(length) : new Float64Array(length);
}

/** The dtype of a float array. @category Numbers */
export function dtypeOf(a: FloatArray): Dtype {
  return a instanceof Float32Array ? "float32" : "float64";
}
