/**
 * Contrast forms: a rule's change for a whole batch written as sums of products of phase activities,
 * `ΔW = Σ_k (c_k / B) · P_kᵀ Q_k`, where each `P_k` (receiving side) and `Q_k` (sending side) is a linear
 * combination of one layer's activities in the settled phases, and biases change by
 * `(c / B) · Σ_patterns (activity[add] − activity[subtract])`. Contrastive Hebbian learning, GeneRec, the Xie–Seung scaling
 * and Equilibrium Propagation all have this form (their descriptors say how); a user's rule may be
 * declared by its form alone ({@link FormRule}).
 *
 * With the phase activities of every pattern at hand, the change of any block of rows of a weight matrix
 * is one matrix product over the whole batch, in a fixed order: worker threads each add the change of
 * their own block of rows (every parameter written by one thread), and the result does not depend on how
 * the rows are shared out.
 * @module
 */
import type { Objective } from "../train/loss.js";
import type { FloatArray } from "../types/index.js";
import type { KernelBackend } from "../kernels/backend.js";
import { typescriptSparseKernels, type RowCompressed } from "../kernels/sparse.js";
import type { Network } from "../network/network.js";
import type { Phase, PhaseOptions, Snapshot } from "../network/settle.js";
import { applyDelta, ParameterDelta } from "./delta.js";
import { SettlingRule, batchSizeOf, connectionRate, type Batch } from "./base.js";
import type { RuleConfigBase } from "./descriptor.js";
import { flatBatch, type BatchInput } from "../interop/ndarray.js";

/**
 * One phase a rule settles, with its settling options; every phase after the first starts from the first
 * (free) phase's state and sees the targets.
 * @category Rules
 */
export interface PhaseStep {
  readonly phase: Phase;
  /** Nudging strength of a nudged phase. */
  readonly beta?: number | undefined;
  /** The cost a nudged phase adds (default: the squared error on the output state; see `PhaseOptions.cost`). */
  readonly cost?: Objective | undefined;
  /** Cap on the phase's settling steps (default: the network's `dynamics.maxSteps`). */
  readonly maxSteps?: number | undefined;
  /** Stop tolerance of the phase (default: the network's); `Number.MIN_VALUE` settles exactly `maxSteps` steps. */
  readonly tolerance?: number | undefined;
  /**
   * Carry the drive over from the previous phase (same inputs, parameters unchanged); the result is the
   * same as a fresh drive up to the order of additions.
   */
  readonly reuseDrive?: boolean | undefined;
}

/** A linear combination of one layer's activities in the settled phases: pairs (phase index, weight). @category Rules */
export type Combination = readonly (readonly [phase: number, weight: number])[];

/** One product `(perPattern / B) · Pᵀ Q` of a connection's change. @category Rules */
export interface Product {
  /** The coefficient times the batch size (the change is averaged over the batch). */
  readonly perPattern: number;
  /** The receiving layer's combination (B×n, used transposed). */
  readonly post: Combination;
  /** The sending layer's combination (B×m), or `"input"` for an input layer (its values, the same in every phase). */
  readonly pre: Combination | "input";
}

/**
 * A rule's change as a contrast form, independent of the network's sizes.
 * @category Rules
 */
export interface ContrastForm {
  /** The phases to settle, in order (the first is the free phase). */
  readonly phases: readonly PhaseStep[];
  /**
   * The products of one trained connection's change for the coefficient `k` (its learning rate times
   * {@link ContrastForm.scale} and its layer factor). `input`: the sending layer is an input layer, whose
   * activity is the same in every phase.
   */
  products(k: number, input: boolean): readonly Product[];
  /** Factor on every learning rate (EqProp's 1/β; 1 for CHL and GeneRec). */
  readonly scale: number;
  /** The bias change of a layer is `(rate · scale · factor / B) Σ (activity[add] − activity[subtract])` (phase indices). */
  readonly bias: { readonly add: number; readonly subtract: number };
  /** Factors on the rates of each receiving layer, by layer index (the Xie–Seung γ^(k−L)); default 1. */
  readonly layerFactors?: readonly number[] | undefined;
}

/** The weight change of one trained connection. @category Rules */
export interface ConnectionPlan {
  readonly index: number;
  readonly from: number;
  readonly to: number;
  /** Receiving units (rows of the weight matrix). */
  readonly n: number;
  /** Sending units (columns). */
  readonly m: number;
  readonly products: readonly Product[];
  /**
   * The connection's row-compressed form when its storage is sparse: the change is then computed at the
   * stored entries only (a sampled product, in the form's values as scratch) and written there; entries
   * outside the pattern are left alone (adding) or zero (overwriting).
   */
  readonly sparse?: RowCompressed | null | undefined;
}

