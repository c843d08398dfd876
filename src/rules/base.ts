/**
 * What every learning rule provides, and helpers the rules share.
 * @module
 */
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { KernelBackend } from "../kernels/backend.js";
import type { Connection, Network } from "../network/network.js";
import { Settler, Snapshot, type LayerValues, type PhaseOptions } from "../network/settle.js";
import { applyDelta, ParameterDelta } from "./delta.js";
import type { RuleConfigBase } from "./descriptor.js";
import { flatBatch, type BatchInput } from "../interop/ndarray.js";
import { targetRowObserved } from "../train/loss.js";

/**
 * A batch of patterns: values per input layer and targets per output layer, B×N flat. A pattern's target
 * row of NaN (all of a layer's values for that pattern) is not observed: the layer is free for that
 * pattern in the clamped phase, feels no nudging and takes no loss (partial clamping).
 * @category Rules
 */
export interface Batch {
  readonly inputs: LayerValues;
  readonly targets: LayerValues;
}

/**
 * A learning rule bound to one network. `computeDelta` leaves the network
 * untouched; `step` computes and applies the change under the constraints.
 * @category Rules
 */
export interface LearningRule {
  /** The rule's config with defaults filled in (`config.rule` names its descriptor). */
  readonly config: RuleConfigBase;
  readonly net: Network;
  /** The phases the rule settles (for reports). */
  readonly phases: readonly string[];
  /** Writes the rule's parameter change for `batch` into `out` (cleared first) and returns it. */
  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta;
  /**
   * Computes the change for `batch`, multiplied by `scale` (default 1; a learning-rate schedule's factor),
   * and applies it (all-or-nothing; see applyDelta). Rules may add the change straight into the weights
   * when that is provably safe (no constraint applies and the change is bounded), skipping the change matrix.
   * The batch's values may be `ndarray`-like (`[batch, units]`), read without a copy when contiguous.
   */
  step(batch: BatchInput, scale?: number): void;
  /** The free-phase snapshot of the last batch, if the rule settles one. */
  readonly lastFree: Snapshot | null;
  /**
   * The snapshots of every phase settled for the last batch, in order (free first), when the rule records
   * them (every {@link SettlingRule} does): read by `gradientAgreement` to report convergence, step
   * counts and distances per phase. Valid until the rule's next step.
   */
  readonly lastPhases?: readonly Snapshot[] | undefined;
  /**
   * If set (same batch size), the next free phase starts from this state instead of rest: persistent
   * states, as in the Equilibrium Propagation authors' code (methods.md item 4). Rules on the
   * feedforward pass ignore it.
   */
  freeStart: Snapshot | null;
  /** The rule's internal state (random streams, sliding thresholds, running averages) as plain JSON data. */
  saveState(): RuleState;
  /** Restores a state saved by {@link LearningRule.saveState} (for bit-identical resumption). */
  loadState(state: RuleState): void;
}

/** A rule's internal state as plain JSON data. @category Rules */
export type RuleState = Readonly<Record<string, unknown>>;

/** Number of patterns in a batch, from the first input layer's values. @category Rules */
export function batchSizeOf(net: Network, batch: Batch): number {
  if (batch === null || typeof batch !== "object") return fail("invalid_parameter", "batch", "a batch: { inputs, targets }", batch);
  if (batch.inputs === null || typeof batch.inputs !== "object") return fail("shape_mismatch", "inputs", "an object mapping each input layer name to its values", batch.inputs);
  if (batch.targets !== undefined && (batch.targets === null || typeof batch.targets !== "object")) return fail("shape_mismatch", "targets", "an object mapping each output layer name to its values", batch.targets);
  const first = net.inputLayers[0];
  if (first === undefined) return fail("invalid_config", "layers", "an input layer", "none");
  const v = batch.inputs[first.name];
  if (v === undefined || v === null || typeof v !== "object") return fail("shape_mismatch", `inputs.${first.name}`, "input values", v);
  if (typeof v.length !== "number" || v.length === 0 || v.length % first.size !== 0) fail("shape_mismatch", `inputs.${first.name}`, `a non-empty multiple of ${first.size} values`, `${v.length} values`);
  return v.length / first.size;
}

