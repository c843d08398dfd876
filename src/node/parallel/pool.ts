/**
 * Data-parallel training on worker threads (piscina). Each mini-batch is split into one slice of
 * patterns per worker, and every worker computes on the parameters where they are (shared memory: plain
 * SharedArrayBuffers with the TypeScript kernels, one shared WebAssembly memory with the WebAssembly
 * kernels), so nothing is copied per batch but the inputs and targets. Each worker runs one job loop for
 * the life of the {@link ParallelRule}; a batch is signalled through shared memory (no message, no
 * structured clone), and the main thread awaits it with `Atomics.waitAsync`.
 *
 * Row split (rules with a contrast plan: EqProp one-sided and symmetric, CHL, GeneRec): each worker
 * settles its slice, publishes the phase activities, waits for the other slices (a barrier inside the
 * job), then adds the change of its own block of rows of every weight matrix, and of its block of biases,
 * into the shared parameters. Every parameter is written by one worker, with the sum over the whole batch
 * in a fixed order: the same seed and worker count give the same bits.
 *
 * Slice split (every other rule, and connections with sign or bound constraints): each worker writes its
 * slice's change into its own shared arrays; the main thread adds the slices in slice order and applies
 * the change under the constraints.
 * @module
 */
import { fileURLToPath } from "node:url";
import { existsSync } from "node:fs";
import { MessageChannel, receiveMessageOnPort, type MessagePort } from "node:worker_threads";
import { Piscina } from "piscina";
import { EbbflowError, fail, requireFinite } from "../../errors/index.js";
import { buildNetwork, parameterBuffers, parameterSlots, slotArray, type Network } from "../../network/network.js";
import type { NetworkSpec } from "../../network/spec.js";
import { applyDelta, batchSizeOf, builtinRegistry, checkedLayerValues, contrastRows, ParameterDelta, type AnyRuleConfig, type ContrastPlan, type ContrastScratch, type PhaseArrays, type Registry, type RuleConfigInput } from "../../rules/index.js";
import { flatBatch, type BatchInput } from "../../interop/ndarray.js";
import type { Dtype, FloatArray } from "../../types/index.js";
import { checkAllocation, type KernelBackend } from "../../kernels/backend.js";
import { typescriptBackend } from "../../kernels/typescript-backend.js";
import { loadWasmKernelsSync } from "../../kernels/wasm/loader.js";
import type { WasmSharedMemory } from "../../kernels/wasm/wasm-backend.js";
import {
  ABORTED,
  ARRIVED,
  DONE,
  FAILED,
  FINISHED,
  JOB,
  LAYOUT,
  MODE,
  MODE_ROWS_DELTA,
  MODE_ROWS_PARAMETERS,
  MODE_SLICES,
  READY,
  REFUSED,
  SLICES,
  STATUS,
  STOP,
  abortBatch,
  controlBytes,
  controlViews,
  whenEqual,
} from "./sync.js";
import { rowPlan } from "./contrast.js";
import type { BatchLayout, FailureMessage, LayoutMessage, LoopTask, SessionSetup, SharedArray } from "./protocol.js";

/** The TypeScript kernels allocating in SharedArrayBuffers, so the workers see every array of the network. */
const sharedTypescript: KernelBackend = {
  ...typescriptBackend,
  allocate(dtype: Dtype, n: number): FloatArray {
    checkAllocation(dtype, n);
    const buf = new SharedArrayBuffer((dtype === "float32" ? 4 : 8) * n);
    return dtype === "float32" ? new Float32Array(buf) : new Float64Array(buf);
  },
};

/** The compiled worker script; tests running from `src/` use the build in `dist/`. */
function workerFile(): string {
  const here = fileURLToPath(new URL("./worker.js", import.meta.url));
  if (existsSync(here)) return here;
  const built = here.replace(/([\\/])src([\\/]node[\\/]parallel[\\/]worker\.js)$/, "$1dist$2");
  if (!existsSync(built)) fail("unsupported", "workers", "the compiled worker (run `npm run build`)", built);
  return built;
}

