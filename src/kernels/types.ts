/**
 * Array types of the kernels.
 * @module
 */

/**
 * A float array the kernel only reads: writing through it is a type error.
 * Any `Float32Array` or `Float64Array` is accepted where this is asked for.
 * @category Kernels
 */
export type ReadonlyFloatArray = Readonly<Float32Array> | Readonly<Float64Array>;
