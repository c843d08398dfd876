/**
 * The settling engine: batch-major rate or energy dynamics with free,
 * clamped and nudged phases, a stop rule and a divergence check. All buffers
 * are allocated once per {@link Settler}; a settling step allocates nothing.
 * @module
 */
import { EbbflowError, describeValue, fail, issueText, requireFinite, requireInteger, requirePositive, type Issue } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import { fillUnit, unitKernelArgs } from "../kernels/units.js";
import { typescriptSparseKernels } from "../kernels/sparse.js";
import { refreshConvolutionForms, refreshSparseForms } from "./storage.js";
import { convolve, convolveTransposed, fieldRowsLength } from "../kernels/convolution.js";
import type { Network } from "./network.js";
import { flatLayerValues, sizesByName, type LayerInputs } from "../interop/ndarray.js";
import { clippedLayers } from "./clip.js";
import { refuseUnknownOptions } from "../errors/options.js";

/** The keys of {@link PhaseOptions} (others are refused). */
const PHASE_OPTIONS = ["phase", "inputs", "targets", "observed", "beta", "cost", "start", "maxSteps", "tolerance", "record", "requireConvergence", "onStep", "reuseDrive"];
import { batchLoss, batchLossGradient, DEFAULT_OBJECTIVE, requireObjective, targetRowObserved, type Objective } from "../train/loss.js";
import { requireStateMemory } from "./checks.js";
import { ActiveDrive } from "./active-drive.js";

/** The three phases: free (the prediction: only inputs clamped), clamped and nudged (target-driven states: outputs clamped to, or pulled toward, the targets). @category Settling */
export type Phase = "free" | "clamped" | "nudged";

/** Per-layer values for a batch: layer name → B×N flat array (row = pattern). @category Settling */
export type LayerValues = Readonly<Record<string, ArrayLike<number>>>;

/**
 * Which output layers' targets are observed in a phase, per layer name: `true` (every pattern: the
 * default for a layer not named), `false` (no pattern: the layer is free in the clamped phase and feels no
 * nudging; its targets may then be left out), or one entry per pattern of the batch, non-zero (or `true`)
 * for observed. A target row of NaN (every value of the layer for that pattern) is not observed either,
 * whatever the mask says: the mask's convenient form. A row mixing NaN and numbers is refused.
 * @category Settling
 */
export type ObservedTargets = Readonly<Record<string, boolean | ArrayLike<number | boolean>>>;

/** Options of one phase. @category Settling */
export interface PhaseOptions {
  /** Which phase to settle. */
  readonly phase: Phase;
  /** Values of every input layer, B×N each (flat row-major, or `ndarray`-like of shape [B, N]: read without a copy when contiguous). */
  readonly inputs: LayerInputs;
  /**
   * Targets of every output layer (clamped and nudged phases), as `inputs`. A pattern's row of NaN marks
   * the layer's targets for that pattern as not observed (see {@link ObservedTargets}).
   */
  readonly targets?: LayerInputs | undefined;
  /**
   * Which output layers are clamped (clamped phase) or nudged (nudged phase), per layer and pattern
   * (default: all). An output unobserved for a pattern settles freely in that pattern, like a hidden unit,
   * and adds no nudging cost.
   */
  readonly observed?: ObservedTargets | undefined;
  /** Nudging strength (nudged phase; may be negative, not 0). */
  readonly beta?: number | undefined;
  /**
   * The cost the nudged phase adds, β times it (default: the squared error ½‖u − t‖² on the output
   * state, or on the output activity under rate dynamics). The nudging force on an output unit is
   * `−β · factor · ∂L/∂v` (times ρ'(u) for a cost on the rate under energy dynamics); see {@link Objective}.
   */
  readonly cost?: Objective | undefined;
  /** Start from this state (for example the free fixed point); default: rest (zero). */
  readonly start?: Snapshot | undefined;
  /** Override of the network's maximum number of steps. */
  readonly maxSteps?: number | undefined;
  /** Override of the network's tolerance on the largest state change. */
  readonly tolerance?: number | undefined;
  /** Keep a copy of every layer's activity after every step (for plotting). */
  readonly record?: boolean | undefined;
  /** Throw `divergence` if the stop rule ends on maxSteps without converging (default false: the snapshot says `converged: false`). */
  readonly requireConvergence?: boolean | undefined;
  /** Called after every step with the snapshot being settled (for traces updated during settling). */
  readonly onStep?: ((snapshot: Snapshot, step: number) => void) | undefined;
  /**
   * Reuse the drive (bias plus input from clamped layers) this settler computed in its previous phase:
   * a promise by the caller that no parameter has changed since that phase. The settler reuses it only
   * when it can also see that the rest holds: the same batch, the same `inputs` object (and the same
   * `targets` object when outputs were clamped before; their arrays must still hold the same values),
   * and every layer clamped then is clamped now; it
   * then adds only the input from layers clamped now but free then. Otherwise it computes the drive
   * afresh. Rules pass it for the second and later phases of one training step, where the input drive
   * is the same (Equilibrium Propagation's nudged phases need no new products with the input weights).
   * When the snapshot shares its input arrays with the previous phase's (`new Snapshot(net, B, other)`),
   * the inputs are not copied again either: they are converted once per batch.
   */
  readonly reuseDrive?: boolean | undefined;
}

/**
 * The result of a phase: every layer's activity (and, for energy dynamics,
 * its state), batch-major, with how settling ended.
 * @category Settling
 */
export class Snapshot {
  /** Number of patterns. */
  readonly batch: number;
  /** Activity per layer, B×N (row = pattern). */
  readonly activity: FloatArray[];
  /** Dynamical state per layer (equals activity for rate dynamics; u with activity ρ(u) for energy dynamics). */
  readonly state: FloatArray[];
  /** Steps taken. */
  steps = 0;
  /** True if the largest state change fell below the tolerance. */
  converged = false;
  /** Largest state change in the last step. */
  lastChange = Number.POSITIVE_INFINITY;
  /** The phase that produced it. */
  phase: Phase = "free";
  /** Per-step activities if recording was asked for: `record[step][layer]`. */
  record: FloatArray[][] | null = null;
  /**
   * Adaptation variable per layer, B×N for a layer with `adaptation` (empty otherwise): the stateful
   * units' state, carried from `start` like the layer state (0 at rest).
   */
  readonly adaptation: FloatArray[];
  /**
   * Available synaptic resources per connection, B×|from| for a connection with `depression` (empty
   * otherwise), in [0, 1]: the effective weight of sending unit j is `W[:, j]·R[j]` (1 at rest).
   */
  readonly resources: FloatArray[];
  /** Per layer, the last step's largest change in the stop rule's scale (state change times the layer's tau). */
  readonly layerChange: Float64Array;

