/**
 * Statistics across seeds: mean, sample standard deviation and a confidence interval for the mean from
 * Student's t distribution with n - 1 degrees of freedom. The t quantile is computed exactly (to about
 * 1e-12) by inverting the distribution function, itself a regularised incomplete beta function.
 * @module
 */
import { EbbflowError, fail, issueText } from "../errors/index.js";

/** Lanczos coefficients for g = 7, n = 9 (Lanczos 1964, SIAM J. Numer. Anal. Ser. B 1:86; coefficients as tabulated by Godfrey 2001). */
const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
];

/** Natural logarithm of the gamma function for x > 0 (Lanczos 1964, SIAM J. Numer. Anal. Ser. B 1:86). */
function logGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - logGamma(1 - x); // reflection formula
  const z = x - 1;
  let a = LANCZOS[0] as number;
  const t = z + 7.5;
  for (let i = 1; i < 9; i++) a += (LANCZOS[i] as number) / (z + i);
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(a);
}

/** Continued fraction of the incomplete beta function, evaluated by the modified Lentz method (Abramowitz & Stegun 1964, eq. 26.5.8; Press et al. 2007, Numerical Recipes 3rd ed., sec. 6.4). */
function betaFraction(x: number, a: number, b: number): number {
  const tiny = 1e-300;
  let c = 1;
  let d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < tiny) d = tiny;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= 500; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  return h;
}

/**
 * Regularised incomplete beta function I_x(a, b), given x and y = 1 - x separately so that neither loses
 * precision when the other is tiny (Abramowitz & Stegun 1964, eq. 26.5.8 with the symmetry 26.5.2).
 */
function incompleteBeta(x: number, y: number, a: number, b: number): number {
  if (x <= 0) return 0;
  if (y <= 0) return 1;
  const front = Math.exp(logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log(y));
  return x < (a + 1) / (a + b + 2) ? (front * betaFraction(x, a, b)) / a : 1 - (front * betaFraction(y, b, a)) / b;
}

/**
 * Distribution function of Student's t with `df` degrees of freedom, P(T <= t)
 * (Abramowitz & Stegun 1964, eq. 26.7.1 via 26.5.27: P(T <= t) = 1 - I_{df/(df+t²)}(df/2, 1/2) / 2 for t >= 0).
 * @param t - The value (any number; ±Infinity give 1 and 0).
 * @param df - Degrees of freedom, a finite number > 0 (need not be an integer).
 * @returns The probability, in [0, 1].
 * @throws {@link EbbflowError} `invalid_parameter` (`t`, `df`) for NaN or a non-positive `df`.
 * @category Sweeps
 * @example
 * ```ts
 * studentTCdf(0, 5); // 0.5
 * ```
 */
export function studentTCdf(t: number, df: number): number {
  if (typeof t !== "number" || Number.isNaN(t)) fail("invalid_parameter", "t", "a number", t);
  requireDf(df);
  if (t === Infinity) return 1;
  if (t === -Infinity) return 0;
  const t2 = t * t;
  // P(|T| > |t|) = I_{df/(df+t²)}(df/2, 1/2); near t = 0 the complement I_{t²/(df+t²)}(1/2, df/2) keeps precision
  const x = df / (df + t2);
  const y = t2 / (df + t2);
  const centre = x < 0.5 ? 1 - incompleteBeta(x, y, df / 2, 0.5) : incompleteBeta(y, x, 0.5, df / 2);
  return t >= 0 ? 0.5 + 0.5 * centre : 0.5 - 0.5 * centre;
}

function requireDf(df: unknown): number {
  if (typeof df !== "number" || !Number.isFinite(df) || df <= 0) fail("invalid_parameter", "df", "a finite number of degrees of freedom > 0", df);
  return df;
}

/**
 * Quantile (inverse distribution function) of Student's t with `df` degrees of freedom: the t with
 * P(T <= t) = p. Found by bracketing and bisection on {@link studentTCdf} to full double precision, with
 * the closed forms for df = 1 (Cauchy: tan(π(p - ½))) and df = 2 ((2p - 1)/√(2p(1 - p))) used directly
 * (Shaw 2006, J. Comput. Finance 9(4):37, sec. 3).
 * @param p - Probability in the open interval (0, 1).
 * @param df - Degrees of freedom, a finite number > 0.
 * @returns The quantile.
 * @throws {@link EbbflowError} `invalid_parameter` (`p`, `df`).
 * @category Sweeps
 * @example
 * ```ts
 * studentTQuantile(0.975, 4); // 2.7764451051977987 (tables: 2.776)
 * ```
 */
