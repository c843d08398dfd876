/**
 * A piecewise-linear form of the calcium-control hypothesis: no change without
 * coactivity, depression for weak coactivity, potentiation above a threshold
 * (Lisman 1989; Artola, Bröcher & Singer 1990; Shouval, Bear & Cooper 2002),
 * with a threshold that may slide (Bienenstock, Cooper & Munro 1982).
 * @module
 */
import { fail, requireOpenInterval } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";

/**
 * Unchecked kernel of {@link calciumCurve}; `slope` is `(1 - trough) / trough`.
 * Comparisons are written so that a NaN `x` or `theta` yields NaN.
 */
function curveAt(x: number, theta: number, trough: number, slope: number): number {
  if (x <= 0) return 0;
  const th = theta <= 0 ? 0 : theta;
  return x <= trough * th ? -x * slope : x - th;
}

/**
 * A piecewise-linear form of the calcium-control curve, of a coactivity `x` against a threshold `theta`.
 *
 * ```
 * curve(x, θ) = 0                        for x <= 0
 *             = -x (1 - trough) / trough  for 0 < x <= trough·θ   (depression segment)
 *             = x - θ                     for x > trough·θ        (linear region)
 * ```
 * Continuous, zero at zero coactivity, deepest at `x = trough·θ` with value
 * `-(1 - trough) θ`, zero crossing at `θ`, slope 1 above `θ`. In the linear region
 * (`θ >= 0`, `x > trough·θ`) the result is exactly `x - θ`, so with `θ` a slower trace
 * of the same coactivity (led by the prediction, the free state) and `x` a faster one (led by
 * the target-driven, clamped state) it reads "clamped minus free".
 *
 * Sources of the shape (the straight segments, with slope 1 above the trough so that the linear
 * region is exactly `x - θ`, simplify it):
 * - calcium-control hypothesis: a modest rise of postsynaptic calcium depresses a synapse, a
 *   large rise potentiates it; Lisman 1989, "A mechanism for the Hebb and the anti-Hebb
 *   processes underlying learning and memory", PNAS 86(23):9574–9578 (from memory);
 * - two activity thresholds, depression above the lower and potentiation above the higher;
 *   Artola, Bröcher & Singer 1990, "Different voltage-dependent thresholds for inducing long-term
 *   depression and long-term potentiation in slices of rat visual cortex", Nature 347:69–72
 *   (from memory);
 * - the smooth curve Ω(Ca) of the same shape (no change at rest, a depression dip, potentiation
 *   above a crossover); Shouval, Bear & Cooper 2002, "A unified model of NMDA receptor-dependent
 *   bidirectional synaptic plasticity", PNAS 99(16):10831–10836, the Ω function (checked against
 *   two reimplementations, methods item 8; its equation number is not checked);
 * - a modification threshold that slides with the cell's long-term activity; Bienenstock,
 *   Cooper & Munro 1982, J. Neurosci. 2(1):32–48, the φ(y, θ_M) function (from memory).
 *
 * Edge cases (documented choices): coactivity is a product of non-negative rates, so
 * `x <= 0` means "no coactivity" and gives 0; a threshold `θ <= 0` means "no activity
 * expected", the depression segment has zero width and the curve is `max(x, 0)`
 * (the limit θ -> 0+). NaN in `x` or `θ` gives NaN; no other input does.
 *
 * @param x - coactivity (e.g. a fast trace of pre × post rates)
 * @param theta - threshold (zero crossing)
 * @param trough - relative position of the deepest depression, in (0, 1)
 * @returns the signed weight-change drive
 * @throws {@link EbbflowError} `invalid_parameter` (path `trough`) if `trough` is not in (0, 1)
 * @category Curves
 * @example
 * ```ts
 * calciumCurve(0.05, 0.5, 0.2); // -0.2  (depression segment: -0.05 * 0.8 / 0.2)
 * calciumCurve(0.1, 0.5, 0.2);  // -0.4  (trough: -(1 - 0.2) * 0.5)
 * calciumCurve(0.8, 0.5, 0.2);  // 0.30000000000000004 (= 0.8 - 0.5)
 * ```
 */
export function calciumCurve(x: number, theta: number, trough: number): number {
  requireOpenInterval("trough", trough, 0, 1);
  return curveAt(x, theta, trough, (1 - trough) / trough);
}

/**
 * Lifts {@link calciumCurve} over arrays: `out[i] = curve(coactivity[i], threshold[i])`.
 * Validates once, then loops without checks; allocates nothing. `out` may alias either input.
 *
 * @param out - output, length n
 * @param coactivity - coactivities, length n
 * @param threshold - thresholds, length n
 * @param trough - relative trough position, in (0, 1)
 * @returns `out`
 * @throws {@link EbbflowError} `invalid_parameter` (path `trough`), `shape_mismatch` (path `coactivity` or `threshold`)
 * @category Curves
 * @example
 * ```ts
 * const out = new Float64Array(2);
 * applyCalciumCurve(out, new Float64Array([0.8, 0.05]), new Float64Array([0.5, 0.5]), 0.2);
 * // Float64Array [0.30000000000000004, -0.2]: linear region (0.8 - 0.5), then depression segment
 * ```
 */
export function applyCalciumCurve<T extends FloatArray>(out: T, coactivity: FloatArray, threshold: FloatArray, trough: number): T {
  requireOpenInterval("trough", trough, 0, 1);
  const n = out.length;
  if (coactivity.length !== n) fail("shape_mismatch", "coactivity", `an array of length ${n} (out.length)`, coactivity);
  if (threshold.length !== n) fail("shape_mismatch", "threshold", `an array of length ${n} (out.length)`, threshold);
  const slope = (1 - trough) / trough;
  for (let i = 0; i < n; i++) out[i] = curveAt(coactivity[i] as number, threshold[i] as number, trough, slope);
  return out;
}