  /**
   * Allocates a zeroed snapshot for `net` and `batch` patterns. With `shareInputsWith`, the input layers'
   * arrays are those of another snapshot (the phases of one batch see the same inputs), saving memory.
   * `memory: "heap"` makes ordinary typed arrays, given back by the garbage collector, instead of the
   * kernels' memory (on the WebAssembly backends an arena that is never given back, where the kernels
   * read and write without copies).
   */
  constructor(net: Network, batch: number, shareInputsWith?: Snapshot, memory: "kernels" | "heap" = "kernels") {
    this.batch = batch;
    const allocate = memory === "heap" ? (n: number): FloatArray => (net.dtype === "float32" ? new Float32Array(n) : new Float64Array(n)) : (n: number): FloatArray => net.allocate(n);
    const inputOf = (l: { index: number; role: string }, which: "activity" | "state"): FloatArray | null =>
      shareInputsWith !== undefined && l.role === "input" && shareInputsWith.batch === batch ? (shareInputsWith[which][l.index] as FloatArray) : null;
    this.activity = net.layers.map((l) => inputOf(l, "activity") ?? allocate(batch * l.size));
    this.state = net.spec.dynamics.kind === "energy" ? net.layers.map((l) => inputOf(l, "state") ?? allocate(batch * l.size)) : this.activity;
    this.adaptation = net.layers.map((l) => allocate(l.spec.adaptation !== undefined ? batch * l.size : 0));
    this.resources = net.connections.map((c) => {
      const r = allocate(c.spec.depression !== undefined ? batch * (net.layers[c.from]?.size ?? 0) : 0);
      r.fill(1);
      return r;
    });
    this.layerChange = new Float64Array(net.layers.length);
  }

  /** Puts the stateful units at rest: adaptation 0, synaptic resources 1. */
  restUnits(): this {
    for (const a of this.adaptation) a.fill(0);
    for (const r of this.resources) r.fill(1);
    return this;
  }

  /** Copies the stateful units' state (adaptation, resources) from `other` (same network and batch). */
  copyUnitsFrom(other: Snapshot): this {
    if (other === this) return this;
    for (let i = 0; i < this.adaptation.length; i++) (this.adaptation[i] as FloatArray).set(other.adaptation[i] as FloatArray);
    for (let i = 0; i < this.resources.length; i++) (this.resources[i] as FloatArray).set(other.resources[i] as FloatArray);
    return this;
  }

  /** Activity of one pattern of one layer, as a copy. */
  patternActivity(layer: number, pattern: number): number[] {
    const a = this.activity[layer] as FloatArray;
    const n = a.length / this.batch;
    return Array.from(a.subarray(pattern * n, (pattern + 1) * n));
  }

  /** Copies all values from `other` (same network shape and batch). */
  copyFrom(other: Snapshot): this {
    for (let i = 0; i < this.activity.length; i++) (this.activity[i] as FloatArray).set(other.activity[i] as FloatArray);
    if (this.state !== this.activity) for (let i = 0; i < this.state.length; i++) (this.state[i] as FloatArray).set(other.state[i] as FloatArray);
    this.copyUnitsFrom(other);
    this.layerChange.set(other.layerChange);
    this.steps = other.steps;
    this.converged = other.converged;
    this.lastChange = other.lastChange;
    this.phase = other.phase;
    return this;
  }
}

/**
 * The snapshot of batch size `B` kept in `cache` (made on first use): one per size, reused from call to call,
 * since on the WebAssembly backends a snapshot's memory is never given back. @internal
 */
export function keptSnapshot(cache: Map<number, Snapshot>, net: Network, B: number): Snapshot {
  let s = cache.get(B);
  if (s === undefined) cache.set(B, (s = new Snapshot(net, B)));
  return s;
}

/**
 * `dest.set(src)` for typed arrays: an element loop when the element types differ (the same rounding to
 * the storage type; on a shared WebAssembly memory several times faster than the converting `set`).
 */
function copyConverted(dest: FloatArray, src: ArrayLike<number> & ArrayBufferView): void {
  if (src.constructor === dest.constructor) {
    dest.set(src);
    return;
  }
  const n = src.length;
  for (let i = 0; i < n; i++) dest[i] = src[i] as number;
}

/** k-th largest (k >= 1) of a[0..n) via quickselect on a scratch copy; reorders `scratch`. */
function kthLargest(scratch: FloatArray, n: number, k: number): number {
  let lo = 0;
  let hi = n - 1;
  const target = k - 1;
  while (lo < hi) {
    const pivot = scratch[(lo + hi) >> 1] as number;
    let i = lo;
    let j = hi;
    while (i <= j) {
      while ((scratch[i] as number) > pivot) i++;
      while ((scratch[j] as number) < pivot) j--;
      if (i <= j) {
        const t = scratch[i] as number;
        scratch[i] = scratch[j] as number;
        scratch[j] = t;
        i++;
        j--;
      }
    }
    if (target <= j) hi = j;
    else if (target >= i) lo = i;
    else break;
  }
  return scratch[target] as number;
}

/**
 * Settles one network on batches of a fixed size. Holds every buffer a
 * phase needs, so repeated phases allocate nothing but their snapshots.
 * @category Settling
 * @example
 * ```ts
 * const settler = new Settler(net, 4);
 * const free = settler.settle({ phase: "free", inputs: { in: xs } });
 * const clamped = settler.settle({ phase: "clamped", inputs: { in: xs }, targets: { out: ts } });
 * ```
 */