/** Rules whose internal state changes from batch to batch cannot be split across workers (their descriptor says so). */
function checkRule(net: Network, rule: AnyRuleConfig, registry: Registry): void {
  const d = registry.rule(rule.rule);
  for (const l of net.layers) {
    const kind = l.unit.spec.kind;
    if (!registry.portableUnit(kind)) fail("unsupported", `layers[${l.index}].unit.kind`, `a unit kind the worker threads can import: register ${JSON.stringify(kind)} from its module with loadPlugins and pass that registry`, kind);
  }
  if (!registry.portable(rule.rule)) fail("unsupported", "rule", `a rule the worker threads can import: register ${JSON.stringify(rule.rule)} from its module with loadPlugins (a descriptor added in code only is not seen by other threads)`, rule.rule);
  if ((d.split?.(rule, net) ?? "none") === "none") fail("unsupported", "rule", `a rule without state that changes per batch for multi-core training (this config of ${d.label(rule)} keeps such state: its descriptor's split is "none")`, rule.rule);
}

/** The declaration without explicit weight values: the workers take the parameters from shared memory. */
function withoutWeights(spec: NetworkSpec): NetworkSpec {
  return { ...spec, connections: spec.connections.map(({ weights: _values, ...c }) => c) };
}

/** A batch size's shared arrays, with the main thread's views of them. */
interface MainLayout {
  readonly layout: BatchLayout;
  /** Per layer index: the input layers' values and the output layers' targets (null elsewhere). */
  readonly inputs: readonly (FloatArray | null)[];
  readonly targets: readonly (FloatArray | null)[];
  /** Row split: the phase activities (the main thread reads them when it has to apply the change itself). */
  readonly arrays: PhaseArrays | null;
  readonly scratch: ContrastScratch | null;
}

/**
 * A learning rule run on several worker threads. Its {@link ParallelRule.net} holds the parameters in
 * shared memory (a copy of the network given); train that network. The workers compute on those
 * parameters in place, with TypeScript kernels or with WebAssembly kernels attached to the same memory.
 * One batch runs at a time (await each `step`); {@link ParallelRule.close} ends the worker threads, which
 * otherwise keep the process alive. The same seed and worker count give the same bits, whatever the
 * timing of the threads.
 * @category Training
 * @example
 * ```ts
 * const par = await ParallelRule.create(net, { rule: "eqprop", beta: 0.5, rate: 0.1 }, 2);
 * await par.step(batch);
 * await par.close();
 * ```
 */
export class ParallelRule {
  /** The network whose parameters live in shared memory. */
  readonly net: Network;
  /** The rule, with its defaults filled in. */
  readonly config: AnyRuleConfig;
  /** Number of worker threads. */
  readonly workers: number;
  /** The kernels the workers compute with. */
  readonly kernels: "typescript" | "wasm";
  /**
   * How a batch's update is shared out: `"rows"` (each worker adds the whole batch's change for its block
   * of rows of every weight matrix, in place) for one-sided and symmetric EqProp, CHL and GeneRec on
   * connections without sign or bound constraints; `"slices"` (each worker computes its slice's change,
   * the main thread adds them and applies the sum under the constraints) otherwise.
   */
  readonly split: "rows" | "slices";
  private readonly pool: Piscina;
  private readonly setup: SessionSetup;
  private readonly plan: ContrastPlan | null;
  private readonly slotViews: FloatArray[][];
  private readonly delta: ParameterDelta;
  private readonly layouts = new Map<number, MainLayout>();
  private readonly describe: (a: FloatArray) => SharedArray;
  /** The control array shared with the workers (see sync.ts) and the job's scale. */
  private readonly words: Int32Array;
  private readonly scale: Float64Array;
  private readonly control: SharedArrayBuffer;
  /** This thread's ends of the workers' ports (layouts out, failures in). */
  private readonly ports: MessagePort[] = [];
  /** The workers' job loops; they end when {@link ParallelRule.close} sets the stop word. */
  private loops: Promise<unknown>[] = [];
  /** Rejects when a job loop ends unexpectedly (a worker thread died); the rule is unusable afterwards. */
  private broken: Promise<never> = new Promise<never>(() => undefined);
  private failure: unknown = undefined;
  private jobs = 0;
  private running = false;
  /** The batch in flight, if any (close() lets it finish). */
  private current: Promise<unknown> | null = null;
  private closed = false;

