/**
 * Hard sigmoid rate function (clip to [0, 1]), its slope, and its unit kind (descriptor).
 * @module
 */
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import { fillLength } from "./lift.js";
import { defineUnit } from "./registry.js";
import type { UnitFunction, UnitKernelCall, UnitSmoothing } from "./spec.js";

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

const hardSigmoidSchema = z.object({ kind: z.literal("hard-sigmoid") }).strict();
const hardSigmoidKernel: UnitKernelCall = Object.freeze<UnitKernelCall>({ kind: "hard-sigmoid", gain: 1, offset: 0 });
const hardSigmoidSmoothing: UnitSmoothing = Object.freeze<UnitSmoothing>({
  features: [
    { at: 0, width: 0, kink: true },
    { at: 1, width: 0, kink: true },
  ],
  transition: [0, 1],
});

class HardSigmoidUnit implements UnitFunction<z.output<typeof hardSigmoidSchema>> {
  readonly lower = 0;
  readonly upper = 1;
  readonly kernel = hardSigmoidKernel;
  readonly smoothing = hardSigmoidSmoothing;
  constructor(readonly spec: z.output<typeof hardSigmoidSchema>) {}
  value(x: number): number {
    return hardSigmoid(x);
  }
  slope(x: number): number {
    return hardSigmoidSlope(x);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = hardSigmoid(x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = hardSigmoidSlope(x[i] as number);
    return out;
  }
}

/** The `hard-sigmoid` unit kind: {@link hardSigmoid}; evaluated by the SIMD `hard-sigmoid` kernel on the WebAssembly backends. @category Units */
export const hardSigmoidUnit = defineUnit({
  kind: "hard-sigmoid",
  schema: hardSigmoidSchema,
  summary: "min(1, max(0, x)), slope 1 on the closed interval [0, 1]",
  kernel: "hard-sigmoid",
  create: (spec) => new HardSigmoidUnit(spec),
});