export class Settler {
  readonly net: Network;
  readonly batch: number;
  /** The snapshot phases settle in when `settle` is called without `out` on a WebAssembly backend. */
  private kept: Snapshot | null = null;
  private readonly drive: FloatArray[];
  private readonly netInput: FloatArray[];
  private readonly next: FloatArray[];
  private readonly scratch: FloatArray;
  private readonly clamped: boolean[];
  private readonly targetBuf: FloatArray[];
  /** Per layer: clip its state to the unit's range (see clippedLayers). */
  private readonly clip: boolean[];
  /** Nudging force per output layer (B×N), for costs other than the default. */
  private readonly force: FloatArray[];
  /** What the drive arrays were last computed from (null before the first phase or after a failed one). */
  private driveFrom: { inputs: LayerInputs; targets: LayerInputs | undefined; clamped: boolean[] } | null = null;
  /** Layers clamped in this phase and free in the previous one (used when the drive is reused). */
  private readonly newlyClamped: boolean[];
  /** Per layer: the unit as the fused rate step takes it, or null for units it does not know. */
  private readonly fusedUnit: ReturnType<typeof unitKernelArgs>[];
  /** Size of each layer by name (to read ndarray-like values of shape [batch, size]). */
  private readonly layerSizes: ReadonlyMap<string, number>;
  /** Per connection: the im2col work array of a convolution connection, else null. */
  private readonly fieldRows: (FloatArray | null)[];
  /** Per output layer and pattern: 1 when the pattern's targets of the layer are observed in this phase. */
  private readonly rows: Uint8Array[];
  /** Per layer in this phase: 0 no pattern observed, 1 every pattern, 2 some (partial clamping or nudging). */
  private readonly coverage: Int8Array;
  /** Per layer: its time constant (1 unless declared); its step is dt / tau. */
  private readonly tau: Float64Array;
  /** Per connection with depression: the sending activity times the resources (B×|from|), recomputed every step. */
  private readonly effectivePre: FloatArray[];
  /** Any stateful unit (adaptation or depression) in the network? */
  private readonly stateful: boolean;
  /** The resources of the snapshot being settled (read by accumulate). */
  private currentResources: FloatArray[] | null = null;
  /** The products through dense weight matrices that skip sending units at zero (active-drive.ts). */
  private readonly activeDrive: ActiveDrive;
  /** The activity arrays the inputs were loaded into by the last phase that completed its setup (null: none). */
  private inputsLoadedInto: readonly FloatArray[] | null = null;

  constructor(net: Network, batch: number) {
    requireInteger("batch", batch, 1);
    requireStateMemory(net.spec, batch);
    this.net = net;
    this.batch = batch;
    // input layers are always clamped: they need no working buffers; only output layers take targets
    const alloc = (keep: (role: string) => boolean) => net.layers.map((l) => net.allocate(keep(l.role) ? batch * l.size : 0));
    const free = (role: string) => role !== "input";
    this.drive = alloc(free);
    // rate dynamics form the net input in the buffer they update; energy dynamics need both at once
    this.netInput = alloc((role) => free(role) && net.spec.dynamics.kind === "energy");
    this.next = alloc(free);
    this.targetBuf = alloc((role) => role === "output");
    this.force = alloc((role) => role === "output");
    this.clip = clippedLayers(net);
    this.scratch = net.allocate(Math.max(...net.layers.map((l) => l.size)));
    this.clamped = net.layers.map(() => false);
    this.newlyClamped = net.layers.map(() => false);
    this.fusedUnit = net.layers.map((l) => unitKernelArgs(l.unit));
    this.layerSizes = sizesByName(net);
    // im2col work arrays of the convolution connections (one per connection: their sizes differ)
    this.fieldRows = net.connections.map((c) => (c.convolution ? net.allocate(fieldRowsLength(c.convolution.geometry, batch)) : null));
    this.rows = net.layers.map((l) => new Uint8Array(l.role === "output" ? batch : 0));
    this.coverage = new Int8Array(net.layers.length);
    this.tau = Float64Array.from(net.layers, (l) => l.spec.tau ?? 1);
    this.effectivePre = net.connections.map((c) => net.allocate(c.spec.depression !== undefined ? batch * (net.layers[c.from]?.size ?? 0) : 0));
    this.stateful = net.layers.some((l) => l.spec.adaptation !== undefined) || net.connections.some((c) => c.spec.depression !== undefined);
    this.activeDrive = new ActiveDrive(net, batch);
  }

  /**
   * A B×N working array of a free layer, free for the caller's use between phases (the next phase
   * overwrites it): rules take phase differences in it instead of allocating their own.
   */
  phaseScratch(layer: number): FloatArray {
    const a = this.next[layer] as FloatArray;
    if (a.length === 0) fail("invalid_parameter", "layer", "a hidden or output layer (input layers have no working array)", layer);
    return a;
  }