export function studentTQuantile(p: number, df: number): number {
  if (typeof p !== "number" || !Number.isFinite(p) || p <= 0 || p >= 1) fail("invalid_parameter", "p", "a probability in the open interval (0, 1)", p);
  requireDf(df);
  if (p === 0.5) return 0;
  if (df === 1) return Math.tan(Math.PI * (p - 0.5));
  if (df === 2) return (2 * p - 1) / Math.sqrt(2 * p * (1 - p));
  if (p < 0.5) return -studentTQuantile(1 - p, df);
  // upper half: bracket [lo, hi] with cdf(lo) < p <= cdf(hi), then bisect until the interval stops shrinking
  let lo = 0;
  let hi = 1;
  while (studentTCdf(hi, df) < p) {
    lo = hi;
    hi *= 2;
    if (hi > 1e300) return hi;
  }
  for (let i = 0; i < 2000; i++) {
    const mid = 0.5 * (lo + hi);
    if (mid <= lo || mid >= hi) break;
    if (studentTCdf(mid, df) < p) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/** Summary of a sample of one metric across seeds. @category Sweeps */
export interface SampleSummary {
  /** Number of values. */
  readonly n: number;
  /** Arithmetic mean. */
  readonly mean: number;
  /** Sample standard deviation (divisor n - 1); 0 when n = 1. */
  readonly sd: number;
  /** Standard error of the mean, sd / √n. */
  readonly sem: number;
  /** Smallest value. */
  readonly min: number;
  /** Largest value. */
  readonly max: number;
  /** Confidence level of the interval, e.g. 0.95. */
  readonly level: number;
  /** Half-width of the interval, t((1 + level)/2, n - 1) · sem; null when n = 1 (no interval from one value). */
  readonly halfWidth: number | null;
  /** Lower end of the interval (mean - halfWidth), or null. */
  readonly low: number | null;
  /** Upper end of the interval (mean + halfWidth), or null. */
  readonly high: number | null;
}

/**
 * Mean, sample standard deviation and the Student-t confidence interval for the mean of a sample
 * (Student 1908, Biometrika 6:1): mean ± t((1 + level)/2, n - 1) · sd/√n. Two passes (mean, then squared
 * deviations), so that a large common offset does not cost precision.
 * @param values - The sample: at least one finite number.
 * @param level - Confidence level in (0, 1) (default 0.95).
 * @returns The summary; the interval is null for a single value.
 * @throws {@link EbbflowError} `invalid_parameter` (`values`, `values[i]`, `level`).
 * @category Sweeps
 * @example
 * ```ts
 * summarizeSample([1, 2, 3, 4, 5]); // mean 3, sd 1.5811, halfWidth 2.7764 · 1.5811/√5 = 1.9632
 * ```
 */
export function summarizeSample(values: readonly number[], level = 0.95): SampleSummary {
  if (!Array.isArray(values) || values.length === 0) fail("invalid_parameter", "values", "at least one value", values);
  if (typeof level !== "number" || !Number.isFinite(level) || level <= 0 || level >= 1) fail("invalid_parameter", "level", "a confidence level in the open interval (0, 1)", level);
  const problems = [];
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (typeof v !== "number" || !Number.isFinite(v)) problems.push(issueText("invalid_parameter", `values[${i}]`, "a finite number", String(v)));
  }
  if (problems.length > 0) throw new EbbflowError(problems);
  const n = values.length;
  let sum = 0;
  let min = Infinity;
  let max = -Infinity;
  for (const v of values) {
    sum += v;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  const mean = sum / n;
  let squares = 0;
  for (const v of values) squares += (v - mean) * (v - mean);
  const sd = n > 1 ? Math.sqrt(squares / (n - 1)) : 0;
  const sem = sd / Math.sqrt(n);
  const halfWidth = n > 1 ? studentTQuantile((1 + level) / 2, n - 1) * sem : null;
  return { n, mean, sd, sem, min, max, level, halfWidth, low: halfWidth === null ? null : mean - halfWidth, high: halfWidth === null ? null : mean + halfWidth };
}