/**
 * A layer's values of a batch, checked: `count` finite numbers (an array or a typed array). For rules that
 * read inputs or targets themselves rather than through the settler, which checks them the same way.
 * @param values - The batch's inputs or targets.
 * @param layer - The layer's name.
 * @param count - Values expected (batch × size).
 * @param what - `inputs` or `targets`, for the error path.
 * @param unobservedRows - The layer's size when rows of NaN (patterns not observed) are allowed.
 * @returns The values.
 * @throws {@link EbbflowError} `shape_mismatch` naming the layer (and the first bad value).
 * @category Rules
 */
export function checkedLayerValues(values: LayerValues | undefined, layer: string, count: number, what: "inputs" | "targets", unobservedRows?: number): ArrayLike<number> {
  const v = values?.[layer] as unknown;
  if (v === null || typeof v !== "object" || typeof (v as { length?: unknown }).length !== "number") return fail("shape_mismatch", `${what}.${layer}`, `${count} values`, v === undefined ? "missing" : v);
  const a = v as ArrayLike<unknown>;
  if (a.length !== count) fail("shape_mismatch", `${what}.${layer}`, `${count} values`, `${a.length} values`);
  for (let k = 0; k < count; k++) {
    const x = a[k];
    if (unobservedRows !== undefined && typeof x === "number" && Number.isNaN(x)) {
      // a row of NaN: not observed (all-or-nothing, checked per row)
      targetRowObserved(a as ArrayLike<number>, k - (k % unobservedRows), unobservedRows, `${what}.${layer}`);
      continue;
    }
    if (typeof x !== "number" || !Number.isFinite(x)) fail("shape_mismatch", `${what}.${layer}[${k}]`, what === "targets" ? "a finite number (this rule needs every target observed)" : "a finite number", x);
  }
  return a as ArrayLike<number>;
}

/** Learning rate of a connection: the rule's per-connection override or its rate, times the connection's own multiplier. @category Rules */
export function connectionRate(config: RuleConfigBase, c: Connection): number {
  const base = config.rates?.[c.label] ?? config.rate;
  return base * (c.spec.rate ?? 1);
}

/** Checks that every key of `rates` names a connection. */
export function checkRates(net: Network, config: RuleConfigBase): void {
  for (const key of Object.keys(config.rates ?? {})) {
    if (!net.connections.some((c) => c.label === key)) fail("unknown_name", `rule.rates["${key}"]`, `a connection label (${net.connections.map((c) => c.label).join(", ")})`, key);
  }
}

/**
 * `out (n×m) = alpha · postᵀ pre + beta · out` over a batch of B patterns (row-major, post B×n, pre B×m):
 * a matrix product, or for one pattern an outer-product accumulate (cheaper than a product with k = 1).
 */
export function outerSum(k: KernelBackend, out: FloatArray, alpha: number, post: FloatArray, pre: FloatArray, batch: number, n: number, m: number, beta: 0 | 1): void {
  if (batch === 1) {
    if (beta === 0) k.fill(out, 0, n * m);
    k.ger(out, post, pre, n, m, alpha);
  } else k.gemm(out, post, pre, n, m, batch, true, false, alpha, beta);
}

/**
 * Fraction of a contrastive update's entries that are active (receiving unit with a non-zero phase
 * difference and sending unit with a non-zero activity, in some pattern of the batch) at or above which the
 * dense product runs, per backend; below it, only the active entries are computed ({@link sparseOuterSum}).
 * Measured with `npm run bench -- update` (docs/guide/speed.md): besides its product the sparse update
 * scans, gathers and scatters in JavaScript, which the plain loops of the TypeScript kernels repay below
 * about 60–75 % active entries, and the WebAssembly products below about 60–75 % when only rows are silent
 * (whole rows move by contiguous copies) but only below about 20–40 % when sending units are silent
 * (entries move one by one).
 * @category Rules
 */
export const SPARSE_UPDATE_CROSSOVER = { typescript: 0.6, wasm: 0.2, wasmRows: 0.6 } as const;

