/**
 * Noise-averaged rate: a unit's rate averaged over Gaussian noise on its net
 * input, tabulated once and read by cubic Hermite interpolation; and the
 * `noisy` unit kind, whose base is a unit of any registered kind.
 * @module
 */
import { z } from "zod";
import { fail } from "../errors/index.js";
import { finiteField, integerField, positiveField } from "../errors/fields.js";
import type { FloatArray } from "../types/index.js";
import { gaussianPair, quadratureLayout } from "./gaussian.js";
import { fillLength } from "./lift.js";
import { deepFreeze, defineUnit, unitSpecField, type AnyUnitSpec, type UnitRegistry } from "./registry.js";
import type { UnitFunction } from "./spec.js";

/** Default number of table points of a noisy unit. @category Units */
export const DEFAULT_NOISY_RESOLUTION = 1024;

/** Default half-margin of the table around the base's transition interval, in noise standard deviations. */
const RANGE_MARGIN_SIGMAS = 8;

/** Schema of a noisy unit spec (a base kind convolved with Gaussian noise). @category Units */
export const noisySchema = z
  .object({
    kind: z.literal("noisy"),
    base: unitSpecField,
    sigma: positiveField(),
    resolution: integerField("an integer >= 2", 2).default(DEFAULT_NOISY_RESOLUTION),
    range: z
      .tuple([finiteField(), finiteField()], { error: "a pair [low, high] of finite numbers with low < high" })
      .refine(([low, high]) => low < high, { error: "a pair [low, high] with low < high" })
      .optional(),
  })
  .strict();

/** A normalised noisy spec (its `base` normalised too; `range` filled in by the table). @category Units */
export type NoisySpec = z.output<typeof noisySchema>;

/**
 * A tabulated noise-averaged rate, made by `tabulateNoisyRate` and read
 * by {@link noisyRate} and {@link noisyRateSlope}.
 * @category Units
 */
export interface NoisyRateTable {
  /** Normalised spec, including the `range` and `resolution` actually used. */
  readonly spec: NoisySpec;
  /** Noise standard deviation actually applied (nested noisy bases merged: variances add). */
  readonly sigma: number;
  /** First table point (`range[0]`). */
  readonly low: number;
  /** Last table point (`range[1]`). */
  readonly high: number;
  /** Spacing of the table points. */
  readonly step: number;
  /** Tabulated rates `E[f(x_k + sigma Z)]` at `x_k = low + k step`. */
  readonly values: Float64Array;
  /** Tabulated slopes `E[f'(x_k + sigma Z)]` (limited where needed to keep the interpolant monotone). */
  readonly slopes: Float64Array;
  /** Infimum of the rate (the base's). */
  readonly lower: number;
  /** Supremum of the rate (the base's). */
  readonly upper: number;
  /** The base's rate, used beyond the table. */
  readonly base: (x: number) => number;
  /** The base's slope, used beyond the table. */
  readonly baseSlope: (x: number) => number;
  /** `values[0] - base(low)`: shift that makes the left extrapolation continuous. */
  readonly shiftLow: number;
  /** `values[last] - base(high)`: shift that makes the right extrapolation continuous. */
  readonly shiftHigh: number;
}

/**
 * Tabulates the noise-averaged rate of a normalised noisy spec whose base `units` makes (see
 * `tabulateNoisyRate` for the table, its default range, the interpolation and the
 * extrapolation beyond it).
 * @param normal A normalised noisy spec (validated by `units`).
 * @param units The registry that makes the base unit.
 * @returns The table.
 * @throws EbbflowError `invalid_parameter` at `range` for a base without smoothing facts and no range.
 * @internal
 */
