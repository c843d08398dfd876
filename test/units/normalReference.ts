/**
 * Independent standard-normal reference for the unit tests (test-only code).
 *
 * - |x| <= 3: Phi(x) = 1/2 + phi(x) * sum_{n>=0} x^(2n+1) / (1*3*...*(2n+1))
 *   (Abramowitz & Stegun 1964, 26.2.11; from memory). All terms share the sign
 *   of x, so the sum has no cancellation.
 * - |x| > 3: upper tail Q(x) = phi(x) / (x + 1/(x + 2/(x + 3/(x + ...))))
 *   (Laplace's continued fraction, Abramowitz & Stegun 1964, 26.2.14; from
 *   memory), evaluated backwards from depth 300.
 * Both are checked against Python's math.erfc in normalReference.test.ts.
 */

/** Standard normal density phi(x). */
export function normalDensity(x: number): number {
  return Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI);
}

/** Upper tail Q(x) = 1 - Phi(x) for x > 0 by the continued fraction. */
export function upperTailContinuedFraction(x: number): number {
  let t = x;
  for (let k = 300; k >= 1; k--) t = x + k / t;
  return normalDensity(x) / t;
}

/** Phi(x) by the series (accurate in absolute terms for |x| up to about 6). */
export function normalCdfSeries(x: number): number {
  return 0.5 + normalDensity(x) * seriesSum(x);
}

function seriesSum(x: number): number {
  let term = x;
  let sum = x;
  for (let n = 1; n < 500; n++) {
    term *= (x * x) / (2 * n + 1);
    sum += term;
    if (Math.abs(term) < 1e-18 * Math.abs(sum)) break;
  }
  return sum;
}

/** Standard normal distribution function Phi(x). */
export function normalCdf(x: number): number {
  if (x > 3) return 1 - upperTailContinuedFraction(x);
  if (x < -3) return upperTailContinuedFraction(-x);
  return normalCdfSeries(x);
}

/** Gaussian-noise-averaged rectifier E[max(0, x + sigma Z)] = x Phi(x/sigma) + sigma phi(x/sigma) (common practice). */
export function noisyReluClosedForm(x: number, sigma: number): number {
  return x * normalCdf(x / sigma) + sigma * normalDensity(x / sigma);
}