/** The change of one layer's biases: `(perPattern / B) · Σ_patterns (activity[add] − activity[subtract])`. @category Rules */
export interface BiasPlan {
  readonly layer: number;
  readonly n: number;
  readonly perPattern: number;
  /** Phase whose activity is added. */
  readonly add: number;
  /** Phase whose activity is subtracted. */
  readonly subtract: number;
  /** False when every connection into the layer is frozen: its biases do not change (the change is still reported). */
  readonly trained: boolean;
}

/** A contrast form laid out on one network. @category Rules */
export interface ContrastPlan {
  readonly phases: readonly PhaseStep[];
  readonly connections: readonly ConnectionPlan[];
  readonly biases: readonly BiasPlan[];
  /** Non-input layers whose activities are needed pattern by pattern (B×n): senders of a planned connection. */
  readonly senders: readonly boolean[];
  /** Values per slice in the statistics array: maxima per phase and layer, of each input layer, of each connection's and each layer's parameter block. */
  readonly statsStride: number;
}

/** Rows `[start, end)` of `n` that part `part` of `parts` takes (contiguous blocks in part order). @category Rules */
export function rowBlock(n: number, part: number, parts: number): [number, number] {
  return [Math.floor((part * n) / parts), Math.floor(((part + 1) * n) / parts)];
}

/**
 * Lays a contrast form out on `net` for a rule config (its rates). With `constrained: "refuse"` (the
 * default) returns null when the change may not be added in place: a trained connection with a sign or
 * bound constraint (those go through the constrained update).
 * @category Rules
 */
export function contrastPlan(net: Network, config: RuleConfigBase, form: ContrastForm, constrained: "refuse" | "allow" = "refuse"): ContrastPlan | null {
  const trained = net.connections.filter((c) => !c.spec.frozen);
  // adding in place skips applyDelta: only for unconstrained connections whose pattern needs no projection
  if (constrained === "refuse" && trained.some((c) => c.spec.sign !== "any" || c.spec.bounds !== "none" || !c.pattern.plain)) return null;
  const factor = (layer: number): number => form.layerFactors?.[layer] ?? 1;
  const senders = net.layers.map(() => false);
  const connections: ConnectionPlan[] = trained.map((c) => {
    const input = net.layers[c.from]!.role === "input";
    if (!input) senders[c.from] = true;
    return { index: c.index, from: c.from, to: c.to, n: net.layers[c.to]!.size, m: net.layers[c.from]!.size, products: form.products(connectionRate(config, c) * form.scale * factor(c.to), input), sparse: c.sparse ?? null };
  });
  const biases: BiasPlan[] = net.layers
    .filter((l) => l.role !== "input")
    .map((l) => {
      const into = net.incoming[l.index] ?? [];
      return { layer: l.index, n: l.size, perPattern: config.rate * form.scale * factor(l.index), add: form.bias.add, subtract: form.bias.subtract, trained: !(into.length > 0 && into.every((c) => c.spec.frozen)) };
    });
  const L = net.layers.length;
  return { phases: form.phases, connections, biases, senders, statsStride: form.phases.length * L + L + net.connections.length + L };
}

/** The settled activities of a whole batch. @category Rules */
export interface PhaseArrays {
  readonly batch: number;
  /** Per layer index: an input layer's values, B×m (null for the other layers). */
  readonly inputs: readonly (FloatArray | null)[];
  /** `[phase][layer]`: activities B×n (row = pattern) of the sending layers, else null. */
  readonly byPattern: readonly (readonly (FloatArray | null)[])[];
  /** `[phase][layer]`: activities n×B (row = unit) of every non-input layer, else null. */
  readonly byUnit: readonly (readonly (FloatArray | null)[])[];
}

/** Working arrays of one thread for {@link contrastRows}: at least (largest layer × B) elements each. @category Rules */
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

/** Where {@link contrastRows} writes: the parameters themselves (adding) or a change (overwriting). @category Rules */
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
 * @category Rules
 */