  /** Checks and copies per-layer values (inputs or targets) into `dest`; reports every problem at once. */
  private loadValues(given: LayerInputs | undefined, role: "input" | "output", what: "inputs" | "targets", dest: FloatArray[], observed?: ObservedTargets): Issue[] {
    if (given === undefined || given === null || typeof given !== "object") {
      return [issueText("shape_mismatch", what, `an object mapping each ${role} layer name to ${this.batch}×size values`, describeValue(given))];
    }
    // ndarray-like entries as flat row-major values (a view when contiguous)
    const flat = flatLayerValues(given, this.layerSizes, this.batch, what);
    const problems: Issue[] = flat.issues.slice();
    const values = flat.values;
    for (const layer of this.net.layers) {
      if (layer.role !== role || flat.failed.has(layer.name)) continue;
      const v = values[layer.name];
      const want = this.batch * layer.size;
      if (v === undefined && observed?.[layer.name] === false) {
        // a layer observed in no pattern needs no targets
        (dest[layer.index] as FloatArray).fill(Number.NaN);
        continue;
      }
      if (v === undefined) {
        problems.push(issueText("shape_mismatch", `${what}.${layer.name}`, `${want} values (batch ${this.batch} × size ${layer.size})`, "missing"));
        continue;
      }
      if (v === null || typeof v !== "object") {
        problems.push(issueText("shape_mismatch", `${what}.${layer.name}`, `${want} values (batch ${this.batch} × size ${layer.size})`, describeValue(v)));
        continue;
      }
      if (v.length !== want) {
        problems.push(issueText("shape_mismatch", `${what}.${layer.name}`, `${want} values (batch ${this.batch} × size ${layer.size})`, `${v.length} values`));
        continue;
      }
      const d = dest[layer.index] as FloatArray;
      if (ArrayBuffer.isView(v) && !(v instanceof DataView) && !(v instanceof BigInt64Array) && !(v instanceof BigUint64Array)) {
        // typed arrays: one conversion copy, then one pass for finiteness (also catches values that
        // overflow a float32 network's storage); the slow loop below only names the first bad value
        copyConverted(d, v as unknown as ArrayLike<number> & ArrayBufferView);
        if (Number.isFinite(this.net.kernels.maxAbs(d, want))) continue;
      }
      for (let i = 0; i < want; i++) {
        const x = v[i] as number;
        if (observed !== undefined && typeof x === "number" && Number.isNaN(x)) {
          // a target row of NaN: not observed (rows are checked whole in observedRows)
          d[i] = x;
          continue;
        }
        if (typeof x !== "number" || !Number.isFinite(x)) {
          problems.push(issueText("shape_mismatch", `${what}.${layer.name}[${i}]`, "a finite number", describeValue(x), `pattern ${Math.floor(i / layer.size)}, unit ${i % layer.size}`));
          break;
        }
        d[i] = x;
        if (!Number.isFinite(d[i] as number)) {
          problems.push(issueText("shape_mismatch", `${what}.${layer.name}[${i}]`, `a number within the range of ${this.net.dtype}`, describeValue(x), `pattern ${Math.floor(i / layer.size)}, unit ${i % layer.size}`));
          break;
        }
      }
    }
    for (const name of Object.keys(values)) {
      const l = this.net.layers.find((x) => x.name === name);
      if (l === undefined || l.role !== role) problems.push(issueText("unknown_name", `${what}.${name}`, `an ${role} layer name`, JSON.stringify(name)));
    }
    return problems;
  }

  /** Reads which patterns of each output layer are observed (NaN rows, the `observed` mask) into rows/coverage. */
  private observedRows(observed: ObservedTargets | undefined): Issue[] {
    const problems: Issue[] = [];
    if (observed !== undefined && (observed === null || typeof observed !== "object")) {
      return [issueText("invalid_parameter", "observed", "an object mapping output layer names to true, false or one flag per pattern", describeValue(observed))];
    }
    for (const name of Object.keys(observed ?? {})) {
      const l = this.net.layers.find((x) => x.name === name);
      if (l === undefined || l.role !== "output") problems.push(issueText("unknown_name", `observed.${name}`, "an output layer name", JSON.stringify(name)));
    }
    for (const l of this.net.layers) {
      if (l.role !== "output") continue;
      const rows = this.rows[l.index] as Uint8Array;
      const t = this.targetBuf[l.index] as FloatArray;
      const mask: unknown = observed?.[l.name];
      const perPattern = mask !== undefined && typeof mask !== "boolean";
      if (perPattern) {
        const m = mask as ArrayLike<unknown>;
        if (m === null || typeof m !== "object" || m.length !== this.batch) {
          problems.push(issueText("shape_mismatch", `observed.${l.name}`, `true, false or ${this.batch} flags (one per pattern)`, describeValue(mask)));
          continue;
        }
      }
      let count = 0;
      for (let p = 0; p < this.batch; p++) {
        let on: boolean;
        const f: unknown = perPattern ? (mask as ArrayLike<unknown>)[p] : mask;
        if (perPattern && typeof f !== "number" && typeof f !== "boolean") {
          problems.push(issueText("invalid_parameter", `observed.${l.name}[${p}]`, "a flag: true/false or a number (non-zero: observed)", describeValue(f)));
          on = false;
        } else if (f === false || (perPattern && !f)) on = false; // masked off: its values are not read
        else {
          try {
            on = targetRowObserved(t, p * l.size, l.size, `targets.${l.name}`);
          } catch (e) {
            if (!(e instanceof EbbflowError)) throw e;
            problems.push(...e.issues);
            on = false;
          }
        }
        if (!on) t.fill(Number.NaN, p * l.size, (p + 1) * l.size);
        rows[p] = on ? 1 : 0;
        if (on) count++;
      }
      this.coverage[l.index] = count === 0 ? 0 : count === this.batch ? 1 : 2;
    }
    return problems;
  }

  /** Holds the observed patterns' rows of a partly clamped layer at their targets. */
  private holdObserved(i: number, values: FloatArray): void {
    const n = this.net.layers[i]!.size;
    const rows = this.rows[i] as Uint8Array;
    const t = this.targetBuf[i] as FloatArray;
    for (let p = 0; p < this.batch; p++) if (rows[p] === 1) values.set(t.subarray(p * n, (p + 1) * n), p * n);
  }