/** Crossovers per backend family: TypeScript; WebAssembly with silent sending units; WebAssembly with only silent rows. */
type Crossovers = { typescript: number; wasm: number; wasmRows: number };
/** The crossover the rules use (benchmarks set 0 to time the dense update alone); not part of the public API. */
let crossoverInUse: Crossovers = { ...SPARSE_UPDATE_CROSSOVER };
/** Sets the crossover the rules use (benchmarks only); returns the previous one. */
export function setSparseUpdateCrossover(c: Crossovers): Crossovers {
  const before = crossoverInUse;
  crossoverInUse = { ...c };
  return before;
}

/** Per change array (weights or a change matrix): the index lists and compacted working arrays of the sparse update. */
const sparseWork = new WeakMap<FloatArray, { rows: Int32Array; cols: Int32Array; diffT: FloatArray; preC: FloatArray; block: FloatArray }>();

/**
 * `out (n×m) = alpha · diffᵀ pre + beta · out` (diff B×n, pre B×m), computing only the entries whose row
 * (receiving unit) has a non-zero difference and whose column (sending unit) a non-zero activity in some
 * pattern, when they are fewer than `crossover` of all: the active rows' differences are gathered into an
 * r×B block, the active columns of `pre` into a B×c block and the active entries of `out` into an r×c
 * block; the product is taken on the blocks with the same kernel (`gemm`, op(A) r×B) and the entries are
 * scattered back. A skipped entry's dense value would be `beta · out + alpha · Σ (±0)`, i.e. `out`
 * unchanged (or +0 for beta 0) as long as `diff` and `pre` are finite (a weight of −0 among them stays
 * −0, where the dense sum makes it +0). Every active entry is the same sum over the batch: bit for bit
 * the dense result on the TypeScript kernels; the WebAssembly `gemm` chooses its code path by shape
 * (small products scale the sum by alpha, packed ones each term), so there an entry may differ from the
 * dense one within the rounding of two orders of the same sum, 2·γ_{B+2}·(|out| + |alpha|·Σ_b |diff·pre|)
 * (Higham 2002, Accuracy and Stability of Numerical Algorithms, §3.1; property-tested).
 * Returns false (and does nothing) when the dense product should run.
 */
export function sparseOuterSum(k: KernelBackend, out: FloatArray, alpha: number, diff: FloatArray, pre: FloatArray, batch: number, n: number, m: number, beta: 0 | 1, crossover?: number): boolean {
  if (batch === 1) return false;
  const dtype = out instanceof Float32Array ? "float32" : "float64";
  let work = sparseWork.get(out);
  if (work === undefined || work.rows.length < n || work.cols.length < m) {
    // index lists first; the compacted arrays are allocated only when the sparse path runs
    const none = k.allocate(dtype, 0);
    work = { rows: new Int32Array(n), cols: new Int32Array(m), diffT: none, preC: none, block: none };
    sparseWork.set(out, work);
  }
  const { rows, cols } = work;
  let r = 0;
  for (let i = 0; i < n; i++) {
    for (let b = 0; b < batch; b++) {
      if ((diff[b * n + i] as number) !== 0) {
        rows[r++] = i;
        break;
      }
    }
  }
  let c = 0;
  for (let j = 0; j < m; j++) {
    for (let b = 0; b < batch; b++) {
      if ((pre[b * m + j] as number) !== 0) {
        cols[c++] = j;
        break;
      }
    }
  }
  // whole rows move with contiguous copies when every column is active: that path pays off at higher densities
  const limit = crossover ?? (k.name === "typescript" ? crossoverInUse.typescript : c === m ? crossoverInUse.wasmRows : crossoverInUse.wasm);
  if (r * c >= limit * n * m) return false;
  if (work.diffT.length < r * batch) work.diffT = k.allocate(dtype, n * batch);
  if (work.preC.length < batch * c) work.preC = k.allocate(dtype, batch * m);
  if (work.block.length < r * c) work.block = k.allocate(dtype, n * m);
  const { diffT, preC, block } = work;
  for (let q = 0; q < r; q++) {
    const i = rows[q] as number;
    for (let b = 0; b < batch; b++) diffT[q * batch + b] = diff[b * n + i] as number;
  }
  // every column active: whole rows move (contiguous copies) and pre is used as it is
  const allCols = c === m;
  if (!allCols) for (let b = 0; b < batch; b++) for (let p = 0; p < c; p++) preC[b * c + p] = pre[b * m + (cols[p] as number)] as number;
  if (beta === 1) {
    for (let q = 0; q < r; q++) {
      const row = (rows[q] as number) * m;
      if (allCols) block.set(out.subarray(row, row + m), q * m);
      else for (let p = 0; p < c; p++) block[q * c + p] = out[row + (cols[p] as number)] as number;
    }
  }
  if (r > 0 && c > 0) k.gemm(block, diffT, allCols ? pre : preC, r, c, batch, false, false, alpha, beta);
  if (beta === 0) k.fill(out, 0, n * m);
  for (let q = 0; q < r; q++) {
    const row = (rows[q] as number) * m;
    if (allCols) out.set(block.subarray(q * m, q * m + m), row);
    else for (let p = 0; p < c; p++) out[row + (cols[p] as number)] = block[q * c + p] as number;
  }
  return true;
}