export function tabulateNoisy(normal: NoisySpec, units: UnitRegistry): NoisyRateTable {
  let variance = normal.sigma * normal.sigma;
  let base: AnyUnitSpec = normal.base;
  let path = "base";
  // a noisy base is merged into one table: the noise variances add
  while (base.kind === noisyUnit.kind && units.get(base.kind) === noisyUnit) {
    const inner = base as NoisySpec;
    variance += inner.sigma * inner.sigma;
    base = inner.base;
    path += ".base";
  }
  const sigma = Math.sqrt(variance);
  const plain = units.create(base, path);
  const value = (x: number): number => plain.value(x);
  const slope = (x: number): number => plain.slope(x);
  const smoothing = plain.smoothing;
  let range = normal.range;
  if (range === undefined) {
    if (smoothing === undefined) {
      fail("invalid_parameter", "range", `a pair [low, high] for the table (the base kind ${JSON.stringify(base.kind)} declares no smoothing facts to choose one)`, undefined);
    }
    range = [smoothing.transition[0] - RANGE_MARGIN_SIGMAS * sigma, smoothing.transition[1] + RANGE_MARGIN_SIGMAS * sigma];
  }
  const n = normal.resolution;
  const [low, high] = range;
  const step = (high - low) / (n - 1);
  const values = new Float64Array(n);
  const slopes = new Float64Array(n);
  const layout = quadratureLayout(smoothing?.features ?? []);
  const pair = new Float64Array(2);
  for (let k = 0; k < n; k++) {
    const x = k === n - 1 ? high : low + k * step;
    gaussianPair(value, slope, x, sigma, layout, pair);
    values[k] = pair[0] as number;
    slopes[k] = pair[1] as number;
  }
  // The average of a non-decreasing function within [lower, upper] is
  // non-decreasing and within [lower, upper]: remove quadrature rounding that
  // would contradict this.
  for (let k = 0; k < n; k++) {
    let v = values[k] as number;
    if (v < plain.lower) v = plain.lower;
    if (v > plain.upper) v = plain.upper;
    if (k > 0 && v < (values[k - 1] as number)) v = values[k - 1] as number;
    values[k] = v;
    if (!((slopes[k] as number) > 0)) slopes[k] = 0;
  }
  // Fritsch–Carlson limiter (Fritsch & Carlson 1980): monotone interpolant.
  for (let k = 0; k < n - 1; k++) {
    const secant = ((values[k + 1] as number) - (values[k] as number)) / step;
    if (secant === 0) {
      slopes[k] = 0;
      slopes[k + 1] = 0;
      continue;
    }
    const a = (slopes[k] as number) / secant;
    const b = (slopes[k + 1] as number) / secant;
    const r2 = a * a + b * b;
    if (r2 > 9) {
      const tau = 3 / Math.sqrt(r2);
      slopes[k] = tau * a * secant;
      slopes[k + 1] = tau * b * secant;
    }
  }
  const frozenSpec: NoisySpec = Object.freeze({
    kind: "noisy" as const,
    base: deepFreeze(normal.base),
    sigma: normal.sigma,
    resolution: n,
    range: Object.freeze([low, high]) as [number, number],
  });
  return Object.freeze({
    spec: frozenSpec,
    sigma,
    low,
    high,
    step,
    values,
    slopes,
    lower: plain.lower,
    upper: plain.upper,
    base: value,
    baseSlope: slope,
    shiftLow: (values[0] as number) - value(low),
    shiftHigh: (values[n - 1] as number) - value(high),
  });
}