  /**
   * Settles one phase and returns its snapshot (written into `out` if given). Without `out` each call returns
   * a new snapshot: on the TypeScript kernels it is settled in place; on the WebAssembly backends, whose
   * arena is never given back, the phase is settled in one snapshot the settler keeps and the result is
   * returned as a copy in ordinary memory (so a loop without `out` does not grow the arena; `onStep` then
   * sees the kept snapshot, valid during the call). Passing `out` (a snapshot of this network and batch,
   * reused from call to call) settles in place without that copy.
   * @throws {@link EbbflowError} `shape_mismatch` for wrong input or target lengths,
   *   `invalid_parameter` for a bad beta, `divergence` when a layer's state becomes
   *   non-finite or exceeds the bound (naming the layer and the step).
   */
  settle(options: PhaseOptions, out?: Snapshot): Snapshot {
    const { net, batch } = this;
    const dyn = net.spec.dynamics;
    if (options === null || typeof options !== "object") fail("invalid_parameter", "options", "phase options: { phase, inputs, targets? }", options);
    refuseUnknownOptions(options, PHASE_OPTIONS);
    const phase = options.phase;
    if (phase !== "free" && phase !== "clamped" && phase !== "nudged") fail("invalid_parameter", "phase", "free, clamped or nudged", phase);
    const maxSteps = options.maxSteps === undefined ? dyn.maxSteps : requireInteger("maxSteps", options.maxSteps, 1);
    const tolerance = options.tolerance === undefined ? dyn.tolerance : requirePositive("tolerance", options.tolerance);
    let beta = 0;
    if (phase === "nudged") {
      beta = requireFinite("beta", options.beta);
      if (beta === 0) fail("invalid_parameter", "beta", "a non-zero nudging strength (use the free phase for beta = 0)", 0);
    }
    // the default cost keeps its own (fused) arithmetic; any other cost goes through the force buffer
    const cost = options.cost === undefined ? null : requireObjective("cost", options.cost);
    const plainCost = cost === null || (cost.loss === "squared-error" && cost.factor === 1 && (cost.on === "state" || dyn.kind === "rate"));
    // without `out` on a backend with its own memory: settle in the kept snapshot, return a copy on the heap
    const detach = out === undefined && net.kernels.name !== "typescript";
    const snap = out ?? (detach ? (this.kept ??= new Snapshot(net, batch)) : new Snapshot(net, batch));
    if (snap.batch !== batch) fail("shape_mismatch", "out", `a snapshot of batch ${batch}`, `batch ${snap.batch}`);
    if (options.start !== undefined && options.start.batch !== batch) fail("shape_mismatch", "start", `a snapshot of batch ${batch}`, `batch ${options.start.batch}`);

    // sparse connections compute from their compressed form: take the weights as they are now
    refreshSparseForms(net.connections);
    refreshConvolutionForms(net.connections);

    // the inputs are converted once per batch: a phase that reuses the drive of the previous one, on the same
    // inputs object and the same input arrays (snapshots sharing their inputs), keeps the values loaded then
    const inputsLoaded =
      options.reuseDrive === true && this.driveFrom !== null && this.driveFrom.inputs === options.inputs && this.inputsLoadedInto !== null && net.layers.every((l) => l.role !== "input" || this.inputsLoadedInto?.[l.index] === snap.activity[l.index]);
    this.inputsLoadedInto = null;
    const problems = inputsLoaded ? [] : this.loadValues(options.inputs, "input", "inputs", snap.activity);
    const observed = options.observed ?? {};
    if (phase !== "free") problems.push(...this.loadValues(options.targets, "output", "targets", this.targetBuf, observed));
    if (phase !== "free" && problems.length === 0) problems.push(...this.observedRows(options.observed));
    if (problems.length > 0) throw new EbbflowError(problems);
    // which layers are held fixed in this phase: inputs, and in the clamped phase the outputs observed in
    // every pattern; an output observed in some patterns is settled as free and held in those (partial clamping)
    for (const l of net.layers) this.clamped[l.index] = l.role === "input" || (phase === "clamped" && l.role === "output" && this.coverage[l.index] === 1);

    // starting state
    const energy = dyn.kind === "energy";
    for (const l of net.layers) {
      const i = l.index;
      const act = snap.activity[i] as FloatArray;
      const st = snap.state[i] as FloatArray;
      if (l.role === "input") {
        if (energy) st.set(act);
        continue;
      }
      if (this.clamped[i]) {
        act.set(this.targetBuf[i] as FloatArray);
        if (energy) st.set(act);
      } else if (options.start !== undefined) {
        // a kernel copy: between two arena views far faster than TypedArray.set on shared memory
        net.kernels.copy(st, options.start.state[i] as FloatArray, st.length);
        if (energy) this.startActivity(i, act, st);
      } else {
        st.fill(0);
        if (energy) this.startActivity(i, act, st);
      }
      if (phase === "clamped" && l.role === "output" && this.coverage[i] === 2) {
        this.holdObserved(i, st);
        if (energy) this.holdObserved(i, act);
      }
    }

    // stateful units start where `start` left them, or at rest
    this.currentResources = snap.resources;
    if (this.stateful) {
      if (options.start !== undefined) snap.copyUnitsFrom(options.start);
      else snap.restUnits();
    }

    // clamp-aware drive: bias plus everything that comes from clamped layers, computed once per phase,
    // or carried over from the previous phase (adding only what newly clamped layers send)
    const prev = this.driveFrom;
    this.driveFrom = null;
    const reuse =
      options.reuseDrive === true &&
      prev !== null &&
      prev.inputs === options.inputs &&
      net.layers.every((l) => !prev.clamped[l.index] || (this.clamped[l.index] && (l.role !== "output" || prev.targets === options.targets)));
    for (const l of net.layers) this.newlyClamped[l.index] = reuse && this.clamped[l.index] === true && prev?.clamped[l.index] !== true;
    this.activeDrive.activitiesChanged();
    for (const l of net.layers) {
      if (this.clamped[l.index]) continue;
      const d = this.drive[l.index] as FloatArray;
      if (reuse) {
        this.accumulate(d, l.index, snap.activity, this.newlyClamped, true);
      } else {
        for (let b = 0; b < batch; b++) d.set(l.bias, b * l.size);
        this.accumulate(d, l.index, snap.activity, this.clamped, true);
      }
    }
    this.driveFrom = { inputs: options.inputs, targets: options.targets, clamped: this.clamped.slice() };
    this.inputsLoadedInto = snap.activity; // a snapshot's array of layers never changes: held, not copied

    snap.layerChange.fill(0);
    snap.record = options.record ? [] : null;
    snap.phase = phase;
    snap.converged = false;
    snap.lastChange = Number.POSITIVE_INFINITY;
    let step = 0;
    const bound = dyn.bound;
    while (step < maxSteps) {
      step++;
      let change = 0;
      // the activities moved at the end of the last step (or were loaded for this phase): earlier listings are stale
      this.activeDrive.activitiesChanged();
      for (const l of net.layers) {
        const i = l.index;
        if (this.clamped[i]) continue;
        const n = l.size;
        const len = batch * n;
        const K = net.kernels;
        const x = snap.state[i] as FloatArray;
        const nx = this.next[i] as FloatArray;
        const eta = energy ? (this.netInput[i] as FloatArray) : nx;
        K.copy(eta, this.drive[i] as FloatArray, len);
        this.accumulate(eta, i, snap.activity, this.clamped, false);
        this.inhibit(eta, i, snap.activity[i] as FloatArray);
        // spike-frequency adaptation subtracts its variable from the net input (Benda & Herz 2003)
        if (l.spec.adaptation !== undefined) K.sub(eta, eta, snap.adaptation[i] as FloatArray, len);
        // the layer's own time constant: its step is dt / tau; changes are scaled back by tau for the stop rule
        const tauL = this.tau[i] as number;
        const dt = dyn.dt / tauL;
        const nudge = phase === "nudged" && l.role === "output" && this.coverage[i] !== 0;
        // partly observed outputs: the clamped phase holds the observed patterns; nudging goes through the
        // force, which is zero for the patterns not observed
        const held = phase === "clamped" && l.role === "output" && this.coverage[i] === 2;
        const masked = nudge && this.coverage[i] === 2;
        const tgt = this.targetBuf[i] as FloatArray;
        // every pass below is a kernel call (WebAssembly SIMD on that backend): x + dt·(f(η) − x), with
        // η formed in the buffer being updated, and x + dt·(ρ'(u)·η − u [+ β(t − u)])
        if (!energy) {
          // rate dynamics: x += dt (f(eta) - x); nudging adds the current beta (t - x) to the net input,
          // so the fixed point is a stationary point of the continuous-Hopfield energy plus beta * cost.
          // One fused kernel pass when the backend has it (same bits as the separate calls below)
          const fu = this.fusedUnit[i];
          if (nudge && (!plainCost || masked)) {
            // eta − β·factor·∂L/∂x: the fixed point is a stationary point of the energy plus β·cost
            const c = cost ?? DEFAULT_OBJECTIVE;
            const f = this.force[i] as FloatArray;
            batchLossGradient(c.loss, x, tgt, batch, n, f);
            K.axpy(nx, f, -beta * c.factor, len);
            fillUnit(K, l.unit, false, nx, nx, len);
            K.sub(nx, nx, x, len);
            K.axpby(nx, x, nx, 1, dt, len);
            const largest = K.maxAbs(nx, len);
            if (!(largest <= bound)) this.diverged(i, largest, bound, phase, step);
            const d = K.maxAbsDiff(nx, x, len) * tauL;
            snap.layerChange[i] = d;
            if (d > change) change = d;
            continue;
          }
          const fused = !held && fu !== null && fu !== undefined && K.rateStep !== undefined ? K.rateStep(fu.kind, fu.gain, fu.offset, x, nx, nudge ? tgt : null, beta, dt, bound, len) : null;
          if (fused !== null) {
            if (fused < 0) this.diverged(l.index, K.maxAbs(nx, len), bound, phase, step);
            const d = fused * tauL;
            snap.layerChange[i] = d;
            if (d > change) change = d;
            continue;
          }
          if (nudge) {
            K.axpy(nx, tgt, beta, len); // eta + beta t
            K.axpy(nx, x, -beta, len); //   - beta x
          }
          fillUnit(K, l.unit, false, nx, nx, len); // f(eta), in place
          K.sub(nx, nx, x, len); // f(eta) - x
          K.axpby(nx, x, nx, 1, dt, len); // x + dt (f(eta) - x)
        } else {
          // energy dynamics: u += dt (rho'(u) eta - u) [+ dt beta (t - u)]  (Scellier & Bengio 2017, Front. Comput. Neurosci. 11:24)
          // a free layer in one fused kernel pass when the backend has it: the same bits as the separate
          // calls below (slope, mul, sub, axpby, the clip, maxAbs, maxAbsDiff)
          const fu = this.fusedUnit[i];
          const clipKernel = this.clip[i] === true;
          if (!nudge && !held && fu !== null && fu !== undefined && K.energyStep !== undefined && (!clipKernel || fu.kind === "hard-sigmoid")) {
            const fused = K.energyStep(fu.kind, fu.gain, fu.offset, clipKernel, x, eta, nx, dt, bound, len);
            if (fused !== null) {
              const d = (fused < 0 ? this.energyCheck(i, nx, x, len, bound, phase, step) : fused) * tauL;
              snap.layerChange[i] = d;
              if (d > change) change = d;
              continue;
            }
          }
          fillUnit(K, l.unit, true, nx, x, len); // rho'(u)
          if (nudge && (!plainCost || masked)) {
            // force = factor · ∂L/∂v, v = u (cost on the state) or ρ(u) (cost on the rate, chain rule: · ρ'(u))
            const c = cost ?? DEFAULT_OBJECTIVE;
            const f = this.force[i] as FloatArray;
            batchLossGradient(c.loss, c.on === "rate" ? (snap.activity[i] as FloatArray) : x, tgt, batch, n, f);
            if (c.on === "rate") K.mul(f, f, nx, len);
          }
          K.mul(nx, nx, eta, len); // rho'(u) eta
          K.sub(nx, nx, x, len); // rho'(u) eta - u
          if (nudge && (!plainCost || masked)) {
            K.axpy(nx, this.force[i] as FloatArray, -beta * (cost ?? DEFAULT_OBJECTIVE).factor, len);
          } else if (nudge) {
            K.sub(eta, tgt, x, len); // eta is free now: t - u
            K.axpy(nx, eta, beta, len);
          }
          K.axpby(nx, x, nx, 1, dt, len);
          if (this.clip[i] && this.fusedUnit[i]?.kind === "hard-sigmoid") {
            // the hard sigmoid is the clip to its range [0, 1] (x < 0 → 0, x > 1 → 1, else x, as the loop
            // below): one unit-kernel pass instead of a loop in JavaScript, the same bits
            fillUnit(K, l.unit, false, nx, nx, len);
          } else if (this.clip[i]) {
            const lo = l.unit.lower;
            const hi = l.unit.upper;
            for (let k = 0; k < len; k++) {
              const v = nx[k] as number;
              nx[k] = v < lo ? lo : v > hi ? hi : v;
            }
          }
        }
        if (held) this.holdObserved(i, nx);
        // one pass: maxAbs is NaN when a NaN is present and Infinity for an infinity, so both fail the test
        const largest = K.maxAbs(nx, len);
        if (!(largest <= bound)) this.diverged(i, largest, bound, phase, step);
        const d = K.maxAbsDiff(nx, x, len) * tauL;
        snap.layerChange[i] = d;
        if (d > change) change = d;
      }
      // the stateful units move from the same step's activities (synchronous Euler step)
      if (this.stateful) {
        const u = this.stepUnits(snap, dyn.dt, bound, phase, step);
        if (u > change) change = u;
      }
      // synchronous update: every layer moved from the previous step's activities
      for (const l of net.layers) {
        const i = l.index;
        if (this.clamped[i]) continue;
        net.kernels.copy(snap.state[i] as FloatArray, this.next[i] as FloatArray);
        if (energy) fillUnit(net.kernels, l.unit, false, snap.activity[i] as FloatArray, snap.state[i] as FloatArray);
        // a held pattern's activity is its target, as for a clamped layer
        if (energy && phase === "clamped" && l.role === "output" && this.coverage[i] === 2) this.holdObserved(i, snap.activity[i] as FloatArray);
      }
      if (snap.record !== null) snap.record.push(snap.activity.map((a) => a.slice()));
      if (options.onStep !== undefined) options.onStep(snap, step);
      snap.lastChange = change;
      if (change < tolerance) {
        snap.converged = true;
        break;
      }
    }
    snap.steps = step;
    if (!snap.converged && options.requireConvergence) {
      throw new EbbflowError(
        issueText("divergence", "dynamics.maxSteps", `settling to converge within ${maxSteps} steps (tolerance ${tolerance})`, `largest change ${snap.lastChange} at the last step`, `phase ${phase}`),
      );
    }
    if (!detach) return snap;
    const copy = new Snapshot(net, batch, undefined, "heap").copyFrom(snap);
    copy.record = snap.record;
    snap.record = null;
    return copy;
  }