  private constructor(net: Network, config: AnyRuleConfig, workers: number, kernels: "typescript" | "wasm", registry: Registry) {
    this.kernels = kernels;
    this.config = config;
    this.workers = workers;
    // every array the network allocates lives in shared memory: SharedArrayBuffers with the TypeScript
    // kernels, the main backend's shared WebAssembly memory (attached to by every worker) with WebAssembly
    let memory: WasmSharedMemory | undefined;
    let backend: KernelBackend;
    if (kernels === "wasm") {
      const wasm = loadWasmKernelsSync();
      memory = wasm.share();
      backend = wasm;
      this.describe = (a) => ({ byteOffset: a.byteOffset, length: a.length });
    } else {
      backend = sharedTypescript;
      this.describe = (a) => ({ buffer: a.buffer as SharedArrayBuffer, byteOffset: a.byteOffset, length: a.length });
    }
    this.net = buildNetwork(net.spec, { backend, units: net.units });
    const src = parameterBuffers(net);
    const dst = parameterBuffers(this.net);
    dst.forEach((a, i) => a.set(src[i] as FloatArray));
    this.plan = rowPlan(this.net, config, registry);
    this.split = this.plan === null ? "slices" : "rows";
    this.slotViews = this.split === "slices" ? Array.from({ length: workers }, () => dst.map((a) => this.net.allocate(a.length))) : [];
    this.delta = new ParameterDelta(this.net);
    this.setup = {
      spec: withoutWeights(this.net.spec),
      rule: config,
      plugins: registry.plugins,
      kernels,
      memory,
      parameters: dst.map(this.describe),
      slots: this.slotViews.map((views) => views.map(this.describe)),
      delta: { weights: this.delta.weights.map(this.describe), biases: this.delta.biases.map(this.describe) },
      workers,
    };
    this.control = new SharedArrayBuffer(controlBytes(workers));
    ({ words: this.words, scale: this.scale } = controlViews(this.control, workers));
    this.pool = new Piscina({ filename: workerFile(), minThreads: workers, maxThreads: workers, idleTimeout: 60_000 });
  }

  /** Starts one job loop per worker and waits until every worker has built its network. */
  private async start(): Promise<void> {
    this.loops = Array.from({ length: this.workers }, (_, worker) => {
      const { port1, port2 } = new MessageChannel();
      this.ports.push(port1);
      const task: LoopTask = { setup: this.setup, worker, control: this.control, port: port2 };
      return this.pool.run(task, { transferList: [port2] }) as Promise<unknown>;
    });
    this.broken = new Promise<never>((_, reject) => {
      for (const loop of this.loops) {
        loop.then(
          () => {
            if (!this.closed) reject(new Error("a training worker stopped unexpectedly"));
          },
          (e: unknown) => reject(e),
        );
      }
    });
    this.broken.catch((e: unknown) => {
      // a worker died: release the others from the barrier; every later call throws this error
      this.failure ??= e;
      abortBatch(this.words);
    });
    try {
      await whenEqual(this.words, READY, this.workers, this.broken);
    } catch (e) {
      await this.close();
      throw e;
    }
  }

  /**
   * Starts `workers` threads for `rule` on a shared-memory copy of `net`.
   * @param options - `kernels`: the kernels of the workers (default: the kind `net` uses); `registry`: where
   * the rule is looked up (default: the built-in rules). A rule of your own must come from a module
   * recorded in the registry (`loadPlugins`), which every worker imports.
   * The network may have any number of input and output layers; batches may leave targets unobserved
   * (rows of NaN, or an `observed` mask), as on one thread.
   * @throws EbbflowError `invalid_parameter` (path `workers`) for a count that is not an integer
   * >= 1; `unsupported` for a rule whose state changes per batch (its descriptor's split is "none");
   * `invalid_config` for a bad rule.
   */
  static async create(net: Network, rule: RuleConfigInput | Readonly<Record<string, unknown>>, workers: number, options: { kernels?: "typescript" | "wasm" | undefined; registry?: Registry | undefined } = {}): Promise<ParallelRule> {
    if (!Number.isInteger(workers) || workers < 1) fail("invalid_parameter", "workers", "an integer >= 1", workers);
    const registry = options.registry ?? builtinRegistry;
    const config = registry.parseRule(rule);
    checkRule(net, config, registry);
    // by default the workers use the same kind of kernels as the network they were given
    const kernels = options.kernels ?? (net.kernels.name === "typescript" ? "typescript" : "wasm");
    const par = new ParallelRule(net, config, workers, kernels, registry);
    await par.start();
    return par;
  }

