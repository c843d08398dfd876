/**
 * Softplus rate function, its slope, and its unit kind (descriptor).
 * @module
 */
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import { fillLength } from "./lift.js";
import { defineUnit } from "./registry.js";
import { positiveField } from "../errors/fields.js";
import { EXP_TAIL } from "./logistic.js";
import type { UnitFunction, UnitSmoothing } from "./spec.js";

/** Scaled input beyond which softplus equals its argument in double precision. */
const SOFTPLUS_LINEAR_FROM = 36;

/**
 * Softplus rate: `f(x) = log(1 + exp(gain * x)) / gain`, a smooth rectifier,
 * evaluated as `log1p(exp(gain x)) / gain` up to `gain x = 36` and as `x`
 * beyond (where the two agree to double precision), so that it neither
 * overflows nor loses precision in either tail.
 *
 * Reference: Dugas, Bengio, Bélisle, Nadeau & Garcia 2001 (NIPS 13,
 * "Incorporating second-order functional knowledge for better option pricing").
 * @param x Net input, any number; NaN gives NaN.
 * @param gain Sharpness, finite and > 0 (default 1); large gains approach `max(0, x)`.
 * @returns The rate, in [0, Infinity).
 * @category Units
 * @example
 * ```ts
 * softplus(0); // 0.6931471805599453 (= ln 2)
 * ```
 */
export function softplus(x: number, gain = 1): number {
  const z = gain * x;
  // Beyond z = 36, log1p(exp(-z)) < 2.4e-16 z is below half an ulp of z: the
  // result is z itself. Below, exp cannot overflow and log1p keeps the relative
  // precision of the left tail. Each step is monotone, so the rounded result
  // never decreases as x grows.
  return (z > SOFTPLUS_LINEAR_FROM ? z : Math.log1p(Math.exp(z))) / gain;
}

/**
 * Slope of softplus: `f'(x) = 1 / (1 + exp(-gain x))` (a logistic of `gain x`).
 * @param x Net input, any number.
 * @param gain Sharpness, finite and > 0 (default 1).
 * @returns The slope, in [0, 1].
 * @category Units
 * @example
 * ```ts
 * softplusSlope(0); // 0.5
 * ```
 */
export function softplusSlope(x: number, gain = 1): number {
  return 1 / (1 + Math.exp(-gain * x));
}

/**
 * Slope of softplus written from its output `y = f(x)`:
 * `1 - exp(-gain y)` (since `exp(gain y) = 1 + exp(gain x)`).
 * @param y A softplus rate, >= 0.
 * @param gain Sharpness, finite and > 0 (default 1).
 * @returns The slope at the net input that produced `y`.
 * @category Units
 * @example
 * ```ts
 * softplusSlopeFromOutput(Math.LN2); // 0.5
 * ```
 */
export function softplusSlopeFromOutput(y: number, gain = 1): number {
  return -Math.expm1(-gain * y);
}

const softplusSchema = z.object({ kind: z.literal("softplus"), gain: positiveField().default(1) }).strict();

class SoftplusUnit implements UnitFunction<z.output<typeof softplusSchema>> {
  readonly lower = 0;
  readonly upper = Infinity;
  readonly smoothing: UnitSmoothing;
  private readonly gain: number;
  constructor(readonly spec: z.output<typeof softplusSchema>) {
    const g = spec.gain;
    this.gain = g;
    this.smoothing = { features: [{ at: 0, width: 1 / g }], transition: [-EXP_TAIL / g, EXP_TAIL / g] };
  }
  value(x: number): number {
    return softplus(x, this.gain);
  }
  slope(x: number): number {
    return softplusSlope(x, this.gain);
  }
  slopeFromOutput(y: number): number {
    return softplusSlopeFromOutput(y, this.gain);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    for (let i = 0; i < m; i++) out[i] = softplus(x[i] as number, g);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    for (let i = 0; i < m; i++) out[i] = softplusSlope(x[i] as number, g);
    return out;
  }
}

/** The `softplus` unit kind: {@link softplus} with `gain > 0` (default 1); no SIMD kernel (runs its own fill on every backend). @category Units */
export const softplusUnit = defineUnit({
  kind: "softplus",
  schema: softplusSchema,
  summary: "log(1 + exp(gain x)) / gain; gain > 0 (default 1)",
  create: (spec) => new SoftplusUnit(spec),
});
