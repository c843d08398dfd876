/**
 * Logistic rate function, its slope, and its unit kind (descriptor).
 * @module
 */
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import { fillLength } from "./lift.js";
import { defineUnit } from "./registry.js";
import { finiteField, positiveField } from "../errors/fields.js";
import type { UnitFunction, UnitKernelCall, UnitSmoothing } from "./spec.js";

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

/** The logistic's tails are below 2.4e-16 beyond 36 / gain (so are softplus's). @internal */
export const EXP_TAIL = 36;

const logisticSchema = z.object({ kind: z.literal("logistic"), gain: positiveField().default(1), offset: finiteField().default(0) }).strict();

// One class per kind: each fill loop calls one known scalar function, so the engine can inline
// it (a single generic loop over many functions cannot).
class LogisticUnit implements UnitFunction<z.output<typeof logisticSchema>> {
  readonly lower = 0;
  readonly upper = 1;
  readonly kernel: UnitKernelCall;
  readonly smoothing: UnitSmoothing;
  private readonly gain: number;
  private readonly offset: number;
  constructor(readonly spec: z.output<typeof logisticSchema>) {
    const g = spec.gain;
    const o = spec.offset;
    this.gain = g;
    this.offset = o;
    this.kernel = { kind: "logistic", gain: g, offset: o };
    this.smoothing = { features: [{ at: o, width: 1 / g }], transition: [o - EXP_TAIL / g, o + EXP_TAIL / g] };
  }
  value(x: number): number {
    return logistic(x, this.gain, this.offset);
  }
  slope(x: number): number {
    return logisticSlope(x, this.gain, this.offset);
  }
  slopeFromOutput(y: number): number {
    return logisticSlopeFromOutput(y, this.gain);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    const o = this.offset;
    for (let i = 0; i < m; i++) out[i] = logistic(x[i] as number, g, o);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    const o = this.offset;
    for (let i = 0; i < m; i++) out[i] = logisticSlope(x[i] as number, g, o);
    return out;
  }
}

/**
 * The `logistic` unit kind: {@link logistic} with `gain > 0` (default 1) and `offset` (default 0);
 * evaluated by the SIMD `logistic` kernel on the WebAssembly backends.
 * @category Units
 */
export const logisticUnit = defineUnit({
  kind: "logistic",
  schema: logisticSchema,
  summary: "1 / (1 + exp(-gain (x - offset))); gain > 0 (default 1), offset (default 0)",
  kernel: "logistic",
  create: (spec) => new LogisticUnit(spec),
});