  /** The shared arrays of batch size B (made once per size). */
  private layoutFor(B: number): MainLayout {
    const known = this.layouts.get(B);
    if (known !== undefined) return known;
    const net = this.net;
    const inputs = net.layers.map((l) => (l.role === "input" ? net.allocate(B * l.size) : null));
    const targets = net.layers.map((l) => (l.role === "output" ? net.allocate(B * l.size) : null));
    const plan = this.plan;
    const phases = plan?.phases.length ?? 0;
    const byUnit = Array.from({ length: phases }, () => net.layers.map((l) => (l.role === "input" ? null : net.allocate(l.size * B))));
    const byPattern = Array.from({ length: phases }, () => net.layers.map((l) => (plan !== null && plan.senders[l.index] ? net.allocate(B * l.size) : null)));
    const slices = Math.min(this.workers, B);
    const stats = new SharedArrayBuffer(8 * Math.max(1, slices * (plan?.statsStride ?? 0)));
    const row = (r: readonly (FloatArray | null)[]) => r.map((a) => (a === null ? null : this.describe(a)));
    const grid = (g: (FloatArray | null)[][]) => g.map(row);
    const largest = Math.max(...net.layers.map((l) => l.size));
    const layout: BatchLayout = { id: this.layouts.size + 1, batch: B, slices, inputs: row(inputs), targets: row(targets), byPattern: grid(byPattern), byUnit: grid(byUnit), stats };
    const made: MainLayout = {
      layout,
      inputs,
      targets,
      arrays: plan === null ? null : { batch: B, inputs, byPattern, byUnit },
      scratch: plan === null ? null : { post: net.allocate(largest * B), pre: net.allocate(largest * B) },
    };
    this.layouts.set(B, made);
    // the workers read it from their ports at the first job that names it
    for (const port of this.ports) port.postMessage({ kind: "layout", layout } satisfies LayoutMessage);
    return made;
  }

  /**
   * Checks the batch (every input layer's values finite, every output layer's targets finite or whole
   * rows of NaN, an `observed` mask written in as NaN rows) and copies it into the shared arrays.
   */
  private load(input: BatchInput): MainLayout {
    const net = this.net;
    const batch = flatBatch(net, input);
    const B = batchSizeOf(net, batch);
    const values = net.layers.map((l) => (l.role === "input" ? checkedLayerValues(batch.inputs, l.name, B * l.size, "inputs") : l.role === "output" ? checkedLayerValues(batch.targets, l.name, B * l.size, "targets", l.size) : null));
    const L = this.layoutFor(B);
    for (const l of net.layers) {
      const v = values[l.index];
      if (v === null || v === undefined) continue;
      (((l.role === "input" ? L.inputs : L.targets)[l.index]) as FloatArray).set(v);
    }
    return L;
  }

  /**
   * Runs one job on the workers: publishes its parameters, wakes them, and resolves when the last one is
   * done. Returns the workers' statuses; throws the first failure (an EbbflowError keeps its code and path).
   */
  private async job(L: MainLayout, mode: number, scale: number): Promise<number[]> {
    const w = this.words;
    const { slices } = L.layout;
    const job = ++this.jobs;
    Atomics.store(w, SLICES, slices);
    Atomics.store(w, LAYOUT, L.layout.id);
    Atomics.store(w, MODE, mode);
    this.scale[0] = scale;
    Atomics.store(w, FINISHED, 0);
    Atomics.store(w, ARRIVED, 0);
    Atomics.store(w, ABORTED, 0);
    for (let i = 0; i < this.workers; i++) Atomics.store(w, STATUS + i, 0);
    // the job number last: a worker that sees it sees every word above and the batch's inputs
    Atomics.store(w, JOB, job);
    Atomics.notify(w, JOB);
    await whenEqual(w, DONE, job, this.broken);
    const statuses = Array.from({ length: slices }, (_, i) => Atomics.load(w, STATUS + i));
    if (statuses.includes(FAILED)) throw this.failureOf(job);
    return statuses;
  }

  /** Runs `body` as the only batch in flight (the workers' shared arrays hold one batch at a time). */
  private async exclusive<T>(body: () => Promise<T>): Promise<T> {
    if (this.closed) fail("unsupported", "rule", "a ParallelRule that is not closed", "closed");
    if (this.failure !== undefined) throw this.failure;
    if (this.running) fail("unsupported", "batch", "one batch at a time (await the previous step or computeDelta first)", "a batch still running");
    this.running = true;
    const run = body();
    this.current = run;
    try {
      return await run;
    } finally {
      this.running = false;
      this.current = null;
    }
  }

