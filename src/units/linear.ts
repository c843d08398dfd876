/**
 * Linear (identity) rate function and its slope.
 * @module
 */

/**
 * Linear rate: `f(x) = x` (identity). Used for linear fixed-point checks and
 * linear output layers.
 * @param x Net input, any number.
 * @returns `x` unchanged.
 * @category Units
 * @example
 * ```ts
 * linear(-2.5); // -2.5
 * ```
 */
export function linear(x: number): number {
  return x;
}

/**
 * Slope of the linear rate: 1 everywhere (NaN for a NaN input, so that a
 * diverged state is not hidden).
 * @param x Net input, any number.
 * @returns 1, or NaN when `x` is NaN.
 * @category Units
 * @example
 * ```ts
 * linearSlope(7); // 1
 * ```
 */
export function linearSlope(x: number): number {
  return x === x ? 1 : Number.NaN;
}
