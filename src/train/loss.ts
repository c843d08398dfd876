/**
 * Losses of the output layers against targets: squared error, binary cross-entropy on logistic outputs,
 * and softmax with categorical cross-entropy. One definition serves training metrics, the exact
 * gradients (`recurrentGradient`, `finiteDifferenceGradient`, `feedforwardGradient`), `gradientAgreement`
 * and Equilibrium Propagation's nudging, so that they all measure and follow the same quantity.
 * @module
 */
import { z } from "zod";
import { fail } from "../errors/index.js";

/**
 * The losses, per pattern, of an output layer's values v against targets t:
 * - `"squared-error"`: `½‖v − t‖²`;
 * - `"binary-cross-entropy"`: `−Σ [t ln v + (1 − t) ln(1 − v)]`, v read as probabilities (logistic
 *   outputs), clipped to `[1e-12, 1 − 1e-12]`;
 * - `"softmax-cross-entropy"`: `−Σ t ln p` with `p = softmax(v)`: the layer's values are the logits and
 *   its prediction is their softmax (Bridle 1990, in Neurocomputing, NATO ASI F68:227).
 * @category Training
 */
export type LossName = "squared-error" | "binary-cross-entropy" | "softmax-cross-entropy";

/** The loss names, in documentation order. @category Training */
export const LOSS_NAMES: readonly LossName[] = Object.freeze(["squared-error", "binary-cross-entropy", "softmax-cross-entropy"]);

/** Schema of a loss name. @category Training */
export const lossNameSchema = z.enum(["squared-error", "binary-cross-entropy", "softmax-cross-entropy"], { error: "one of squared-error, binary-cross-entropy, softmax-cross-entropy" });

/**
 * What a loss is measured on and how it is weighted: the loss, the output quantity it acts on, and a
 * constant factor. Under energy dynamics `on: "state"` takes the output state u and `on: "rate"` the
 * rate ρ(u); under rate dynamics both are the output activity.
 * @category Training
 */
export interface Objective {
  readonly loss: LossName;
  readonly on: "state" | "rate";
  /** Constant factor on the loss (2 for the squared error without its ½). */
  readonly factor: number;
}

/** The objective of the squared error on the output state: what ebbflow verified before losses were a choice. @category Training */
export const DEFAULT_OBJECTIVE: Objective = Object.freeze({ loss: "squared-error", on: "state", factor: 1 });

/** Checks a loss name; `path` names it in the error. @throws {@link EbbflowError} `invalid_parameter`. @category Training */
export function requireLoss(path: string, value: unknown): LossName {
  if (!(LOSS_NAMES as readonly unknown[]).includes(value)) fail("invalid_parameter", path, `a loss: ${LOSS_NAMES.join(", ")}`, value);
  return value as LossName;
}

/** Checks an objective (all fields, no others); `path` names it in errors. @category Training */
export function requireObjective(path: string, value: unknown): Objective {
  if (typeof value === "string") return { loss: requireLoss(path, value), on: "state", factor: 1 };
  if (value === null || typeof value !== "object" || Array.isArray(value)) fail("invalid_parameter", path, "a loss name or { loss, on, factor }", value);
  const v = value as Record<string, unknown>;
  for (const key of Object.keys(v)) if (!["loss", "on", "factor"].includes(key)) fail("invalid_parameter", `${path}.${key}`, "one of the fields loss, on, factor", key);
  const on = v.on ?? "state";
  if (on !== "state" && on !== "rate") fail("invalid_parameter", `${path}.on`, "state or rate", on);
  const factor = v.factor ?? 1;
  if (typeof factor !== "number" || !Number.isFinite(factor) || factor <= 0) fail("invalid_parameter", `${path}.factor`, "a finite number > 0", factor);
  return { loss: requireLoss(`${path}.loss`, v.loss), on, factor };
}

const EPS = 1e-12;

/**
 * Whether the target row `t[off .. off+n)` of one pattern is observed: true when it holds no NaN, false
 * when every value is NaN (the pattern's targets of that layer are not observed: it takes no loss and no
 * gradient). Rows are all-or-nothing: a row mixing NaN with numbers is refused.
 * @throws {@link EbbflowError} `shape_mismatch` naming `path` (and the pattern) for a partly-NaN row.
 * @category Training
 */
export function targetRowObserved(t: ArrayLike<number>, off: number, n: number, path = "targets"): boolean {
  const first = Number.isNaN(t[off] as number);
  for (let k = 1; k < n; k++) {
    if (Number.isNaN(t[off + k] as number) !== first) {
      fail("shape_mismatch", `${path}[${off + k}]`, "a target row that is all numbers (observed) or all NaN (not observed)", `a row mixing NaN and numbers`, `values ${off} to ${off + n - 1}`);
    }
  }
  return !first;
}