  /**
   * One Euler step of the stateful units from the step's activities (before they move): adaptation
   * `a += (dt/τ_a)(g·r − a)` (Benda & Herz 2003, Neural Computation 15:2523) and resources
   * `R += dt·((1 − R)/τ_rec − U·R·r_pre)`, kept in [0, 1] (Tsodyks & Markram 1997, PNAS 94:719).
   * Returns the largest change in the stop rule's scale (times the variable's own time constant).
   */
  private stepUnits(snap: Snapshot, dt: number, bound: number, phase: Phase, step: number): number {
    const { net, batch } = this;
    let change = 0;
    for (const l of net.layers) {
      const ad = l.spec.adaptation;
      if (ad === undefined || this.clamped[l.index]) continue;
      const a = snap.adaptation[l.index] as FloatArray;
      const r = snap.activity[l.index] as FloatArray;
      const k = dt / ad.tau;
      let largest = 0;
      for (let q = 0; q < a.length; q++) {
        const old = a[q] as number;
        const v = old + k * (ad.gain * (r[q] as number) - old);
        a[q] = v;
        const d = Math.abs(v - old);
        if (d > largest) largest = d;
        if (!(Math.abs(v) <= bound)) this.diverged(l.index, Math.abs(v), bound, phase, step);
      }
      if (largest * ad.tau > change) change = largest * ad.tau;
    }
    for (const c of net.connections) {
      const dep = c.spec.depression;
      if (dep === undefined) continue;
      const R = snap.resources[c.index] as FloatArray;
      const pre = snap.activity[c.from] as FloatArray;
      const m = net.layers[c.from]!.size;
      let largest = 0;
      for (let q = 0; q < batch * m; q++) {
        const old = R[q] as number;
        let v = old + dt * ((1 - old) / dep.recovery - dep.use * old * (pre[q] as number));
        v = v < 0 ? 0 : v > 1 ? 1 : Number.isNaN(v) ? old : v;
        R[q] = v;
        const d = Math.abs(v - old);
        if (d > largest) largest = d;
      }
      if (largest * dep.recovery > change) change = largest * dep.recovery;
    }
    return change;
  }

