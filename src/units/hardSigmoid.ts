/**
 * Hard sigmoid rate function (clip to [0, 1]) and its slope.
 * @module
 */

/**
 * Hard sigmoid rate: `f(x) = min(1, max(0, x))`.
 *
 * Reference: the state nonlinearity `rho` of Equilibrium Propagation
 * (Scellier & Bengio 2017, Front. Comput. Neurosci. 11:24).
 * @param x Net input, any number; NaN gives NaN.
 * @returns The rate, in [0, 1].
 * @category Units
 * @example
 * ```ts
 * hardSigmoid(0.3); // 0.3
 * hardSigmoid(4); // 1
 * ```
 */
export function hardSigmoid(x: number): number {
  return x < 0 ? 0 : x > 1 ? 1 : x;
}

/**
 * Slope of the hard sigmoid: 1 on the CLOSED interval [0, 1], 0 outside.
 *
 * Taking the slope as 0 at the bounds freezes states that start at exactly 0
 * (or 1) under energy-based settling, since their update is multiplied by the
 * slope; hence the closed interval. NaN gives NaN.
 * @param x Net input, any number.
 * @returns 0 or 1 (NaN for NaN).
 * @category Units
 * @example
 * ```ts
 * hardSigmoidSlope(0); // 1
 * hardSigmoidSlope(1); // 1
 * hardSigmoidSlope(1.5); // 0
 * ```
 */
export function hardSigmoidSlope(x: number): number {
  return x >= 0 ? (x <= 1 ? 1 : 0) : x < 0 ? 0 : Number.NaN;
}
