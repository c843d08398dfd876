/**
 * The BCM plasticity function and its objective.
 * @module
 */
import { fail, requirePositive } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";

/**
 * BCM plasticity function `φ(y, θ) = y (y - θ)`: depression for `0 < y < θ`,
 * potentiation for `y > θ`. The weight change is `η x φ(y, θ)`.
 * Bienenstock, Cooper & Munro (1982), J. Neurosci. 2(1):32–48 (quadratic form as in
 * Intrator & Cooper 1992, Neural Networks 5:3; methods item 7).
 *
 * @param y - postsynaptic activity
 * @param theta - modification threshold
 * @returns `y (y - theta)`
 * @category Curves
 * @example
 * ```ts
 * bcmPhi(1, 2); // -1
 * bcmPhi(3, 2); // 3
 * ```
 */
export function bcmPhi(y: number, theta: number): number {
  return y * (y - theta);
}

/**
 * BCM function divided by the threshold, `φ(y, θ) / θ = y (y - θ) / θ`: same fixed
 * points, faster changes at small θ. A variant used in some later papers (methods
 * item 7, from memory). To stay finite the division uses `max(θ, floor)`.
 *
 * @param y - postsynaptic activity
 * @param theta - modification threshold
 * @param floor - smallest divisor, finite and > 0 (default 1e-6)
 * @returns `y (y - theta) / max(theta, floor)`
 * @throws {@link EbbflowError} `invalid_parameter` (path `floor`)
 * @category Curves
 * @example
 * ```ts
 * bcmPhiScaled(3, 2); // 1.5
 * ```
 */
export function bcmPhiScaled(y: number, theta: number, floor = 1e-6): number {
  requirePositive("floor", floor);
  return (y * (y - theta)) / (theta > floor ? theta : floor);
}

function requireSameLength(n: number, path: string, a: FloatArray): void {
  if (a.length !== n) fail("shape_mismatch", path, `an array of length ${n} (out.length)`, a);
}

/**
 * Lifts {@link bcmPhi}: `out[i] = y[i] (y[i] - theta[i])`. Allocates nothing; `out` may alias an input.
 * @param out - output, length n
 * @param y - activities, length n
 * @param theta - thresholds, length n
 * @returns `out`
 * @throws {@link EbbflowError} `shape_mismatch` (path `y` or `theta`)
 * @category Curves
 */
export function applyBcmPhi<T extends FloatArray>(out: T, y: FloatArray, theta: FloatArray): T {
  const n = out.length;
  requireSameLength(n, "y", y);
  requireSameLength(n, "theta", theta);
  for (let i = 0; i < n; i++) {
    const yi = y[i] as number;
    out[i] = yi * (yi - (theta[i] as number));
  }
  return out;
}

/**
 * Lifts {@link bcmPhiScaled}: `out[i] = y[i] (y[i] - theta[i]) / max(theta[i], floor)`.
 * Allocates nothing; `out` may alias an input.
 * @param out - output, length n
 * @param y - activities, length n
 * @param theta - thresholds, length n
 * @param floor - smallest divisor, > 0 (default 1e-6)
 * @returns `out`
 * @throws {@link EbbflowError} `invalid_parameter` (path `floor`), `shape_mismatch` (path `y` or `theta`)
 * @category Curves
 */
export function applyBcmPhiScaled<T extends FloatArray>(out: T, y: FloatArray, theta: FloatArray, floor = 1e-6): T {
  requirePositive("floor", floor);
  const n = out.length;
  requireSameLength(n, "y", y);
  requireSameLength(n, "theta", theta);
  for (let i = 0; i < n; i++) {
    const yi = y[i] as number;
    const th = theta[i] as number;
    out[i] = (yi * (yi - th)) / (th > floor ? th : floor);
  }
  return out;
}

/**
 * BCM objective `R = E[y^3]/3 - (E[y^2])^2/4` over a set of patterns, whose gradient
 * with respect to the weights of a linear neuron is `E[φ(y, E[y^2]) x]`: the BCM rule
 * with threshold `θ = E[y^2]` is gradient ascent on R.
 * Intrator & Cooper (1992), Neural Networks 5(1):3–17 (methods item 7; citation from memory).
 *
 * @param responses - the responses `y_k` to each pattern
 * @param probabilities - pattern probabilities (non-negative, summing to 1); default equiprobable
 * @returns R
 * @throws {@link EbbflowError} `invalid_parameter` (path `responses` or `probabilities`) for an empty
 *   set, non-finite values, or probabilities that are negative or do not sum to 1 (within 1e-9);
 *   `shape_mismatch` if the lengths differ
 * @category Curves
 * @example
 * ```ts
 * bcmObjective([2, 0]); // 0.33333333333333326 (selective, K = 2: K^2/12)
 * bcmObjective([1, 1]); // 0.08333333333333331 (non-selective: 1/12)
 * ```
 */
export function bcmObjective(responses: ArrayLike<number>, probabilities?: ArrayLike<number>): number {
  const k = responses.length;
  if (!(k > 0)) fail("invalid_parameter", "responses", "a non-empty array of finite numbers", responses);
  if (probabilities !== undefined && probabilities.length !== k) fail("shape_mismatch", "probabilities", `an array of length ${k}`, probabilities);
  let total = 0;
  if (probabilities !== undefined) {
    for (let i = 0; i < k; i++) {
      const p = probabilities[i];
      if (typeof p !== "number" || !Number.isFinite(p) || p < 0) fail("invalid_parameter", `probabilities[${i}]`, "a finite number >= 0", p);
      total += p;
    }
    if (Math.abs(total - 1) > 1e-9) fail("invalid_parameter", "probabilities", "probabilities summing to 1 (received: their sum)", total);
  }
  let m2 = 0;
  let m3 = 0;
  for (let i = 0; i < k; i++) {
    const y = responses[i];
    if (typeof y !== "number" || !Number.isFinite(y)) fail("invalid_parameter", `responses[${i}]`, "a finite number", y);
    const p = probabilities === undefined ? 1 / k : (probabilities[i] as number);
    m2 += p * y * y;
    m3 += p * y * y * y;
  }
  return m3 / 3 - (m2 * m2) / 4;
}
