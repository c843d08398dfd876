/**
 * Contrast plans: a rule's change for a whole batch written as sums of products of phase activities,
 * `ΔW = Σ_k (c_k / B) · P_kᵀ Q_k`, where each `P_k` (receiving side) and `Q_k` (sending side) is a linear
 * combination of one layer's activities in the settled phases. With the phase activities of every
 * pattern in shared memory, each worker adds the change for its own block of rows of every weight matrix
 * (and its block of biases) straight into the shared parameters: every parameter is written by one
 * worker, with the sum over the batch in a fixed order.
 *
 * Plans exist for the rules whose change has this form and whose phases a worker can settle with a
 * `Settler` alone: Equilibrium Propagation (one-sided and symmetric; Scellier & Bengio 2017, Front.
 * Comput. Neurosci. 11:24; Laborieux et al. 2021, Front. Neurosci. 15:633674), contrastive Hebbian
 * learning (Movellan 1990, Connectionist Models Summer School) and GeneRec in its four variants
 * (O'Reilly 1996, Neural Computation 8:895). The coefficients repeat the rules' own (src/rules).
 * @module
 */
import type { FloatArray } from "../../types/index.js";
import type { KernelBackend } from "../../kernels/backend.js";
import type { Network } from "../../network/network.js";
import type { Phase } from "../../network/settle.js";
import { connectionRate, type RuleConfig } from "../../rules/index.js";

/**
 * One phase a worker settles, with the settling options the rule itself passes for it; every phase
 * after the first starts from the first (free) phase's state.
 */
export interface PhaseStep {
  readonly phase: Phase;
  /** Nudging strength of a nudged phase. */
  readonly beta?: number | undefined;
  /** Cap on the phase's settling steps (the rule's `freeSteps`/`nudgedSteps` where it has them). */
  readonly maxSteps?: number | undefined;
  /**
   * The rule asks the settler to carry the drive over from the previous phase (same inputs, parameters
   * unchanged). Settlers that do not know the option compute the drive afresh; the result is the same.
   */
  readonly reuseDrive?: boolean | undefined;
}

/** Step caps of a rule config (EqProp's `freeSteps` and `nudgedSteps`; none for the other rules). */
function stepCaps(rule: RuleConfig): { free?: number | undefined; nudged?: number | undefined } {
  return rule.rule === "eqprop" ? { free: rule.freeSteps, nudged: rule.nudgedSteps } : {};
}

/** A linear combination of one layer's activities in the settled phases: pairs (phase index, weight). */
export type Combination = readonly (readonly [phase: number, weight: number])[];

/** One product `(perPattern / B) · Pᵀ Q` of a connection's change. */
export interface Product {
  /** The coefficient times the batch size (the rules divide by B to average over the batch). */
  readonly perPattern: number;
  /** The receiving layer's combination (B×n, used transposed). */
  readonly post: Combination;
  /** The sending layer's combination (B×m), or `"input"` for an input layer (the same in every phase). */
  readonly pre: Combination | "input";
}

/** The change of one trained connection's weights. */
export interface ConnectionPlan {
  readonly index: number;
  readonly from: number;
  readonly to: number;
  /** Receiving units (rows of the weight matrix). */
  readonly n: number;
  /** Sending units (columns). */
  readonly m: number;
  readonly products: readonly Product[];
}

/** The change of one layer's biases: `(perPattern / B) · Σ_patterns (a_plus − a_minus)`. */
export interface BiasPlan {
  readonly layer: number;
  readonly n: number;
  readonly perPattern: number;
  readonly plus: number;
  readonly minus: number;
  /** False when every connection into the layer is frozen: its biases do not change (the change is still reported). */
  readonly trained: boolean;
}

