/**
 * Linear (identity) rate function, its slope, and its unit kind (descriptor).
 * @module
 */
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import { fillLength } from "./lift.js";
import { defineUnit } from "./registry.js";
import type { UnitFunction, UnitKernelCall, UnitSmoothing } from "./spec.js";

/**
 * Linear rate: `f(x) = x` (identity). Used for linear fixed-point checks and
 * linear output layers.
 * @param x Net input, any number.
 * @returns `x` unchanged.
 * @category Units
 * @example
 * ```ts
 * linear(-2.5); // -2.5
 * ```
 */
export function linear(x: number): number {
  return x;
}

/**
 * Slope of the linear rate: 1 everywhere (NaN for a NaN input, so that a
 * diverged state is not hidden).
 * @param x Net input, any number.
 * @returns 1, or NaN when `x` is NaN.
 * @category Units
 * @example
 * ```ts
 * linearSlope(7); // 1
 * ```
 */
export function linearSlope(x: number): number {
  return x === x ? 1 : Number.NaN;
}

const linearSchema = z.object({ kind: z.literal("linear") }).strict();
const linearKernel: UnitKernelCall = Object.freeze<UnitKernelCall>({ kind: "linear", gain: 1, offset: 0 });
const linearSmoothing: UnitSmoothing = Object.freeze<UnitSmoothing>({ features: [], transition: [0, 0] });

class LinearUnit implements UnitFunction<z.output<typeof linearSchema>> {
  readonly lower = -Infinity;
  readonly upper = Infinity;
  readonly kernel = linearKernel;
  readonly smoothing = linearSmoothing;
  constructor(readonly spec: z.output<typeof linearSchema>) {}
  value(x: number): number {
    return linear(x);
  }
  slope(x: number): number {
    return linearSlope(x);
  }
  slopeFromOutput(y: number): number {
    return linearSlope(y);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = linear(x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = linearSlope(x[i] as number);
    return out;
  }
}

/** The `linear` unit kind: the identity; evaluated by the SIMD `linear` kernel on the WebAssembly backends. @category Units */
export const linearUnit = defineUnit({
  kind: "linear",
  schema: linearSchema,
  summary: "x (identity)",
  kernel: "linear",
  create: (spec) => new LinearUnit(spec),
});
