/**
 * Parameter changes of a network and their application under the
 * connections' constraints (frozen, sign, soft bounds).
 * @module
 */
import { EbbflowError, issueText } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { maskTransposed, projectArray, type TieMode } from "../network/pattern.js";

/**
 * A change (or a gradient) for every parameter of a network: one array per
 * connection's weights, per learned separate feedback matrix, and per layer's
 * biases (input layers have an empty array).
 * @category Rules
 */
export class ParameterDelta {
  readonly weights: FloatArray[];
  readonly feedback: (FloatArray | null)[];
  readonly biases: FloatArray[];

  /** A zeroed delta shaped like `net`. */
  constructor(net: Network) {
    this.weights = net.connections.map((c) => net.allocate(c.weights.length));
    this.feedback = net.connections.map((c) => (c.feedback.kind === "separate" && c.feedback.learned ? net.allocate(c.feedback.weights.length) : null));
    this.biases = net.layers.map((l) => net.allocate(l.role === "input" ? 0 : l.size));
  }

  /** Sets every entry to zero. */
  clear(): this {
    for (const w of this.weights) w.fill(0);
    for (const f of this.feedback) f?.fill(0);
    for (const b of this.biases) b.fill(0);
    return this;
  }

  /** Multiplies every entry by `s`. */
  scale(s: number): this {
    for (const arr of [...this.weights, ...this.biases]) for (let i = 0; i < arr.length; i++) arr[i] = (arr[i] as number) * s;
    for (const f of this.feedback) if (f) for (let i = 0; i < f.length; i++) f[i] = (f[i] as number) * s;
    return this;
  }

  /** Adds `s · other` to this delta. */
  addScaled(other: ParameterDelta, s: number): this {
    const pairs: [FloatArray, FloatArray][] = [];
    this.weights.forEach((w, i) => pairs.push([w, other.weights[i] as FloatArray]));
    this.biases.forEach((b, i) => pairs.push([b, other.biases[i] as FloatArray]));
    this.feedback.forEach((f, i) => {
      const o = other.feedback[i];
      if (f && o) pairs.push([f, o]);
    });
    for (const [a, b] of pairs) for (let i = 0; i < a.length; i++) a[i] = (a[i] as number) + s * (b[i] as number);
    return this;
  }
}

function constrained(w: number, dw: number, sign: string, bounds: string): number {
  if (bounds === "soft") {
    // multiplicative soft bounds on the magnitude m in [0, 1]: growth scaled by (1 - m), shrinkage by m
    const s = sign === "inhibitory" ? -1 : 1;
    const m = Math.abs(w);
    const dm = s * dw;
    const next = dm > 0 ? m + dm * (1 - m) : m + dm * m;
    return s * Math.min(1, Math.max(0, next));
  }
  const v = w + dw;
  if (sign === "excitatory") return v < 0 ? 0 : v;
  if (sign === "inhibitory") return v > 0 ? 0 : v;
  return v;
}

/**
 * Projects a change onto the connections' patterns, in place (see `projectArray`): entries outside a
 * pattern become 0, a shared parameter's positions take the sum of their changes (`tie` `"sum"`, a
 * rule's change per position) or their mean (`"mean"`, a change already tied, as the optimizer's), a
 * symmetric lateral matrix takes the symmetrised change `(Δ + Δᵀ)/2`, and a separate feedback matrix
 * is masked. Plain (full) connections are left as they are.
 * @category Rules
 */
export function projectDelta(net: Network, delta: ParameterDelta, tie: TieMode = "sum"): void {
  for (const c of net.connections) {
    if (c.pattern.plain) continue;
    projectArray(c.pattern, delta.weights[c.index] as FloatArray, tie);
    const f = delta.feedback[c.index];
    if (f) maskTransposed(c.pattern, f);
  }
}

