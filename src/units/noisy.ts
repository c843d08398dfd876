/**
 * Noise-averaged rate: a unit's rate averaged over Gaussian noise on its net
 * input, tabulated once and read by cubic Hermite interpolation.
 * @module
 */
import { plainUnitFacts } from "./describe.js";
import { gaussianPair, quadratureLayout } from "./gaussian.js";
import { normaliseUnitSpec, type SpecOf, type UnitSpec } from "./spec.js";

/** Default half-margin of the table around the base's transition interval, in noise standard deviations. */
const RANGE_MARGIN_SIGMAS = 8;

/**
 * A tabulated noise-averaged rate, made by {@link tabulateNoisyRate} and read
 * by {@link noisyRate} and {@link noisyRateSlope}.
 * @category Units
 */
export interface NoisyRateTable {
  /** Normalised spec, including the `range` and `resolution` actually used. */
  readonly spec: SpecOf<"noisy">;
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
 * Tabulates the noise-averaged rate `F(x) = E[f(x + sigma Z)]` (Z standard
 * normal) of a base unit `f`.
 *
 * - Table: `resolution` points evenly spaced over `range`. Default range:
 *   the base's transition interval widened by `8 sigma` on both sides, where
 *   the transition interval is `offset ± 36/gain` (logistic), `±19.5` (tanh),
 *   `±36/gain` (softplus), `[threshold, threshold + 50/gain]` (saturating),
 *   `[0, 1]` (hard sigmoid) and `[0, 0]` (relu, linear). Default resolution 1024.
 * - Each point: `F` and `F' = E[f'(x + sigma Z)]` by composite Gauss–Legendre
 *   quadrature split at the base's kinks (near machine precision).
 * - Between points: cubic Hermite interpolation of values and slopes, so the
 *   interpolation error is O(step^4) for the rate and O(step^3) for the slope,
 *   and the reported slope is exactly the derivative of the reported rate.
 *   Slopes are limited where needed so that the interpolant is monotone
 *   (Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17:238); its evaluation
 *   in floating point may still step back by one ulp between adjacent inputs.
 * - Beyond the table: the base shifted to join continuously,
 *   `F(x) ≈ f(x) + (F(low) - f(low))` for `x < low` (likewise above `high`),
 *   clamped to the base's bounds (slope 0 where clamped). With the default
 *   range the error there is of the order of `P(|Z| > 8) ≈ 1e-15` (times
 *   `sigma` for the unbounded bases), except for the saturating base, whose
 *   slowly curving tail leaves up to about `sigma^2 gain^2 / 125000` (from
 *   `sigma^2 f''/2` at `gain z = 50`); pass a wider `range` to reduce it.
 * - Accuracy inside the table: about `step^4 max|F''''| / 384` for the rate
 *   (e.g. 6e-11 for the rectifier with `sigma = 1` and the defaults).
 * - A noisy base is merged into one: the noise variances add.
 * @param spec A noisy unit spec.
 * @returns The table.
 * @throws EbbflowError `invalid_parameter` for a bad `sigma`, `resolution`,
 *   `range` or base parameter (paths like `base.gain`).
 * @category Units
 * @example
 * ```ts
 * const t = tabulateNoisyRate({ kind: "noisy", base: { kind: "relu" }, sigma: 1 });
 * noisyRate(t, 0); // 0.39894228046 (exact: sigma / sqrt(2 pi) = 0.3989422804014327; table error ~6e-11)
 * ```
 */
export function tabulateNoisyRate(spec: SpecOf<"noisy">): NoisyRateTable {
  const normal = normaliseUnitSpec(spec) as SpecOf<"noisy">;
  let variance = normal.sigma * normal.sigma;
  let base: UnitSpec = normal.base;
  while (base.kind === "noisy") {
    variance += base.sigma * base.sigma;
    base = base.base;
  }
  const sigma = Math.sqrt(variance);
  const facts = plainUnitFacts(base);
  const range: readonly [number, number] = normal.range ?? [
    facts.transition[0] - RANGE_MARGIN_SIGMAS * sigma,
    facts.transition[1] + RANGE_MARGIN_SIGMAS * sigma,
  ];
  const n = normal.resolution ?? 1024;
  const [low, high] = range;
  const step = (high - low) / (n - 1);
  const values = new Float64Array(n);
  const slopes = new Float64Array(n);
  const layout = quadratureLayout(facts.features);
  const pair = new Float64Array(2);
  for (let k = 0; k < n; k++) {
    const x = k === n - 1 ? high : low + k * step;
    gaussianPair(facts.value, facts.slope, x, sigma, layout, pair);
    values[k] = pair[0] as number;
    slopes[k] = pair[1] as number;
  }
  // The average of a non-decreasing function within [lower, upper] is
  // non-decreasing and within [lower, upper]: remove quadrature rounding that
  // would contradict this.
  for (let k = 0; k < n; k++) {
    let v = values[k] as number;
    if (v < facts.lower) v = facts.lower;
    if (v > facts.upper) v = facts.upper;
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
  const frozenSpec: SpecOf<"noisy"> = Object.freeze({
    kind: "noisy",
    base: deepFreeze(normal.base),
    sigma: normal.sigma,
    resolution: n,
    range: Object.freeze([low, high] as [number, number]),
  });
  return Object.freeze({
    spec: frozenSpec,
    sigma,
    low,
    high,
    step,
    values,
    slopes,
    lower: facts.lower,
    upper: facts.upper,
    base: facts.value,
    baseSlope: facts.slope,
    shiftLow: (values[0] as number) - facts.value(low),
    shiftHigh: (values[n - 1] as number) - facts.value(high),
  });
}

function deepFreeze<T>(o: T): T {
  if (typeof o === "object" && o !== null && !Object.isFrozen(o)) {
    for (const v of Object.values(o)) deepFreeze(v);
    Object.freeze(o);
  }
  return o;
}

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
