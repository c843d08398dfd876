/**
 * The training worker: one job loop per thread for the life of a `ParallelRule`. Its network's
 * parameters are the main thread's arrays in shared memory (never copied); its settling buffers are its
 * own (in the shared WebAssembly memory's arena with WebAssembly kernels, which it attaches to, or
 * ordinary arrays with TypeScript kernels).
 *
 * Row split: settles its slice of the batch, publishes the slice's phase activities into the shared
 * batch arrays, waits for every slice (barrier), then adds the change for its block of rows of every
 * weight matrix, and its block of biases, into the shared parameters (or writes it into the shared
 * change arrays). Slice split: computes the rule's change for its slice and writes it into its own
 * change arrays.
 * @module
 */
import { receiveMessageOnPort, type MessagePort } from "node:worker_threads";
import { EbbflowError, fail } from "../../errors/index.js";
import { buildNetwork, parameterSlots, slotArray, type Network } from "../../network/network.js";
import { Settler, Snapshot, type LayerValues, type PhaseOptions } from "../../network/settle.js";
import { contrastRows, ParameterDelta, provablyFinite, publishParameterMaxima, publishPhases, settlePlanPhases, type ContrastPlan, type ContrastScratch, type LearningRule, type PhaseArrays, type Registry } from "../../rules/index.js";
import { loadPlugins } from "../plugins.js";
import type { Dtype, FloatArray } from "../../types/index.js";
import type { KernelBackend } from "../../kernels/backend.js";
import { typescriptBackend } from "../../kernels/typescript-backend.js";
import { loadWasmKernelsSync } from "../../kernels/wasm/loader.js";
import type { WasmKernelBackend } from "../../kernels/wasm/wasm-backend.js";
import {
  ABORTED_JOB,
  DONE_OK,
  FAILED,
  JOB,
  MODE_ROWS_DELTA,
  MODE_ROWS_PARAMETERS,
  MODE_SLICES,
  READY,
  REFUSED,
  STOP,
  abortBatch,
  arrive,
  controlViews,
  finish,
  readJob,
  waitForChange,
} from "./sync.js";
import { rowPlan } from "./contrast.js";
import type { BatchLayout, FailureMessage, LayoutMessage, LoopTask, SessionSetup, SharedArray } from "./protocol.js";

/** Scratch of the worker's own WebAssembly backend for copies of ordinary arrays (rarely used: everything lives in the memory). */
const WORKER_SCRATCH_BYTES = 1 << 20;

interface LayoutViews {
  readonly layout: BatchLayout;
  /** Per layer index: input layers' values, output layers' targets (null elsewhere). */
  readonly inputs: readonly (FloatArray | null)[];
  readonly targets: readonly (FloatArray | null)[];
  readonly arrays: PhaseArrays;
  readonly stats: Float64Array;
}

/** One job: which slice of which batch, and what to do with it. */
interface Job {
  readonly number: number;
  readonly worker: number;
  readonly layout: LayoutViews;
  readonly mode: number;
  readonly scale: number;
  readonly slices: number;
  readonly start: number;
  readonly count: number;
}

/** The worker's copy of the network and everything it reuses from batch to batch. */
class Session {
  readonly setup: SessionSetup;
  readonly net: Network;
  readonly view: (a: SharedArray, dtype?: Dtype) => FloatArray;
  readonly plan: ContrastPlan | null;
  /** Per slice size: the settler and one snapshot per phase. */
  private readonly settlers = new Map<number, { settler: Settler; snaps: Snapshot[] }>();
  private readonly layouts = new Map<number, LayoutViews>();
  /** Per batch size: working arrays of the row split. */
  private readonly scratch = new Map<number, ContrastScratch>();
  /** Slice split: the rule, its change and this worker's change arrays, made on first use. */
  private rule: LearningRule | null = null;
  private delta: ParameterDelta | null = null;
  private slots: FloatArray[] | null = null;
  /** Row split into a change: views of the change arrays. */
  private deltaArrays: { weights: FloatArray[]; biases: FloatArray[] } | null = null;

  readonly registry: Registry;

