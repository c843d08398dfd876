/**
 * Rectified linear rate function, its slope, and its unit kind (descriptor).
 * @module
 */
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import { fillLength } from "./lift.js";
import { defineUnit } from "./registry.js";
import type { UnitFunction, UnitKernelCall, UnitSmoothing } from "./spec.js";

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

const reluSchema = z.object({ kind: z.literal("relu") }).strict();
const reluKernel: UnitKernelCall = Object.freeze<UnitKernelCall>({ kind: "relu", gain: 1, offset: 0 });
const reluSmoothing: UnitSmoothing = Object.freeze<UnitSmoothing>({ features: [{ at: 0, width: 0, kink: true }], transition: [0, 0] });

class ReluUnit implements UnitFunction<z.output<typeof reluSchema>> {
  readonly lower = 0;
  readonly upper = Infinity;
  readonly kernel = reluKernel;
  readonly smoothing = reluSmoothing;
  constructor(readonly spec: z.output<typeof reluSchema>) {}
  value(x: number): number {
    return relu(x);
  }
  slope(x: number): number {
    return reluSlope(x);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = relu(x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = reluSlope(x[i] as number);
    return out;
  }
}

/** The `relu` unit kind: {@link relu}; evaluated by the SIMD `relu` kernel on the WebAssembly backends. @category Units */
export const reluUnit = defineUnit({
  kind: "relu",
  schema: reluSchema,
  summary: "max(0, x), slope 1 at 0",
  kernel: "relu",
  create: (spec) => new ReluUnit(spec),
});