export function contrastRows(k: KernelBackend, plan: ContrastPlan, arrays: PhaseArrays, target: ContrastTarget, part: number, parts: number, scale: number, scratch: ContrastScratch, float32: boolean): void {
  const B = arrays.batch;
  for (const cp of plan.connections) {
    const [r0, r1] = rowBlock(cp.n, part, parts);
    const rows = r1 - r0;
    if (rows <= 0) continue;
    if (cp.sparse) {
      sparseContrastRows(k, cp, cp.sparse, arrays, target, r0, r1, scale, scratch);
      continue;
    }
    const w = (target.weights[cp.index] as FloatArray).subarray(r0 * cp.m, r1 * cp.m);
    let first = !target.add;
    for (const pr of cp.products) {
      const post = combine(k, scratch.post, pr.post, (p) => arrays.byUnit[p]![cp.to] as FloatArray, r0 * B, rows * B);
      const pre = pr.pre === "input" ? (arrays.inputs[cp.from] as FloatArray) : combine(k, scratch.pre, pr.pre, (p) => arrays.byPattern[p]![cp.from] as FloatArray, 0, B * cp.m);
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
    const a = arrays.byUnit[bp.add]![bp.layer] as FloatArray;
    const b = arrays.byUnit[bp.subtract]![bp.layer] as FloatArray;
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

/**
 * Rows [r0, r1) of a sparse connection's change: the sampled product of each of the form's products at the
 * stored entries (in the compressed values, which the next settling gathers afresh), then written into the
 * dense array: added to the weights (the values start from them, so each entry is `alpha Σ + w` rounded once,
 * as the dense path) or, for a change, written with zeros elsewhere.
 */
function sparseContrastRows(k: KernelBackend, cp: ConnectionPlan, sp: RowCompressed, arrays: PhaseArrays, target: ContrastTarget, r0: number, r1: number, scale: number, scratch: ContrastScratch): void {
  const B = arrays.batch;
  const m = cp.m;
  const w = target.weights[cp.index] as FloatArray;
  const { rowStart, columnIndex, values } = sp;
  const kernels = k.sparse ?? typescriptSparseKernels;
  const starts = rowStart.subarray(r0, r1 + 1);
  if (target.add) for (let i = r0; i < r1; i++) for (let q = rowStart[i]!; q < rowStart[i + 1]!; q++) values[q] = w[i * m + columnIndex[q]!]!;
  let first = !target.add;
  for (const pr of cp.products) {
    const post = combine(k, scratch.post, pr.post, (p) => arrays.byUnit[p]![cp.to] as FloatArray, r0 * B, (r1 - r0) * B);
    const pre = pr.pre === "input" ? (arrays.inputs[cp.from] as FloatArray) : combine(k, scratch.pre, pr.pre, (p) => arrays.byPattern[p]![cp.from] as FloatArray, 0, B * m);
    kernels.sparseSampledProduct(values, starts, columnIndex, post, pre, r1 - r0, m, B, (scale * pr.perPattern) / B, first ? 0 : 1);
    first = false;
  }
  if (!target.add) w.fill(0, r0 * m, r1 * m);
  for (let i = r0; i < r1; i++) for (let q = rowStart[i]!; q < rowStart[i + 1]!; q++) w[i * m + columnIndex[q]!] = first ? 0 : values[q]!;
}

/** Index of a maximum in one slice's statistics. @category Rules */
export const stat = {
  phase: (L: number, phase: number, layer: number): number => phase * L + layer,
  input: (plan: ContrastPlan, L: number, layer: number): number => plan.phases.length * L + layer,
  connection: (plan: ContrastPlan, L: number, c: number): number => plan.phases.length * L + L + c,
  bias: (plan: ContrastPlan, L: number, C: number, layer: number): number => plan.phases.length * L + L + C + layer,
};

/**
 * Whether adding the plan's change (times `scale`) in place provably leaves every parameter finite,
 * from the slices' maxima: `|ΔW| ≤ Σ_k |c_k| · max|P_k| · max|Q_k|` (the sum over B patterns of products
 * bounded by the maxima, divided by B), and `max|W| + |ΔW| < largest` of the dtype; biases alike.
 * Every thread reaches the same answer from the same numbers. When false, nothing is written and the
 * caller computes the change and applies it through the checked update, which reports the non-finite
 * parameter exactly.
 * @category Rules
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
    combo === "input" ? max(stat.input(plan, L, layer)) : combo.reduce((acc, [p, w]) => acc + Math.abs(w) * max(stat.phase(L, p, layer)), 0);
  for (const cp of plan.connections) {
    let bound = 0;
    for (const pr of cp.products) bound += Math.abs(scale * pr.perPattern) * comboMax(pr.post, cp.to) * comboMax(pr.pre, cp.from);
    if (!Number.isFinite(bound) || !(max(stat.connection(plan, L, cp.index)) + bound < largest)) return false;
  }
  for (const bp of plan.biases) {
    if (!bp.trained) continue;
    const bound = Math.abs(scale * bp.perPattern) * (max(stat.phase(L, bp.add, bp.layer)) + max(stat.phase(L, bp.subtract, bp.layer)));
    if (!Number.isFinite(bound) || !(max(stat.bias(plan, L, C, bp.layer)) + bound < largest)) return false;
  }
  return true;
}

/**
 * Settles a plan's phases for a batch (or a slice of one) into `snaps`: the first phase from `start` (or
 * rest), every later phase from the first phase's state, with the targets.
 * @category Rules
 */
export function settlePlanPhases(settler: { settle(o: PhaseOptions & { reuseDrive?: boolean | undefined }, into?: Snapshot): Snapshot }, phases: readonly PhaseStep[], batch: Batch, snaps: readonly Snapshot[], start?: Snapshot | undefined): Snapshot {
  let free: Snapshot | undefined;
  phases.forEach((ph, p) => {
    const snap = settler.settle(
      {
        phase: ph.phase,
        beta: ph.beta,
        cost: ph.cost,
        maxSteps: ph.maxSteps,
        tolerance: ph.tolerance,
        reuseDrive: ph.reuseDrive,
        inputs: batch.inputs,
        targets: p === 0 ? undefined : batch.targets,
        start: p === 0 ? start : free,
      },
      snaps[p],
    );
    if (p === 0) free = snap;
  });
  return free as Snapshot;
}

/**
 * Copies the settled activities of patterns `[start, start + count)` into whole-batch phase arrays
 * (unit-major for every non-input layer, pattern-major for the senders), and writes their maxima into
 * `stats` (one slice's statistics, see {@link stat}), using `K` for the copies and maxima.
 * @category Rules
 */
export function publishPhases(K: KernelBackend, net: Network, plan: ContrastPlan, snaps: readonly Snapshot[], arrays: PhaseArrays, start: number, count: number, stats: Float64Array): void {
  const B = arrays.batch;
  const L = net.layers.length;
  for (let p = 0; p < plan.phases.length; p++) {
    const act = snaps[p]!.activity;
    for (const l of net.layers) {
      if (l.role === "input") continue;
      const n = l.size;
      const a = act[l.index] as FloatArray;
      const byUnit = arrays.byUnit[p]![l.index];
      if (byUnit) {
        // unit-major: row j holds unit j's activity for every pattern; this slice fills columns [start, start + count)
        for (let j = 0; j < n; j++) {
          const row = j * B + start;
          for (let r = 0; r < count; r++) byUnit[row + r] = a[r * n + j] as number;
        }
      }
      const byPattern = arrays.byPattern[p]![l.index];
      if (byPattern) K.copy(byPattern.subarray(start * n, (start + count) * n), a, count * n);
      stats[stat.phase(L, p, l.index)] = K.maxAbs(a, count * n);
    }
  }
  for (const l of net.inputLayers) {
    const x = arrays.inputs[l.index] as FloatArray;
    stats[stat.input(plan, L, l.index)] = K.maxAbs(x.subarray(start * l.size, (start + count) * l.size));
  }
}

/** Writes the maxima of part `part` of `parts` of the planned parameter blocks into one slice's statistics. @category Rules */
export function publishParameterMaxima(K: KernelBackend, net: Network, plan: ContrastPlan, part: number, parts: number, stats: Float64Array): void {
  const L = net.layers.length;
  for (const cp of plan.connections) {
    const [r0, r1] = rowBlock(cp.n, part, parts);
    stats[stat.connection(plan, L, cp.index)] = K.maxAbs(net.connections[cp.index]!.weights.subarray(r0 * cp.m, r1 * cp.m));
  }
  for (const bp of plan.biases) {
    const [j0, j1] = rowBlock(bp.n, part, parts);
    stats[stat.bias(plan, L, net.connections.length, bp.layer)] = K.maxAbs(net.layers[bp.layer]!.bias.subarray(j0, j1));
  }
}

/**
 * Allocates whole-batch phase arrays for a plan on `net` (in the network's memory): unit-major arrays for
 * every non-input layer and phase, pattern-major arrays for the senders, and one array per input layer
 * for its values.
 * @category Rules
 */
export function allocatePhaseArrays(net: Network, plan: ContrastPlan, B: number): PhaseArrays {
  const byUnit = plan.phases.map(() => net.layers.map((l) => (l.role === "input" ? null : net.allocate(l.size * B))));
  const byPattern = plan.phases.map(() => net.layers.map((l) => (plan.senders[l.index] ? net.allocate(B * l.size) : null)));
  const inputs = net.layers.map((l) => (l.role === "input" ? net.allocate(B * l.size) : null));
  return { batch: B, inputs, byPattern, byUnit };
}

/** Working arrays for {@link contrastRows} on `net` at batch size B. @category Rules */
export function allocateContrastScratch(net: Network, B: number): ContrastScratch {
  const largest = Math.max(...net.layers.map((l) => l.size));
  return { post: net.allocate(largest * B), pre: net.allocate(largest * B) };
}

/**
 * A rule declared by its contrast form alone (a descriptor with `contrast` and `create: (net, c) => new
 * FormRule(net, c, form)`): settles the form's phases and computes the change exactly as the row split
 * across worker threads does, so one thread and any number of workers give the same bits (when the
 * phases settle a fixed number of steps, or each pattern's settling does not depend on the others'). Its
 * step adds the change in place when that provably leaves every parameter finite, else applies it
 * through the checked update. Takes any number of input and output layers, and target rows of NaN (a
 * pattern whose output layer is not observed: the settler leaves that layer free for the pattern, so it
 * takes the change of a hidden layer there, as the built-in contrastive rules do).
 * @category Rules
 */
export class FormRule<C extends RuleConfigBase = RuleConfigBase> extends SettlingRule {
  readonly phases: readonly string[];
  /** The form, and its layout on the network (null when a connection's constraints forbid adding in place). */
  readonly form: ContrastForm;
  private readonly plan: ContrastPlan;
  private readonly inPlace: boolean;
  private readonly work = new Map<number, { arrays: PhaseArrays; scratch: ContrastScratch; stats: Float64Array }>();
  private fallback: ParameterDelta | null = null;
  declare readonly config: C;

  constructor(net: Network, config: C, form: ContrastForm) {
    super(net, config);
    this.form = form;
    this.phases = form.phases.map((p) => p.phase + (p.beta !== undefined ? ` β=${p.beta}` : ""));
    const plan = contrastPlan(net, config, form);
    this.inPlace = plan !== null;
    // with constrained connections the change is still the form's; it is applied through applyDelta
    this.plan = plan ?? (contrastPlan(net, config, form, "allow") as ContrastPlan);
  }

  private settleAll(batch: Batch): { B: number; w: { arrays: PhaseArrays; scratch: ContrastScratch; stats: Float64Array } } {
    const net = this.net;
    const B = batchSizeOf(net, batch);
    const { settler, snaps } = this.workspace(B, this.plan.phases.length);
    this.lastFree = settlePlanPhases(settler, this.plan.phases, batch, snaps, this.startFor(B));
    let w = this.work.get(B);
    if (w === undefined) {
      w = { arrays: allocatePhaseArrays(net, this.plan, B), scratch: allocateContrastScratch(net, B), stats: new Float64Array(this.plan.statsStride) };
      this.work.set(B, w);
    }
    // every input layer's values (the settler has checked them)
    for (const l of net.inputLayers) {
      const values = batch.inputs[l.name]!;
      const x = w.arrays.inputs[l.index] as FloatArray;
      for (let k = 0; k < x.length; k++) x[k] = values[k] as number;
    }
    publishPhases(net.kernels, net, this.plan, snaps, w.arrays, 0, B, w.stats);
    return { B, w };
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const { w } = this.settleAll(batch);
    out.clear();
    contrastRows(this.net.kernels, this.plan, w.arrays, { weights: out.weights, biases: out.biases, add: false }, 0, 1, 1, w.scratch, this.net.dtype === "float32");
    return out;
  }

  override step(batch: BatchInput, scale = 1): void {
    const net = this.net;
    const { w } = this.settleAll(flatBatch(net, batch));
    const float32 = net.dtype === "float32";
    if (this.inPlace) {
      publishParameterMaxima(net.kernels, net, this.plan, 0, 1, w.stats);
      if (provablyFinite(this.plan, w.stats, 1, net.layers.length, net.connections.length, scale, float32)) {
        contrastRows(net.kernels, this.plan, w.arrays, { weights: net.connections.map((c) => c.weights), biases: net.layers.map((l) => l.bias), add: true }, 0, 1, scale, w.scratch, float32);
        return;
      }
    }
    const d = (this.fallback ??= new ParameterDelta(net));
    d.clear();
    contrastRows(net.kernels, this.plan, w.arrays, { weights: d.weights, biases: d.biases, add: false }, 0, 1, scale, w.scratch, float32);
    applyDelta(net, d);
  }
}