/** softmax of `v[off .. off+n)` into `out[off ..)`, shifted by the maximum for stability; returns ln Σ exp(v − max) + max. */
export function softmaxInto(v: ArrayLike<number>, off: number, n: number, out: { [k: number]: number }): number {
  let m = Number.NEGATIVE_INFINITY;
  for (let j = 0; j < n; j++) m = Math.max(m, v[off + j] as number);
  let s = 0;
  for (let j = 0; j < n; j++) {
    const e = Math.exp((v[off + j] as number) - m);
    out[off + j] = e;
    s += e;
  }
  for (let j = 0; j < n; j++) out[off + j] = (out[off + j] as number) / s;
  return m + Math.log(s);
}

/**
 * The loss of one pattern, the values `v[off .. off+n)` against `t[off ..)` (without any factor); 0 for a
 * target row of NaN (not observed, see {@link targetRowObserved}).
 * @category Training
 */
export function patternLoss(loss: LossName, v: ArrayLike<number>, t: ArrayLike<number>, off: number, n: number): number {
  let j = 0;
  if (!targetRowObserved(t, off, n)) return 0;
  if (loss === "squared-error") {
    for (let k = 0; k < n; k++) j += 0.5 * ((v[off + k] as number) - (t[off + k] as number)) ** 2;
  } else if (loss === "binary-cross-entropy") {
    for (let k = 0; k < n; k++) {
      const c = Math.min(1 - EPS, Math.max(EPS, v[off + k] as number));
      const y = t[off + k] as number;
      j -= y * Math.log(c) + (1 - y) * Math.log(1 - c);
    }
  } else {
    // −Σ t_k ln p_k with ln p_k = v_k − logsumexp(v)
    let m = Number.NEGATIVE_INFINITY;
    for (let k = 0; k < n; k++) m = Math.max(m, v[off + k] as number);
    let s = 0;
    for (let k = 0; k < n; k++) s += Math.exp((v[off + k] as number) - m);
    const lse = m + Math.log(s);
    for (let k = 0; k < n; k++) j -= (t[off + k] as number) * ((v[off + k] as number) - lse);
  }
  return j;
}

/**
 * The derivative of {@link patternLoss} with respect to the values, written to `out[off .. off+n)`:
 * `v − t` (squared error); `(v − t) / (v (1 − v))` with v clipped as in the loss (binary cross-entropy);
 * `p Σt − t`, the softmax's exact Jacobian `diag(p) − p pᵀ` applied to `−t/p` (softmax cross-entropy);
 * zeros for a target row of NaN (not observed).
 * @category Training
 */
export function patternLossGradient(loss: LossName, v: ArrayLike<number>, t: ArrayLike<number>, off: number, n: number, out: { [k: number]: number }): void {
  if (!targetRowObserved(t, off, n)) {
    for (let k = 0; k < n; k++) out[off + k] = 0;
    return;
  }
  if (loss === "squared-error") {
    for (let k = 0; k < n; k++) out[off + k] = (v[off + k] as number) - (t[off + k] as number);
  } else if (loss === "binary-cross-entropy") {
    for (let k = 0; k < n; k++) {
      const c = Math.min(1 - EPS, Math.max(EPS, v[off + k] as number));
      out[off + k] = (c - (t[off + k] as number)) / (c * (1 - c));
    }
  } else {
    let st = 0;
    for (let k = 0; k < n; k++) st += t[off + k] as number;
    softmaxInto(v, off, n, out);
    for (let k = 0; k < n; k++) out[off + k] = (out[off + k] as number) * st - (t[off + k] as number);
  }
}

/** The loss summed over a batch of B patterns of n values each (without any factor). @category Training */
export function batchLoss(loss: LossName, v: ArrayLike<number>, t: ArrayLike<number>, B: number, n: number): number {
  let j = 0;
  for (let p = 0; p < B; p++) j += patternLoss(loss, v, t, p * n, n);
  return j;
}

/** {@link patternLossGradient} for every pattern of a batch, into `out` (B×n). @category Training */
export function batchLossGradient(loss: LossName, v: ArrayLike<number>, t: ArrayLike<number>, B: number, n: number, out: { [k: number]: number }): void {
  for (let p = 0; p < B; p++) patternLossGradient(loss, v, t, p * n, n, out);
}
