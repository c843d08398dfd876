/**
 * Rectified linear rate function and its slope.
 * @module
 */

/**
 * Rectified linear rate: `f(x) = max(0, x)`.
 *
 * Reference: Nair & Hinton 2010 (ICML, "Rectified linear units improve
 * restricted Boltzmann machines"); Glorot, Bordes & Bengio 2011 (AISTATS).
 * @param x Net input, any number; NaN gives NaN.
 * @returns The rate, in [0, Infinity).
 * @category Units
 * @example
 * ```ts
 * relu(-1); // 0
 * relu(2); // 2
 * ```
 */
export function relu(x: number): number {
  return x < 0 ? 0 : x;
}

/**
 * Slope of the rectified linear rate: 1 for `x >= 0`, 0 for `x < 0`.
 *
 * The slope at the kink `x = 0` is taken as 1 (the active side), for the same
 * reason as the hard sigmoid's closed interval: a state that starts at 0 must
 * be able to move under energy-based settling. (Autodiff libraries commonly
 * use 0 there.) NaN gives NaN.
 * @param x Net input, any number.
 * @returns 0 or 1 (NaN for NaN).
 * @category Units
 * @example
 * ```ts
 * reluSlope(0); // 1
 * reluSlope(-0.5); // 0
 * ```
 */
export function reluSlope(x: number): number {
  return x >= 0 ? 1 : x < 0 ? 0 : Number.NaN;
}