  /**
   * The starting activity ρ(u) of layer i: on the backend's unit kernel for the piecewise-linear units,
   * whose kernels give the unit's own bits (kernels/units.ts), else with the unit's own fill.
   */
  private startActivity(i: number, act: FloatArray, st: FloatArray): void {
    const kind = this.fusedUnit[i]?.kind;
    const unit = this.net.layers[i]!.unit;
    if (kind === "hard-sigmoid" || kind === "relu" || kind === "linear") fillUnit(this.net.kernels, unit, false, act, st);
    else unit.fill(act, st);
  }

  /**
   * The checks of a step the fused kernel found a NaN or a value beyond the bound in, made as the
   * separate kernels make them: throws `divergence` unless the largest |next| is within the bound;
   * returns the largest change otherwise (NaN, as maxAbsDiff gives it, when only the old state held one).
   */
  private energyCheck(i: number, next: FloatArray, x: FloatArray, len: number, bound: number, phase: Phase, step: number): number {
    const K = this.net.kernels;
    const largest = K.maxAbs(next, len);
    if (!(largest <= bound)) this.diverged(i, largest, bound, phase, step);
    return K.maxAbsDiff(next, x, len);
  }

  /** Reports a layer whose state became non-finite or left ±bound. */
  private diverged(i: number, largest: number, bound: number, phase: Phase, step: number): never {
    const l = this.net.layers[i]!;
    const bad = !Number.isFinite(largest) ? "a non-finite value" : `a value of magnitude ${largest}`;
    throw new EbbflowError(
      issueText("divergence", `layers[${i}]`, `settling of layer ${JSON.stringify(l.name)} to stay finite and within ±${bound}`, bad, `phase ${phase}, step ${step}; try a smaller dt or weaker weights`),
    );
  }