/** How a rule's change is formed from settled phases. */
export interface ContrastPlan {
  readonly phases: readonly PhaseStep[];
  readonly connections: readonly ConnectionPlan[];
  readonly biases: readonly BiasPlan[];
  /** Non-input layers whose activities are needed pattern by pattern (B×n): senders of a planned connection. */
  readonly senders: readonly boolean[];
  /** Values per slice in the statistics array: maxima per phase and layer, of the input, of each connection's and each layer's parameter block. */
  readonly statsStride: number;
}

/** Rows `[start, end)` of `n` that part `part` of `parts` takes (contiguous blocks in part order). */
export function rowBlock(n: number, part: number, parts: number): [number, number] {
  return [Math.floor((part * n) / parts), Math.floor(((part + 1) * n) / parts)];
}

/**
 * The contrast plan of `rule` on `net`, or null when its change is not a sum of phase-activity products
 * that may be added in place: rules other than one-sided or symmetric EqProp, CHL and GeneRec; a trained
 * connection with a sign or bound constraint (those go through the constrained update); CHL or GeneRec
 * with a learned separate feedback matrix (its change is the transposed forward change).
 */
export function contrastPlan(net: Network, rule: RuleConfig): ContrastPlan | null {
  const trained = net.connections.filter((c) => !c.spec.frozen);
  if (trained.some((c) => c.spec.sign !== "any" || c.spec.bounds !== "none")) return null;
  let phases: PhaseStep[];
  let weightScale: number;
  let biasPerPattern: number;
  /** The products of a connection whose sending layer is an input layer (`input`) or not. */
  let products: (k: number, input: boolean) => Product[];
  const plus = 1;
  const minus = rule.rule === "eqprop" && rule.mode === "symmetric" ? 2 : 0;
  const diff: Combination = [
    [plus, 1],
    [minus, -1],
  ];
  const contrast = (k: number, input: boolean): Product[] =>
    input
      ? [{ perPattern: k, post: diff, pre: "input" }]
      : [
          { perPattern: k, post: [[plus, 1]], pre: [[plus, 1]] },
          { perPattern: -k, post: [[minus, 1]], pre: [[minus, 1]] },
        ];
  if (rule.rule === "eqprop") {
    if (rule.mode === "random-sign") return null;
    const beta = rule.beta;
    // as the rule settles them (src/rules/eqprop.ts): the nudged phases start from the free state, reuse its drive
    const caps = stepCaps(rule);
    const free: PhaseStep = { phase: "free", maxSteps: caps.free };
    const nudged = (b: number): PhaseStep => ({ phase: "nudged", beta: b, maxSteps: caps.nudged, reuseDrive: true });
    if (rule.mode === "symmetric") {
      phases = [free, nudged(beta), nudged(-beta)];
      weightScale = 1 / (2 * beta);
    } else {
      phases = [free, nudged(beta)];
      weightScale = 1 / beta;
    }
    biasPerPattern = rule.rate * weightScale;
    products = contrast;
  } else if (rule.rule === "chl" || rule.rule === "generec") {
    if (trained.some((c) => c.feedback.kind === "separate" && c.feedback.learned)) return null;
    // as the rules settle them (src/rules/contrastive.ts): the clamped phase starts from the free state
    phases = [{ phase: "free" }, { phase: "clamped", reuseDrive: true }];
    weightScale = 1;
    biasPerPattern = rule.rate;
    if (rule.rule === "chl") products = contrast;
    else {
      // GeneRec, x sending, y receiving, - free (phase 0), + clamped (phase 1)
      const free: Combination = [[minus, 1]];
      const mid: Combination = [
        [plus, 0.5],
        [minus, 0.5],
      ];
      const v = rule.variant;
      products = (k, input) => {
        const out: Product[] = [{ perPattern: k, post: diff, pre: input ? "input" : v === "basic" || v === "symmetric" ? free : mid }];
        // the second products carry x+ - x-, which is zero for a clamped input layer
        if (!input && v === "symmetric") out.push({ perPattern: k, post: free, pre: diff });
        if (!input && v === "symmetric-midpoint") out.push({ perPattern: k, post: mid, pre: diff });
        return out;
      };
    }
  } else return null;
  const senders = net.layers.map(() => false);
  const connections: ConnectionPlan[] = trained.map((c) => {
    const input = net.layers[c.from]!.role === "input";
    if (!input) senders[c.from] = true;
    return { index: c.index, from: c.from, to: c.to, n: net.layers[c.to]!.size, m: net.layers[c.from]!.size, products: products(connectionRate(rule, c) * weightScale, input) };
  });
  const biases: BiasPlan[] = net.layers
    .filter((l) => l.role !== "input")
    .map((l) => {
      const into = net.incoming[l.index] ?? [];
      return { layer: l.index, n: l.size, perPattern: biasPerPattern, plus, minus, trained: !(into.length > 0 && into.every((c) => c.spec.frozen)) };
    });
  const L = net.layers.length;
  return { phases, connections, biases, senders, statsStride: phases.length * L + 1 + net.connections.length + L };
}

