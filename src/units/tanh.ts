/**
 * Hyperbolic tangent rate function, its slope, and its unit kind (descriptor).
 * @module
 */
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import { fillLength } from "./lift.js";
import { defineUnit } from "./registry.js";
import type { UnitFunction, UnitKernelCall, UnitSmoothing } from "./spec.js";

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

/** tanh is within 6e-17 of ±1 beyond 19.5. */
const TANH_TAIL = 19.5;

const tanhSchema = z.object({ kind: z.literal("tanh") }).strict();
const tanhKernel: UnitKernelCall = Object.freeze<UnitKernelCall>({ kind: "tanh", gain: 1, offset: 0 });
const tanhSmoothing: UnitSmoothing = Object.freeze<UnitSmoothing>({ features: [{ at: 0, width: 1 }], transition: [-TANH_TAIL, TANH_TAIL] });

class TanhUnit implements UnitFunction<z.output<typeof tanhSchema>> {
  readonly lower = -1;
  readonly upper = 1;
  readonly kernel = tanhKernel;
  readonly smoothing = tanhSmoothing;
  constructor(readonly spec: z.output<typeof tanhSchema>) {}
  value(x: number): number {
    return tanh(x);
  }
  slope(x: number): number {
    return tanhSlope(x);
  }
  slopeFromOutput(y: number): number {
    return tanhSlopeFromOutput(y);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = tanh(x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = tanhSlope(x[i] as number);
    return out;
  }
}

/** The `tanh` unit kind: {@link tanh}; evaluated by the SIMD `tanh` kernel on the WebAssembly backends. @category Units */
export const tanhUnit = defineUnit({
  kind: "tanh",
  schema: tanhSchema,
  summary: "tanh(x)",
  kernel: "tanh",
  create: (spec) => new TanhUnit(spec),
});