/**
 * Adds `delta` to the network's parameters, respecting each connection's
 * pattern (the change is first projected onto it, in place, see {@link projectDelta}: `tie` says how a
 * shared parameter's positions combine) and constraints: frozen connections do not change, sign-constrained weights
 * stop at zero, soft-bounded magnitudes stay in [0, 1] (growth scaled by
 * 1 − |w|, shrinkage by |w|). Biases of a layer change unless every
 * connection into it is frozen.
 *
 * All-or-nothing: if any changed parameter would be non-finite, nothing is
 * changed and an error names the connection (or layer).
 * @throws {@link EbbflowError} `non_finite_update`.
 * @category Rules
 */
export function applyDelta(net: Network, delta: ParameterDelta, tie: "sum" | "mean" = "sum"): void {
  const K = net.kernels;
  projectDelta(net, delta, tie);
  const problems = [];
  // w + d stays finite when d is finite and max|w| + max|d| is below the largest finite value of the dtype;
  // only when that quick test fails are the sums checked one by one
  const largest = net.dtype === "float32" ? 3.4028234663852886e38 : Number.MAX_VALUE;
  const firstBad = (w: FloatArray, d: FloatArray): number => {
    if (d.length === 0) return -1;
    const md = K.maxAbs(d); // NaN when d holds a NaN, Infinity when it holds an infinity
    if (Number.isFinite(md) && K.maxAbs(w) + md < largest) return -1;
    for (let i = 0; i < d.length; i++) {
      const v = (w[i] as number) + (d[i] as number);
      if (!Number.isFinite(v) || Math.abs(v) > largest) return i;
    }
    return -1;
  };
  for (const c of net.connections) {
    if (c.spec.frozen) continue;
    const d = delta.weights[c.index] as FloatArray;
    const bad = firstBad(c.weights, d);
    if (bad >= 0) problems.push(issueText("non_finite_update", `connections[${c.index}]`, `finite weight changes for ${c.label}`, `${d[bad]} at entry ${bad}`));
    const f = delta.feedback[c.index];
    if (f && c.feedback.kind === "separate") {
      const badF = firstBad(c.feedback.weights, f);
      if (badF >= 0) problems.push(issueText("non_finite_update", `connections[${c.index}].feedback`, `finite feedback-weight changes for ${c.label}`, `${f[badF]} at entry ${badF}`));
    }
  }
  for (const l of net.layers) {
    const d = delta.biases[l.index] as FloatArray;
    const bad = firstBad(l.bias, d);
    if (bad >= 0) problems.push(issueText("non_finite_update", `layers[${l.index}].bias`, `finite bias changes for layer ${JSON.stringify(l.name)}`, `${d[bad]} at unit ${bad}`));
  }
  if (problems.length > 0) throw new EbbflowError(problems);
  for (const c of net.connections) {
    if (c.spec.frozen) continue;
    const d = delta.weights[c.index] as FloatArray;
    // an empty change array leaves the weights alone (an optimizer's array left to the rule)
    if (d.length === 0) continue;
    const w = c.weights;
    const { sign, bounds } = c.spec;
    if (sign === "any" && bounds === "none") K.axpy(w, d, 1);
    else for (let i = 0; i < d.length; i++) w[i] = constrained(w[i] as number, d[i] as number, sign, bounds);
    const f = delta.feedback[c.index];
    if (f && c.feedback.kind === "separate") K.axpy(c.feedback.weights, f, 1);
  }
  addBiases(net, delta.biases);
}

/** Adds bias changes (already checked finite) to every non-input layer whose incoming connections are not all frozen. */
export function addBiases(net: Network, biases: readonly FloatArray[]): void {
  for (const l of net.layers) {
    if (l.role === "input") continue;
    const into = net.incoming[l.index] ?? [];
    if (into.length > 0 && into.every((c) => c.spec.frozen)) continue;
    const d = biases[l.index] as FloatArray;
    if (d.length === 0) continue;
    net.kernels.axpy(l.bias, d, 1);
  }
}