/**
 * `out (n×m) = alpha · (postAᵀ preA − postBᵀ preB)` over a batch of B patterns:
 * the clamped-minus-free coactivity of a connection. When the sending layer is clamped in both
 * phases (`samePre`: preA and preB hold the same values), it is computed as one product
 * `alpha · (postA − postB)ᵀ pre`, using `scratch` (B×n, for example the settler's phase scratch) for the difference.
 */
export function contrast(k: KernelBackend, out: FloatArray, alpha: number, postA: FloatArray, preA: FloatArray, postB: FloatArray, preB: FloatArray, batch: number, n: number, m: number, samePre = false, scratch?: FloatArray): void {
  if (samePre && scratch !== undefined) {
    k.sub(scratch, postA, postB, batch * n);
    // activity-sparse: rows whose phase difference is exactly zero are skipped (same bits)
    if (!sparseOuterSum(k, out, alpha, scratch, preA, batch, n, m, 0)) outerSum(k, out, alpha, scratch, preA, batch, n, m, 0);
    return;
  }
  outerSum(k, out, alpha, postA, preA, batch, n, m, 0);
  outerSum(k, out, -alpha, postB, preB, batch, n, m, 1);
}

/** `out[j] = alpha · Σ_b (a[b,j] − b[b,j])` (bias changes). */
export function contrastBias(out: FloatArray, alpha: number, a: FloatArray, b: FloatArray, batch: number, n: number): void {
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let p = 0; p < batch; p++) s += (a[p * n + j] as number) - (b[p * n + j] as number);
    out[j] = alpha * s;
  }
}

/** A settler that keeps the snapshots it settled since its last free phase (a rule's phases of one batch). */
class RecordingSettler extends Settler {
  readonly log: Snapshot[] = [];
  override settle(options: PhaseOptions, out?: Snapshot): Snapshot {
    const snap = super.settle(options, out);
    if (options.phase === "free") this.log.length = 0;
    this.log.push(snap);
    return snap;
  }
}

/** Shared machinery of rules that settle phases: one Settler and snapshots per batch size. */
export abstract class SettlingRule implements LearningRule {
  abstract readonly phases: readonly string[];
  readonly config: RuleConfigBase;
  readonly net: Network;
  lastFree: Snapshot | null = null;
  freeStart: Snapshot | null = null;
  private readonly settlers = new Map<number, { settler: RecordingSettler; snaps: Snapshot[] }>();
  /** The settler that settled last (its log holds the last batch's phases). */
  private lastSettler: RecordingSettler | null = null;
  private stepDelta: ParameterDelta | null = null;

  constructor(net: Network, config: RuleConfigBase) {
    this.net = net;
    this.config = config;
    checkRates(net, config);
  }

  /** The settler and `count` reusable snapshots for a batch size. */
  protected workspace(batch: number, count: number): { settler: Settler; snaps: Snapshot[] } {
    let ws = this.settlers.get(batch);
    if (ws === undefined) {
      ws = { settler: new RecordingSettler(this.net, batch), snaps: [] };
      this.settlers.set(batch, ws);
    }
    this.lastSettler = ws.settler;
    // the phases of one batch share the input layers' arrays (same inputs in every phase)
    while (ws.snaps.length < count) ws.snaps.push(new Snapshot(this.net, batch, ws.snaps[0]));
    return ws;
  }