/** The settled activities of a whole batch, in shared memory. */
export interface PhaseArrays {
  readonly batch: number;
  /** The input layer's values, B×m. */
  readonly input: FloatArray;
  /** `[phase][layer]`: activities B×n (row = pattern) of the sending layers, else null. */
  readonly byPattern: readonly (readonly (FloatArray | null)[])[];
  /** `[phase][layer]`: activities n×B (row = unit) of every non-input layer, else null. */
  readonly byUnit: readonly (readonly (FloatArray | null)[])[];
}

/** Working arrays of one thread for {@link contrastRows}: at least (largest layer × B) elements each. */
export interface ContrastScratch {
  readonly post: FloatArray;
  readonly pre: FloatArray;
}

/** `out[0, len) = Σ w · source(phase)[offset, offset + len)`, or the source itself for a single weight-1 term. */
function combine(k: KernelBackend, out: FloatArray, combo: Combination, source: (phase: number) => FloatArray, offset: number, len: number): FloatArray {
  if (combo.length === 1 && combo[0]![1] === 1) return source(combo[0]![0]).subarray(offset, offset + len);
  const dst = out.subarray(0, len);
  combo.forEach(([p, w], i) => {
    const src = source(p).subarray(offset, offset + len);
    if (i === 0) k.scale(dst, src, w, len);
    else k.axpy(dst, src, w, len);
  });
  return dst;
}

/** Where {@link contrastRows} writes: the parameters themselves (adding) or a change (overwriting). */
export interface ContrastTarget {
  /** Per connection index. */
  readonly weights: readonly FloatArray[];
  /** Per layer index. */
  readonly biases: readonly FloatArray[];
  /** True: add into the arrays (the parameters; untrained biases are left alone); false: overwrite with the change. */
  readonly add: boolean;
}

/**
 * Writes part `part` of `parts` of the plan's change for the batch in `arrays`, times `scale`: rows
 * `rowBlock(n, part, parts)` of every planned weight matrix and the same block of every layer's biases.
 * Each row is a matrix product over the whole batch (fixed order), so the result does not depend on
 * which thread computes it.
 */