  constructor(setup: SessionSetup, registry: Registry) {
    this.setup = setup;
    this.registry = registry;
    const dtype = setup.spec.dtype;
    let backend: KernelBackend = typescriptBackend;
    if (setup.kernels === "wasm" && setup.memory !== undefined) {
      // the same memory as the main thread: parameters and batch arrays are read where they are
      const wasm: WasmKernelBackend = loadWasmKernelsSync({ attach: setup.memory, relaxed: setup.memory.build === "relaxed" ? "auto" : false, scratchBytes: WORKER_SCRATCH_BYTES });
      backend = wasm;
      this.view = (a, d = dtype) => wasm.arrayAt(d, a.byteOffset, a.length);
    } else {
      this.view = (a, d = dtype) => (d === "float32" ? new Float32Array(a.buffer!, a.byteOffset, a.length) : new Float64Array(a.buffer!, a.byteOffset, a.length));
    }
    const params = setup.parameters.map((a) => this.view(a));
    let k = 0;
    this.net = buildNetwork(setup.spec, { backend, allocate: () => params[k++] as FloatArray, keepValues: true, units: registry.units });
    this.plan = rowPlan(this.net, setup.rule, registry);
  }

  /** The views of a layout, reading the layouts posted on `port` until it is there. */
  layoutFor(id: number, port: MessagePort): LayoutViews {
    let v = this.layouts.get(id);
    while (v === undefined) {
      const m = receiveMessageOnPort(port);
      if (m === undefined) fail("unsupported", "layout", `the layout ${id} posted before its first job`, "no such layout");
      const layout = (m.message as LayoutMessage).layout;
      const row = (r: readonly (SharedArray | null)[]) => r.map((a) => (a === null ? null : this.view(a)));
      const grid = (g: readonly (readonly (SharedArray | null)[])[]) => g.map(row);
      const inputs = row(layout.inputs);
      this.layouts.set(layout.id, {
        layout,
        inputs,
        targets: row(layout.targets),
        arrays: { batch: layout.batch, inputs, byPattern: grid(layout.byPattern), byUnit: grid(layout.byUnit) },
        stats: new Float64Array(layout.stats),
      });
      v = this.layouts.get(id);
    }
    return v;
  }

  settlerFor(count: number, phases: number): { settler: Settler; snaps: Snapshot[] } {
    let w = this.settlers.get(count);
    if (w === undefined) {
      w = { settler: new Settler(this.net, count), snaps: [] };
      this.settlers.set(count, w);
    }
    // the phases share the input layers' arrays (same inputs in every phase)
    while (w.snaps.length < phases) w.snaps.push(new Snapshot(this.net, count, w.snaps[0]));
    return w;
  }

  scratchFor(B: number): ContrastScratch {
    let sc = this.scratch.get(B);
    if (sc === undefined) {
      const largest = Math.max(...this.net.layers.map((l) => l.size));
      sc = { post: this.net.allocate(largest * B), pre: this.net.allocate(largest * B) };
      this.scratch.set(B, sc);
    }
    return sc;
  }

  /** The slice's inputs and targets (every input and output layer): views of the shared batch arrays. */
  sliceValues(job: Job): { inputs: LayerValues; targets: LayerValues } {
    const v = job.layout;
    const inputs: Record<string, FloatArray> = {};
    const targets: Record<string, FloatArray> = {};
    for (const l of this.net.layers) {
      const a = l.role === "input" ? v.inputs[l.index] : l.role === "output" ? v.targets[l.index] : null;
      if (a === null || a === undefined) continue;
      (l.role === "input" ? inputs : targets)[l.name] = a.subarray(job.start * l.size, (job.start + job.count) * l.size);
    }
    return { inputs, targets };
  }

  /** Row split, before the barrier: settles the slice, publishes its activities and its maxima. */
  settleAndPublish(plan: ContrastPlan, job: Job): void {
    const { net } = this;
    const K = net.kernels;
    const v = job.layout;
    const { settler, snaps } = this.settlerFor(job.count, plan.phases.length);
    // the phases and options the rule's descriptor gives (the same as the rule settles on one thread)
    settlePlanPhases(settler, plan.phases, this.sliceValues(job), snaps);
    const stats = v.stats.subarray(job.worker * plan.statsStride, (job.worker + 1) * plan.statsStride);
    publishPhases(K, net, plan, snaps, v.arrays, job.start, job.count, stats);
    // this worker's blocks of the parameters (nobody writes them before the barrier)
    if (job.mode === MODE_ROWS_PARAMETERS) publishParameterMaxima(K, net, plan, job.worker, job.slices, stats);
  }