  abstract computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta;

  /** The phases settled for the last batch, free first (see {@link LearningRule.lastPhases}). */
  get lastPhases(): readonly Snapshot[] {
    return this.lastSettler?.log ?? [];
  }

  /** The settler's working array of `layer` for batch size B (free between phases) for phase differences. */
  protected phaseScratch(batch: number, layer: number): FloatArray {
    return this.workspace(batch, 1).settler.phaseScratch(layer);
  }

  /** The start of the next free phase: {@link LearningRule.freeStart} when its batch size matches. */
  protected startFor(batch: number): Snapshot | undefined {
    return this.freeStart !== null && this.freeStart.batch === batch ? this.freeStart : undefined;
  }

  saveState(): RuleState {
    return {};
  }

  loadState(_state: RuleState): void {
    // stateless by default
  }

  step(batch: BatchInput, scale = 1): void {
    this.stepDelta ??= new ParameterDelta(this.net);
    computeAndApply(this, this.stepDelta, batch, scale);
  }
}

/** The plain step of a rule: its change for `batch` into `out`, times `scale`, applied under the constraints. */
export function computeAndApply(rule: LearningRule, out: ParameterDelta, batch: BatchInput, scale: number): void {
  rule.computeDelta(flatBatch(rule.net, batch), out);
  if (scale !== 1) out.scale(scale);
  applyDelta(rule.net, out);
}

/** One connection's change `alpha · (postAᵀ preA − postBᵀ preB)` (B patterns), as data. */
export interface ContrastTerm {
  readonly connection: Connection;
  readonly alpha: number;
  readonly postA: FloatArray;
  readonly preA: FloatArray;
  readonly postB: FloatArray;
  readonly preB: FloatArray;
  /** The sending layer is clamped in both phases (preA and preB hold the same values). */
  readonly samePre: boolean;
}

/**
 * Adds contrast terms straight into the weights, with no change matrix, when that is provably safe: no
 * term's connection has a sign or bound constraint or a pattern other than a plain full one, and every changed weight stays finite (checked
 * from bounds in O(B·(n + m)) plus one pass over each weight matrix: |Δw| ≤ |α|·B·(max|y_A|·max|x_A| +
 * max|y_B|·max|x_B|)). Returns false, changing nothing, when it cannot prove that; the caller then takes
 * the change-matrix path, which reports a non-finite update exactly.
 */
export function addContrastInPlace(net: Network, terms: readonly ContrastTerm[], batch: number, scratchFor: (layer: number) => FloatArray): boolean {
  const K = net.kernels;
  const largest = net.dtype === "float32" ? 3.4028234663852886e38 : Number.MAX_VALUE;
  for (const t of terms) {
    const c = t.connection;
    if (c.spec.sign !== "any" || c.spec.bounds !== "none" || !c.pattern.plain) return false;
    const bound = Math.abs(t.alpha) * batch * (K.maxAbs(t.postA) * K.maxAbs(t.preA) + K.maxAbs(t.postB) * K.maxAbs(t.preB));
    if (!Number.isFinite(bound) || !(K.maxAbs(c.weights) + bound < largest)) return false;
  }
  for (const t of terms) {
    const c = t.connection;
    const n = net.layers[c.to]!.size;
    const m = net.layers[c.from]!.size;
    if (t.samePre) {
      const scratch = scratchFor(c.to);
      K.sub(scratch, t.postA, t.postB, batch * n);
      if (!sparseOuterSum(K, c.weights, t.alpha, scratch, t.preA, batch, n, m, 1)) outerSum(K, c.weights, t.alpha, scratch, t.preA, batch, n, m, 1);
    } else {
      outerSum(K, c.weights, t.alpha, t.postA, t.preA, batch, n, m, 1);
      outerSum(K, c.weights, -t.alpha, t.postB, t.preB, batch, n, m, 1);
    }
  }
  return true;
}
