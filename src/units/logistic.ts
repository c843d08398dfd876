/**
 * Logistic rate function and its slope.
 * @module
 */

/**
 * Logistic rate: `f(x) = 1 / (1 + exp(-gain * (x - offset)))`.
 *
 * Reference: the logistic unit of error back-propagation (Rumelhart, Hinton &
 * Williams 1986, Nature 323:533).
 *
 * No validation (scalar hot path): `createUnit` validates once.
 * @param x Net input, any number; `±Infinity` gives 1 or 0, NaN gives NaN.
 * @param gain Slope factor, finite and > 0 (default 1).
 * @param offset Net input at which the rate is one half, finite (default 0).
 * @returns The rate, in [0, 1].
 * @category Units
 * @example
 * ```ts
 * logistic(0); // 0.5
 * logistic(2, 1, 2); // 0.5
 * ```
 */
export function logistic(x: number, gain = 1, offset = 0): number {
  return 1 / (1 + Math.exp(-gain * (x - offset)));
}

/**
 * Slope of the logistic rate with respect to the net input:
 * `f'(x) = gain * s / (1 + s)^2` with `s = exp(-gain * |x - offset|)`
 * (equal to `gain * f (1 - f)`, written so that both tails keep full relative
 * precision).
 * @param x Net input, any number.
 * @param gain Slope factor, finite and > 0 (default 1).
 * @param offset Net input at which the rate is one half (default 0).
 * @returns The slope, in [0, gain / 4].
 * @category Units
 * @example
 * ```ts
 * logisticSlope(0); // 0.25
 * ```
 */
export function logisticSlope(x: number, gain = 1, offset = 0): number {
  const s = Math.exp(-gain * Math.abs(x - offset));
  const d = 1 + s;
  return (gain * s) / (d * d);
}

/**
 * Slope of the logistic rate written from its output `y = f(x)`:
 * `gain * y * (1 - y)`.
 * @param y A logistic rate, in [0, 1].
 * @param gain Slope factor, finite and > 0 (default 1).
 * @returns The slope at the net input that produced `y`.
 * @category Units
 * @example
 * ```ts
 * logisticSlopeFromOutput(0.5, 2); // 0.5
 * ```
 */
export function logisticSlopeFromOutput(y: number, gain = 1): number {
  return gain * y * (1 - y);
}
