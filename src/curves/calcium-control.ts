/**
 * Calcium control of synaptic plasticity (Shouval, Bear & Cooper 2002): the
 * calcium-dependent target Ω(Ca) and learning rate η(Ca).
 * @module
 */
import { fail, requireFinite, requireNonNegative, requirePositive } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";

/**
 * Parameters of the calcium-control functions (Shouval, Bear & Cooper 2002,
 * PNAS 99(16):10831–10836, doi:10.1073/pnas.152343099). Every field is optional;
 * defaults are the 2002 set (methods item 8). Calcium is in µM relative to rest, time in s.
 * @category Curves
 */
export interface CalciumControlOptions {
  /** Midpoint of the depression sigmoid, µM; finite. Default 0.35. */
  readonly alpha1?: number | undefined;
  /** Midpoint of the potentiation sigmoid, µM; finite. Default 0.55. */
  readonly alpha2?: number | undefined;
  /** Steepness of the depression sigmoid, 1/µM; > 0. Default 80. */
  readonly beta1?: number | undefined;
  /** Steepness of the potentiation sigmoid, 1/µM; > 0. Default 80. */
  readonly beta2?: number | undefined;
  /** P1 of `τ(Ca) = P1 / (P2 + Ca^P3) + P4`, s; > 0. Default 0.1. */
  readonly p1?: number | undefined;
  /**
   * P2, > 0. Default `P1 * 1e-4` (= 1e-5), so that `τ(0) ≈ 1e4 s ≈ 2.8 h`.
   * Caution: two independent reimplementations report that the paper's supplement
   * prints `P1 / 10^-4` and call it a typo; both use `P1 * 10^-4` (methods item 8).
   */
  readonly p2?: number | undefined;
  /** Exponent P3; > 0. Default 3. */
  readonly p3?: number | undefined;
  /** P4, the shortest time constant, s; >= 0. Default 1. */
  readonly p4?: number | undefined;
  /** Weight decay factor λ of `dW/dt = η(Ca) (Ω(Ca) - λ W)`; >= 0. Default 1. */
  readonly lambda?: number | undefined;
}

/**
 * Resolved calcium-control parameters (every field present and validated).
 * @category Curves
 */
export type CalciumControlParameters = { readonly [K in keyof CalciumControlOptions]-?: number };

/**
 * Calcium-control functions bound to one validated parameter set.
 * @category Curves
 */
export interface CalciumControl {
  /** The resolved parameters. */
  readonly parameters: CalciumControlParameters;
  /**
   * `Ω(Ca) = 0.25 + sig(Ca - α2, β2) - 0.25 sig(Ca - α1, β1)`, `sig(x, β) = 1/(1 + exp(-β x))`:
   * 0.25 at rest, a depression trough near α1..α2, saturating at 1 for high calcium.
   */
  omega(ca: number): number;
  /** `τ(Ca) = P1 / (P2 + max(Ca, 0)^P3) + P4` (s). Calcium below rest counts as rest. */
  timeConstant(ca: number): number;
  /** Learning rate `η(Ca) = 1 / τ(Ca)` (1/s). */
  learningRate(ca: number): number;
  /** Weight change rate `dW/dt = η(Ca) (Ω(Ca) - λ W)`. */
  weightChange(ca: number, w: number): number;
  /**
   * Lifts {@link CalciumControl.weightChange}: `out[i] = dW/dt(ca[i], w[i])`. Allocates nothing;
   * `out` may alias `ca` or `w`.
   * @throws {@link EbbflowError} `shape_mismatch` (path `ca` or `w`) if a length differs from `out.length`.
   */
  applyWeightChange<T extends FloatArray>(out: T, ca: FloatArray, w: FloatArray): T;
}

/** Logistic `1 / (1 + exp(-z))`; exp overflow gives 0, never NaN. */
function logistic(z: number): number {
  return 1 / (1 + Math.exp(-z));
}

class BoundCalciumControl implements CalciumControl {
  readonly parameters: CalciumControlParameters;
  private readonly alpha1: number;
  private readonly alpha2: number;
  private readonly beta1: number;
  private readonly beta2: number;
  private readonly p1: number;
  private readonly p2: number;
  private readonly p3: number;
  private readonly p4: number;
  private readonly lambda: number;