  /** Row split: returns the worker's status. */
  rows(plan: ContrastPlan, job: Job, words: Int32Array): number {
    this.settleAndPublish(plan, job);
    if (!arrive(words, job.slices)) return ABORTED_JOB;
    const { net } = this;
    const float32 = net.dtype === "float32";
    const scratch = this.scratchFor(job.layout.arrays.batch);
    if (job.mode === MODE_ROWS_DELTA) {
      this.deltaArrays ??= { weights: this.setup.delta.weights.map((a) => this.view(a)), biases: this.setup.delta.biases.map((a) => this.view(a)) };
      const d = this.deltaArrays;
      contrastRows(net.kernels, plan, job.layout.arrays, { weights: d.weights, biases: d.biases, add: false }, job.worker, job.slices, job.scale, scratch, float32);
      return DONE_OK;
    }
    // every worker reaches the same verdict from the same maxima: all write, or none does
    if (!provablyFinite(plan, job.layout.stats, job.slices, net.layers.length, net.connections.length, job.scale, float32)) return REFUSED;
    const target = { weights: net.connections.map((c) => c.weights), biases: net.layers.map((l) => l.bias), add: true };
    contrastRows(net.kernels, plan, job.layout.arrays, target, job.worker, job.slices, job.scale, scratch, float32);
    return DONE_OK;
  }

  /** Slice split: the rule's mean change for the slice, written raw into this worker's change arrays. */
  slice(job: Job): number {
    const { net } = this;
    this.rule ??= this.registry.createRule(net, this.setup.rule);
    const delta = (this.delta ??= new ParameterDelta(net));
    this.slots ??= (this.setup.slots[job.worker] as SharedArray[]).map((a) => this.view(a));
    this.rule.computeDelta(this.sliceValues(job), delta);
    // in the parameters' order (parameterSlots), as the main thread reads the slots
    const own = parameterSlots(net).map((slot) => slotArray(delta, slot) ?? new Float64Array(0));
    own.forEach((src, i) => {
      const dst = this.slots![i] as FloatArray;
      if (src.length === dst.length) net.kernels.copy(dst, src);
      else dst.fill(0); // input layers' biases, fixed feedback matrices (no change)
    });
    return DONE_OK;
  }
}

/** Runs one job; returns the status, after posting the reason of a failure on `port`. */
function runJob(s: Session, job: Job, words: Int32Array, port: MessagePort): number {
  try {
    if (job.mode === MODE_SLICES) return s.slice(job);
    // the main thread chose the row split from the same plan (same declaration and rule)
    if (s.plan === null) fail("unsupported", "rule", "a rule with a contrast plan for the row split", s.setup.rule.rule);
    return s.rows(s.plan, job, words);
  } catch (e) {
    // release the other slices waiting at the barrier (they report "aborted")
    abortBatch(words);
    // an EbbflowError crosses back as its issues, so the main thread throws it with its code and path
    const failure: FailureMessage =
      e instanceof EbbflowError ? { kind: "failure", job: job.number, issues: e.issues } : { kind: "failure", job: job.number, message: e instanceof Error ? (e.stack ?? e.message) : String(e) };
    port.postMessage(failure);
    return FAILED;
  }
}

/**
 * The job loop: builds the session, reports ready, then runs slice `worker` of every job until the
 * control word STOP is set.
 */
export default async function jobLoop(task: LoopTask): Promise<{ readonly stopped: true }> {
  const { words, scale } = controlViews(task.control, task.setup.workers);
  // the same rules of the user's own as the main thread: the modules recorded in its registry
  const s = new Session(task.setup, await loadPlugins(task.setup.plugins));
  Atomics.add(words, READY, 1);
  Atomics.notify(words, READY);
  let seen = 0;
  for (;;) {
    seen = waitForChange(words, JOB, seen);
    if (Atomics.load(words, STOP) !== 0) {
      task.port.close();
      return { stopped: true };
    }
    const current = readJob(words, scale, seen);
    if (current === null) continue;
    const { slices, layout: layoutId, mode, scale: jobScale } = current;
    if (task.worker >= slices) continue;
    let layout: LayoutViews;
    try {
      layout = s.layoutFor(layoutId, task.port);
    } catch (e) {
      abortBatch(words);
      task.port.postMessage({ kind: "failure", job: seen, message: String(e) } satisfies FailureMessage);
      finish(words, task.worker, FAILED, seen, slices);
      continue;
    }
    const B = layout.arrays.batch;
    const start = Math.floor((task.worker * B) / slices);
    const job: Job = {
      number: seen,
      worker: task.worker,
      layout,
      mode,
      scale: jobScale,
      slices,
      start,
      count: Math.floor(((task.worker + 1) * B) / slices) - start,
    };
    finish(words, task.worker, runJob(s, job, words, task.port), seen, slices);
  }
}