  /** The error a worker reported for `job` (read from the ports). */
  private failureOf(job: number): unknown {
    let found: FailureMessage | undefined;
    for (const port of this.ports) {
      for (let m = receiveMessageOnPort(port); m !== undefined; m = receiveMessageOnPort(port)) {
        const f = m.message as FailureMessage;
        if (f.job === job && (found === undefined || (found.issues === undefined && f.issues !== undefined))) found = f;
      }
    }
    if (found?.issues !== undefined) return new EbbflowError(found.issues);
    return new Error(`a training worker failed: ${found?.message ?? "no reason given"}`);
  }

  /** The slices' changes (slice split), added in slice order into `out`, weighted by their share of the batch. */
  private reduceSlices(L: MainLayout, out: ParameterDelta): void {
    out.clear();
    const K = this.net.kernels;
    // the slices' change arrays follow the parameters' order (parameterSlots); fixed feedback has no change
    const targetsOut = parameterSlots(this.net).map((slot) => slotArray(out, slot) ?? new Float64Array(0));
    const { batch: B, slices } = L.layout;
    for (let i = 0; i < slices; i++) {
      const views = this.slotViews[i] as FloatArray[];
      const share = (Math.floor(((i + 1) * B) / slices) - Math.floor((i * B) / slices)) / B;
      targetsOut.forEach((dst, p) => {
        if (dst.length > 0) K.axpy(dst, views[p] as FloatArray, share, dst.length);
      });
    }
  }

  /** The whole batch's change from the published phase activities, computed on this thread (row split). */
  private changeHere(L: MainLayout, scale: number, out: ParameterDelta): void {
    out.clear();
    contrastRows(this.net.kernels, this.plan!, L.arrays!, { weights: out.weights, biases: out.biases, add: false }, 0, 1, scale, L.scratch!, this.net.dtype === "float32");
  }

  /**
   * The change for `batch` (mean over its patterns), computed on the workers; the network is not changed.
   * @throws EbbflowError `shape_mismatch` for inputs or targets of the wrong size; whatever
   * settling throws (`divergence`); `unsupported` while another batch of this rule is still running or
   * after {@link ParallelRule.close}.
   */
  async computeDelta(batch: BatchInput, out: ParameterDelta = this.delta): Promise<ParameterDelta> {
    return this.exclusive(() => this.changeFor(batch, out));
  }

  private async changeFor(batch: BatchInput, out: ParameterDelta): Promise<ParameterDelta> {
    const L = this.load(batch);
    if (this.split === "slices") {
      await this.job(L, MODE_SLICES, 1);
      this.reduceSlices(L, out);
      return out;
    }
    // the workers overwrite every planned weight matrix and every bias; frozen connections stay zero
    this.delta.clear();
    await this.job(L, MODE_ROWS_DELTA, 1);
    if (out !== this.delta) {
      out.clear();
      out.addScaled(this.delta, 1);
    }
    return out;
  }

  /**
   * Trains on `batch`: the change (times `scale`, a learning-rate schedule's factor; default 1) is added
   * to {@link ParallelRule.net}'s parameters. With the row split the workers add it in place when every
   * parameter provably stays finite; otherwise the change is computed and applied all-or-nothing under
   * the constraints (see `applyDelta`).
   * @throws EbbflowError `non_finite_update` (nothing changed) when a parameter would become
   * non-finite; `invalid_parameter` (path `scale`) for a scale that is not finite; `shape_mismatch`,
   * `divergence` and `unsupported` as {@link ParallelRule.computeDelta}.
   */
  async step(batch: BatchInput, scale = 1): Promise<void> {
    requireFinite("scale", scale);
    return this.exclusive(() => this.train(batch, scale));
  }

  private async train(batch: BatchInput, scale: number): Promise<void> {
    const L = this.load(batch);
    if (this.split === "slices") {
      await this.job(L, MODE_SLICES, 1);
      this.reduceSlices(L, this.delta);
      if (scale !== 1) this.delta.scale(scale);
      applyDelta(this.net, this.delta);
      return;
    }
    const statuses = await this.job(L, MODE_ROWS_PARAMETERS, scale);
    // every worker reaches the same verdict from the same maxima: all wrote, or none did
    if (statuses.includes(REFUSED)) {
      this.changeHere(L, scale, this.delta);
      applyDelta(this.net, this.delta);
    }
  }

  /** Stops the job loops and the worker threads (after the batch in flight, if any). */
  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await this.current?.catch(() => undefined);
    Atomics.store(this.words, STOP, 1);
    Atomics.add(this.words, JOB, 1);
    Atomics.notify(this.words, JOB);
    await Promise.allSettled(this.loops);
    for (const port of this.ports) port.close();
    await this.pool.destroy();
  }
}