  constructor(p: CalciumControlParameters) {
    this.parameters = p;
    this.alpha1 = p.alpha1;
    this.alpha2 = p.alpha2;
    this.beta1 = p.beta1;
    this.beta2 = p.beta2;
    this.p1 = p.p1;
    this.p2 = p.p2;
    this.p3 = p.p3;
    this.p4 = p.p4;
    this.lambda = p.lambda;
  }

  omega(ca: number): number {
    return 0.25 + logistic(this.beta2 * (ca - this.alpha2)) - 0.25 * logistic(this.beta1 * (ca - this.alpha1));
  }

  timeConstant(ca: number): number {
    const c = ca > 0 ? ca : ca === ca ? 0 : ca;
    return this.p1 / (this.p2 + Math.pow(c, this.p3)) + this.p4;
  }

  learningRate(ca: number): number {
    return 1 / this.timeConstant(ca);
  }

  weightChange(ca: number, w: number): number {
    return this.learningRate(ca) * (this.omega(ca) - this.lambda * w);
  }

  applyWeightChange<T extends FloatArray>(out: T, ca: FloatArray, w: FloatArray): T {
    const n = out.length;
    if (ca.length !== n) fail("shape_mismatch", "ca", `an array of length ${n} (out.length)`, ca);
    if (w.length !== n) fail("shape_mismatch", "w", `an array of length ${n} (out.length)`, w);
    for (let i = 0; i < n; i++) out[i] = this.weightChange(ca[i] as number, w[i] as number);
    return out;
  }
}

/**
 * Creates the calcium-control functions Ω(Ca), τ(Ca), η(Ca) = 1/τ(Ca) and the weight
 * change `dW/dt = η(Ca) (Ω(Ca) - λ W)` of Shouval, Bear & Cooper (2002), PNAS 99(16):10831–10836.
 * Validates the parameters once.
 *
 * @param options - parameter overrides; defaults are the 2002 set (α1 = 0.35, α2 = 0.55,
 *   β1 = β2 = 80, P1 = 0.1, P2 = P1·1e-4, P3 = 3, P4 = 1, λ = 1)
 * @returns the bound functions
 * @throws {@link EbbflowError} `invalid_parameter` naming the parameter (`alpha1`, `beta2`, `p2`, `lambda`, ...)
 * @category Curves
 * @example
 * ```ts
 * const cc = calciumControl();
 * cc.omega(0.35);       // 0.12500011253516208 (half-way down at α1)
 * cc.learningRate(1.0); // 0.9090917355296769
 * ```
 */
export function calciumControl(options: CalciumControlOptions = {}): CalciumControl {
  if (typeof options !== "object" || options === null) fail("invalid_parameter", "options", "an object", options);
  const alpha1 = options.alpha1 === undefined ? 0.35 : requireFinite("alpha1", options.alpha1);
  const alpha2 = options.alpha2 === undefined ? 0.55 : requireFinite("alpha2", options.alpha2);
  const beta1 = options.beta1 === undefined ? 80 : requirePositive("beta1", options.beta1);
  const beta2 = options.beta2 === undefined ? 80 : requirePositive("beta2", options.beta2);
  const p1 = options.p1 === undefined ? 0.1 : requirePositive("p1", options.p1);
  const p2 = options.p2 === undefined ? p1 * 1e-4 : requirePositive("p2", options.p2);
  const p3 = options.p3 === undefined ? 3 : requirePositive("p3", options.p3);
  const p4 = options.p4 === undefined ? 1 : requireNonNegative("p4", options.p4);
  const lambda = options.lambda === undefined ? 1 : requireNonNegative("lambda", options.lambda);
  if (!(p2 > 0) || !Number.isFinite(p1 / p2)) fail("invalid_parameter", "p2", "a value with P1/P2 finite", p2);
  return new BoundCalciumControl({ alpha1, alpha2, beta1, beta2, p1, p2, p3, p4, lambda });
}
