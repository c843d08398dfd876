/**
 * Saturating rational rate function, its slope, and its unit kind (descriptor).
 * @module
 */
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import { fillLength } from "./lift.js";
import { defineUnit } from "./registry.js";
import { finiteField, positiveField } from "../errors/fields.js";
import type { UnitFunction, UnitSmoothing } from "./spec.js";

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

/** The saturating rate keeps curving as 2 gain^2 / (gain z)^3; a noisy table covers gain z <= 50. */
const SATURATING_TAIL = 50;

const saturatingSchema = z.object({ kind: z.literal("saturating"), gain: positiveField().default(1), threshold: finiteField().default(0) }).strict();

class SaturatingUnit implements UnitFunction<z.output<typeof saturatingSchema>> {
  readonly lower = 0;
  readonly upper = 1;
  readonly smoothing: UnitSmoothing;
  private readonly gain: number;
  private readonly threshold: number;
  constructor(readonly spec: z.output<typeof saturatingSchema>) {
    const g = spec.gain;
    const th = spec.threshold;
    this.gain = g;
    this.threshold = th;
    this.smoothing = { features: [{ at: th, width: 1 / g, kink: true }], transition: [th, th + SATURATING_TAIL / g] };
  }
  value(x: number): number {
    return saturating(x, this.gain, this.threshold);
  }
  slope(x: number): number {
    return saturatingSlope(x, this.gain, this.threshold);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    const th = this.threshold;
    for (let i = 0; i < m; i++) out[i] = saturating(x[i] as number, g, th);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    const th = this.threshold;
    for (let i = 0; i < m; i++) out[i] = saturatingSlope(x[i] as number, g, th);
    return out;
  }
}

/** The `saturating` unit kind: {@link saturating} with `gain > 0` (default 1) and `threshold` (default 0); no SIMD kernel. @category Units */
export const saturatingUnit = defineUnit({
  kind: "saturating",
  schema: saturatingSchema,
  summary: "u / (u + 1) with u = gain max(0, x - threshold); gain > 0 (default 1), threshold (default 0)",
  create: (spec) => new SaturatingUnit(spec),
});
