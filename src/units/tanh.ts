/**
 * Hyperbolic tangent rate function and its slope.
 * @module
 */

/**
 * Hyperbolic tangent rate: `f(x) = tanh(x)`, an odd function with range (-1, 1).
 *
 * Reference: recommended as a symmetric alternative to the logistic unit by
 * LeCun, Bottou, Orr & Müller 1998 ("Efficient BackProp", Neural Networks:
 * Tricks of the Trade, Springer LNCS 1524).
 * @param x Net input, any number; NaN gives NaN.
 * @returns The rate, in [-1, 1].
 * @category Units
 * @example
 * ```ts
 * tanh(0); // 0
 * ```
 */
export function tanh(x: number): number {
  return Math.tanh(x);
}

/**
 * Slope of tanh: `1 - tanh(x)^2 = 4 e / (1 + e)^2` with `e = exp(-2|x|)`
 * (written so that the tails keep full relative precision).
 * @param x Net input, any number.
 * @returns The slope, in [0, 1].
 * @category Units
 * @example
 * ```ts
 * tanhSlope(0); // 1
 * ```
 */
export function tanhSlope(x: number): number {
  const e = Math.exp(-2 * Math.abs(x));
  const d = 1 + e;
  return (4 * e) / (d * d);
}

/**
 * Slope of tanh written from its output `y = tanh(x)`: `1 - y^2`.
 * @param y A rate in [-1, 1].
 * @returns The slope at the net input that produced `y`.
 * @category Units
 * @example
 * ```ts
 * tanhSlopeFromOutput(0.5); // 0.75
 * ```
 */
export function tanhSlopeFromOutput(y: number): number {
  return 1 - y * y;
}