  /**
   * Adds to `eta` (layer i's net input, B×N) the contributions of connections
   * into i and of feedback paths from layers i sends to, taking only the sources
   * j with `mask[j] === want`.
   */
  private accumulate(eta: FloatArray, i: number, act: FloatArray[], mask: readonly boolean[], want: boolean): void {
    const { net, batch } = this;
    const gemm = net.kernels.gemm;
    const sparse = net.kernels.sparse ?? typescriptSparseKernels;
    const n = net.layers[i]!.size;
    for (const c of net.incoming[i] as readonly import("./network.js").Connection[]) {
      const m = net.layers[c.from]!.size;
      if (c.spec.depression !== undefined) {
        // a depressed connection's transmission changes every step: never part of the drive; each step
        // eta += (X_from ⊙ R) · Wᵀ, whether or not the sender is clamped
        if (want) continue;
        const eff = this.effectivePre[c.index] as FloatArray;
        net.kernels.mul(eff, act[c.from] as FloatArray, this.currentResources?.[c.index] as FloatArray, batch * m);
        gemm(eta, eff, c.weights, batch, n, m, false, true, 1, 1);
        continue;
      }
      if (mask[c.from] !== want) continue;
      const sp = c.sparse;
      const cv = c.convolution;
      // eta (B×n) += X_from (B×m) · Wᵀ (m×n)
      if (cv) convolve(net.kernels, eta, cv.kernel, act[c.from] as FloatArray, cv.geometry, batch, 1, 1, this.fieldRows[c.index] as FloatArray);
      else if (sp) sparse.sparseDrive(eta, sp.values, sp.rowStart, sp.columnIndex, act[c.from] as FloatArray, n, m, batch, 1, 1);
      else this.activeDrive.product(eta, act[c.from] as FloatArray, c.weights, n, m, c.from, 1);
    }
    for (const c of net.feedbackInto[i] as readonly import("./network.js").Connection[]) {
      if (mask[c.to] !== want) continue;
      const m = net.layers[c.to]!.size;
      if (c.feedback.kind === "tied") {
        // eta (B×n) += gain · X_to (B×m) · W (m×n)
        const sp = c.sparse;
        const cv = c.convolution;
        if (c.feedback.gain === 0) continue;
        // W is m×n (to × from): the transposed convolution, or the transposed drive of the compressed form
        if (cv) convolveTransposed(net.kernels, eta, cv.kernel, act[c.to] as FloatArray, cv.geometry, batch, c.feedback.gain, 1, this.fieldRows[c.index] as FloatArray);
        else if (sp) sparse.sparseDriveTransposed(eta, sp.values, sp.rowStart, sp.columnIndex, act[c.to] as FloatArray, m, n, batch, c.feedback.gain, 1);
        else this.activeDrive.feedback(eta, act[c.to] as FloatArray, c.weights, n, m, c.to, c.feedback.gain);
      } else if (c.feedback.kind === "separate") {
        // eta (B×n) += X_to (B×m) · Fᵀ, F is n×m
        this.activeDrive.product(eta, act[c.to] as FloatArray, c.feedback.weights, n, m, c.to, 1);
      }
    }
  }

  /** Subtracts the layer's inhibition from its net input. */
  private inhibit(eta: FloatArray, i: number, act: FloatArray): void {
    const layer = this.net.layers[i]!;
    const inh = layer.inhibition;
    if (inh.kind === "none") return;
    const n = layer.size;
    for (let b = 0; b < this.batch; b++) {
      const off = b * n;
      if (inh.kind === "pooled") {
        // pooled feedback inhibition proportional to the layer's mean activity (common practice)
        let mean = 0;
        for (let j = 0; j < n; j++) mean += act[off + j] as number;
        const g = (inh.gain * mean) / n;
        for (let j = 0; j < n; j++) eta[off + j] = (eta[off + j] as number) - g;
      } else if (inh.k < n) {
        // k-winners-take-all: one inhibition per pattern, midway between the k-th and (k+1)-th largest net input,
        // so exactly the k strongest units receive positive net input (common practice)
        const s = this.scratch;
        for (let j = 0; j < n; j++) s[j] = eta[off + j] as number;
        const kth = kthLargest(s, n, inh.k);
        for (let j = 0; j < n; j++) s[j] = eta[off + j] as number;
        const k1 = kthLargest(s, n, inh.k + 1);
        const g = 0.5 * (kth + k1);
        for (let j = 0; j < n; j++) eta[off + j] = (eta[off + j] as number) - g;
      }
    }
  }
}

/**
 * The Hopfield-style energy of a snapshot, summed over the batch
 * (Hopfield 1984, PNAS 81:3088; layered form of Scellier & Bengio 2017):
 * `E = Σ_layers [½‖u‖² − b·ρ(u)] − Σ_connections ρ(x_to)ᵀ W ρ(x_from) − ½ Σ_lateral ρᵀWρ + β·½‖u_out − t‖²`
 * (or `+ β·factor·L(v, t)` for another `cost`, see {@link Objective}).
 * Defined for networks whose feedback paths are tied with gain 1 and whose
 * lateral weights are symmetric; input layers enter only through couplings.
 * @category Settling
 */
export function energy(net: Network, snap: Snapshot, targets?: LayerValues, beta = 0, cost?: Objective): number {
  let e = 0;
  const B = snap.batch;
  for (const l of net.layers) {
    if (l.role === "input") continue;
    const u = snap.state[l.index] as FloatArray;
    const x = snap.activity[l.index] as FloatArray;
    for (let b = 0; b < B; b++) {
      for (let j = 0; j < l.size; j++) {
        const k = b * l.size + j;
        e += 0.5 * (u[k] as number) ** 2 - (l.bias[j] as number) * (x[k] as number);
      }
    }
  }
  for (const c of net.connections) {
    const pre = snap.activity[c.from] as FloatArray;
    const post = snap.activity[c.to] as FloatArray;
    const m = net.layers[c.from]!.size;
    const n = net.layers[c.to]!.size;
    const factor = c.from === c.to ? 0.5 : 1;
    for (let b = 0; b < B; b++) {
      for (let i = 0; i < n; i++) {
        let s = 0;
        for (let j = 0; j < m; j++) s += (c.weights[i * m + j] as number) * (pre[b * m + j] as number);
        e -= factor * (post[b * n + i] as number) * s;
      }
    }
  }
  if (beta !== 0 && targets !== undefined) {
    for (const l of net.outputLayers) {
      const t = targets[l.name];
      if (t === undefined) fail("shape_mismatch", `targets.${l.name}`, "target values", undefined);
      if (cost !== undefined) {
        const c = requireObjective("cost", cost);
        const v = (c.on === "rate" ? snap.activity : snap.state)[l.index] as FloatArray;
        e += beta * c.factor * batchLoss(c.loss, v, t, B, l.size);
        continue;
      }
      const u = snap.state[l.index] as FloatArray;
      // a NaN target (a pattern not observed) adds no cost
      for (let k = 0; k < u.length; k++) if (!Number.isNaN(t[k] as number)) e += beta * 0.5 * ((u[k] as number) - (t[k] as number)) ** 2;
    }
  }
  return e;
}
