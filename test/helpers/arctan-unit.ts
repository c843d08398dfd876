/**
 * A unit kind of our own, defined outside the library the way a user would: the scaled
 * arctangent rate f(x) = 1/2 + atan(gain x) / pi, the distribution function of a Cauchy
 * distribution of scale 1/gain (Johnson, Kotz & Balakrishnan 1994, Continuous Univariate
 * Distributions, vol. 1, ch. 16, from memory), with slope gain / (pi (1 + (gain x)^2)).
 * It has no WebAssembly kernel, and its heavy tails give it no interval outside which it is
 * linear (so a noisy unit over it needs an explicit range).
 *
 * Two descriptors of the same math: `arctanUnit` lifted from the scalar functions (what a user
 * writes), `arctanClassUnit` with hand-written fill loops (what a built-in kind does).
 */
import { z } from "zod";
import type { FloatArray } from "../../src/types/index.js";
import { defineUnit, fillLength, positiveField, unitFromScalars, type UnitFunction } from "../../src/units/index.js";

/** The rate 1/2 + atan(gain x) / pi. */
export function arctanRate(x: number, gain: number): number {
  return 0.5 + Math.atan(gain * x) / Math.PI;
}

/** Its slope gain / (pi (1 + (gain x)^2)). */
export function arctanSlope(x: number, gain: number): number {
  const u = gain * x;
  return gain / (Math.PI * (1 + u * u));
}

const schema = z.object({ kind: z.literal("arctan"), gain: positiveField().default(1) }).strict();

/** The arctangent kind, its fills lifted from the scalar functions. */
export const arctanUnit = defineUnit({
  kind: "arctan",
  schema,
  summary: "1/2 + atan(gain x) / pi; gain > 0 (default 1)",
  create: (spec) =>
    unitFromScalars(spec, {
      lower: 0,
      upper: 1,
      value: (x) => arctanRate(x, spec.gain),
      slope: (x) => arctanSlope(x, spec.gain),
    }),
});

type ClassSpec = { readonly kind: "arctan-class"; readonly gain: number };

class ArctanClassUnit implements UnitFunction<ClassSpec> {
  readonly lower = 0;
  readonly upper = 1;
  constructor(readonly spec: ClassSpec) {}
  value(x: number): number {
    return arctanRate(x, this.spec.gain);
  }
  slope(x: number): number {
    return arctanSlope(x, this.spec.gain);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.spec.gain;
    for (let i = 0; i < m; i++) out[i] = arctanRate(x[i] as number, g);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.spec.gain;
    for (let i = 0; i < m; i++) out[i] = arctanSlope(x[i] as number, g);
    return out;
  }
}

/** The same math with its own fill loops, as a built-in kind is written. */
export const arctanClassUnit = defineUnit({
  kind: "arctan-class",
  schema: z.object({ kind: z.literal("arctan-class"), gain: positiveField().default(1) }).strict(),
  summary: "1/2 + atan(gain x) / pi, hand-written fills",
  create: (spec) => new ArctanClassUnit(spec),
});