export function contrastRows(k: KernelBackend, plan: ContrastPlan, arrays: PhaseArrays, target: ContrastTarget, part: number, parts: number, scale: number, scratch: ContrastScratch, float32: boolean): void {
  const B = arrays.batch;
  for (const cp of plan.connections) {
    const [r0, r1] = rowBlock(cp.n, part, parts);
    const rows = r1 - r0;
    if (rows <= 0) continue;
    const w = (target.weights[cp.index] as FloatArray).subarray(r0 * cp.m, r1 * cp.m);
    let first = !target.add;
    for (const pr of cp.products) {
      const post = combine(k, scratch.post, pr.post, (p) => arrays.byUnit[p]![cp.to] as FloatArray, r0 * B, rows * B);
      const pre = pr.pre === "input" ? arrays.input : combine(k, scratch.pre, pr.pre, (p) => arrays.byPattern[p]![cp.from] as FloatArray, 0, B * cp.m);
      // w (rows×m) = alpha · postᵀ pre (+ w), post stored unit-major (rows×B), pre pattern-major (B×m)
      k.gemm(w, post, pre, rows, cp.m, B, false, false, (scale * pr.perPattern) / B, first ? 0 : 1);
      first = false;
    }
    if (first) k.fill(w, 0);
  }
  const round = float32 ? Math.fround : (x: number) => x;
  for (const bp of plan.biases) {
    if (target.add && !bp.trained) continue;
    const [j0, j1] = rowBlock(bp.n, part, parts);
    const a = arrays.byUnit[bp.plus]![bp.layer] as FloatArray;
    const b = arrays.byUnit[bp.minus]![bp.layer] as FloatArray;
    const out = target.biases[bp.layer] as FloatArray;
    const alpha = (scale * bp.perPattern) / B;
    for (let j = j0; j < j1; j++) {
      // the same sum, in the same order, as the rules' bias change (patterns in order, in float64)
      let s = 0;
      for (let p = 0; p < B; p++) s += (a[j * B + p] as number) - (b[j * B + p] as number);
      out[j] = target.add ? (out[j] as number) + round(alpha * s) : alpha * s;
    }
  }
}

/** Index of a maximum in one slice's statistics. */
export const stat = {
  phase: (L: number, phase: number, layer: number): number => phase * L + layer,
  input: (plan: ContrastPlan, L: number): number => plan.phases.length * L,
  connection: (plan: ContrastPlan, L: number, c: number): number => plan.phases.length * L + 1 + c,
  bias: (plan: ContrastPlan, L: number, C: number, layer: number): number => plan.phases.length * L + 1 + C + layer,
};

/**
 * Whether adding the plan's change (times `scale`) in place provably leaves every parameter finite,
 * from the slices' maxima: `|ΔW| ≤ Σ_k |c_k| · max|P_k| · max|Q_k|` (the sum over B patterns of products
 * bounded by the maxima, divided by B), and `max|W| + |ΔW| < largest` of the dtype; biases alike.
 * Every worker reaches the same answer from the same numbers. When false, nothing is written and the
 * caller computes the change and applies it through the checked update, which reports the non-finite
 * parameter exactly.
 */
export function provablyFinite(plan: ContrastPlan, stats: Float64Array, slices: number, L: number, C: number, scale: number, float32: boolean): boolean {
  const largest = float32 ? 3.4028234663852886e38 : Number.MAX_VALUE;
  const stride = plan.statsStride;
  const max = (i: number): number => {
    let m = 0;
    for (let s = 0; s < slices; s++) m = Math.max(m, stats[s * stride + i] as number); // NaN stays NaN
    return m;
  };
  const comboMax = (combo: Combination | "input", layer: number): number =>
    combo === "input" ? max(stat.input(plan, L)) : combo.reduce((acc, [p, w]) => acc + Math.abs(w) * max(stat.phase(L, p, layer)), 0);
  for (const cp of plan.connections) {
    let bound = 0;
    for (const pr of cp.products) bound += Math.abs(scale * pr.perPattern) * comboMax(pr.post, cp.to) * comboMax(pr.pre, cp.from);
    if (!Number.isFinite(bound) || !(max(stat.connection(plan, L, cp.index)) + bound < largest)) return false;
  }
  for (const bp of plan.biases) {
    if (!bp.trained) continue;
    const bound = Math.abs(scale * bp.perPattern) * (max(stat.phase(L, bp.plus, bp.layer)) + max(stat.phase(L, bp.minus, bp.layer)));
    if (!Number.isFinite(bound) || !(max(stat.bias(plan, L, C, bp.layer)) + bound < largest)) return false;
  }
  return true;
}
