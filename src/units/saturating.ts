/**
 * Saturating rational rate function and its slope.
 * @module
 */

/**
 * Saturating rational rate: with `u = gain * max(0, x - threshold)`,
 * `f(x) = u / (u + 1)`. Zero up to the threshold, then rising with slope
 * `gain` and saturating towards 1.
 *
 * Reference: the hyperbolic-ratio (Naka–Rushton) response `I / (I + s)`
 * with exponent 1 (Naka & Rushton 1966, J. Physiol. 185:536), applied to the
 * rectified excess `x - threshold`, with half-saturation at `1 / gain` above
 * threshold.
 * @param x Net input, any number; `+Infinity` gives 1, NaN gives NaN.
 * @param gain Slope at threshold, finite and > 0 (default 1).
 * @param threshold Net input below which the rate is 0, finite (default 0).
 * @returns The rate, in [0, 1).
 * @category Units
 * @example
 * ```ts
 * saturating(1); // 0.5
 * saturating(-3); // 0
 * ```
 */
export function saturating(x: number, gain = 1, threshold = 0): number {
  const z = x - threshold;
  // 1 / (1 + 1/u) equals u / (u + 1); each step is a correctly rounded monotone
  // operation, so the result never decreases as x grows (not even by one ulp),
  // and u = Infinity gives 1 without Infinity / Infinity.
  if (z > 0) return 1 / (1 + 1 / (gain * z));
  return z <= 0 ? 0 : Number.NaN;
}

/**
 * Slope of the saturating rational rate: `gain / (u + 1)^2` with
 * `u = gain * (x - threshold)` for `x >= threshold`, 0 below.
 *
 * At the kink `x = threshold` the slope is taken from the active side
 * (`gain`), as for the rectifier. NaN gives NaN.
 * @param x Net input, any number.
 * @param gain Slope at threshold, finite and > 0 (default 1).
 * @param threshold Net input below which the rate is 0 (default 0).
 * @returns The slope, in [0, gain].
 * @category Units
 * @example
 * ```ts
 * saturatingSlope(1); // 0.25
 * saturatingSlope(0, 2); // 2
 * ```
 */
export function saturatingSlope(x: number, gain = 1, threshold = 0): number {
  const z = x - threshold;
  if (z >= 0) {
    const d = gain * z + 1;
    return gain / (d * d);
  }
  return z < 0 ? 0 : Number.NaN;
}