class NoisyUnit implements UnitFunction<NoisySpec> {
  readonly spec: NoisySpec;
  readonly lower: number;
  readonly upper: number;
  private readonly table: NoisyRateTable;
  constructor(table: NoisyRateTable) {
    this.table = table;
    this.spec = table.spec;
    this.lower = table.lower;
    this.upper = table.upper;
  }
  value(x: number): number {
    return noisyRate(this.table, x);
  }
  slope(x: number): number {
    return noisyRateSlope(this.table, x);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const t = this.table;
    for (let i = 0; i < m; i++) out[i] = noisyRate(t, x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const t = this.table;
    for (let i = 0; i < m; i++) out[i] = noisyRateSlope(t, x[i] as number);
    return out;
  }
}

/**
 * The `noisy` unit kind: the rate of a `base` unit (of any registered kind) averaged over
 * Gaussian noise of standard deviation `sigma` on its net input, tabulated once (see
 * `tabulateNoisyRate`); no SIMD kernel. Tabulation with the default resolution takes some tens
 * of milliseconds, once per unit.
 * @category Units
 */
export const noisyUnit = defineUnit({
  kind: "noisy",
  schema: noisySchema,
  summary: "E[base(x + sigma Z)], Z standard normal; sigma > 0, resolution >= 2 table points (default 1024) over range (default: the base's transition interval ± 8 sigma)",
  create: (spec, units) => new NoisyUnit(tabulateNoisy(spec, units)),
});

/**
 * Noise-averaged rate read from a table (see {@link tabulateNoisyRate} for
 * the interpolation and the extrapolation beyond the table).
 * @param table A table from {@link tabulateNoisyRate}.
 * @param x Net input; NaN gives NaN.
 * @returns The rate, within the base's bounds.
 * @category Units
 * @example
 * ```ts
 * noisyRate(tabulateNoisyRate({ kind: "noisy", base: { kind: "linear" }, sigma: 2 }), 3); // 3, to ~1e-15
 * ```
 */
export function noisyRate(table: NoisyRateTable, x: number): number {
  const lo = table.low;
  const hi = table.high;
  let v: number;
  if (x >= lo && x <= hi) {
    const values = table.values;
    const slopes = table.slopes;
    const h = table.step;
    const u = (x - lo) / h;
    let i = Math.floor(u);
    if (i > values.length - 2) i = values.length - 2;
    const s = u - i;
    const s2 = s * s;
    const s3 = s2 * s;
    const y0 = values[i] as number;
    v =
      y0 +
      ((values[i + 1] as number) - y0) * (3 * s2 - 2 * s3) +
      h * ((slopes[i] as number) * (s3 - 2 * s2 + s) + (slopes[i + 1] as number) * (s3 - s2));
  } else if (x < lo) {
    v = table.base(x) + table.shiftLow;
  } else if (x > hi) {
    v = table.base(x) + table.shiftHigh;
  } else return Number.NaN;
  return v < table.lower ? table.lower : v > table.upper ? table.upper : v;
}

/**
 * Slope of the noise-averaged rate: the exact derivative of
 * {@link noisyRate} (of the Hermite interpolant inside the table, of the
 * shifted base beyond it, and 0 where clamped to a bound).
 * @param table A table from {@link tabulateNoisyRate}.
 * @param x Net input; NaN gives NaN.
 * @returns The slope, >= 0.
 * @category Units
 * @example
 * ```ts
 * noisyRateSlope(tabulateNoisyRate({ kind: "noisy", base: { kind: "relu" }, sigma: 1 }), 0); // 0.5 (= Φ(0)), to ~1e-12
 * ```
 */
export function noisyRateSlope(table: NoisyRateTable, x: number): number {
  const lo = table.low;
  const hi = table.high;
  if (x >= lo && x <= hi) {
    const values = table.values;
    const slopes = table.slopes;
    const h = table.step;
    const u = (x - lo) / h;
    let i = Math.floor(u);
    if (i > values.length - 2) i = values.length - 2;
    const s = u - i;
    const s2 = s * s;
    return (
      (((values[i + 1] as number) - (values[i] as number)) / h) * (6 * s - 6 * s2) +
      (slopes[i] as number) * (3 * s2 - 4 * s + 1) +
      (slopes[i + 1] as number) * (3 * s2 - 2 * s)
    );
  }
  let v: number;
  if (x < lo) v = table.base(x) + table.shiftLow;
  else if (x > hi) v = table.base(x) + table.shiftHigh;
  else return Number.NaN;
  return v < table.lower || v > table.upper ? 0 : table.baseSlope(x);
}
