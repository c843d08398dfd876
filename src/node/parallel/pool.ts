/**
 * Data-parallel training on worker threads (piscina): each mini-batch is split into one slice per
 * worker; workers read the parameters from shared memory and write their slice's change into shared
 * arrays; the main thread adds the slices in slice order (a deterministic reduction: the same seed and
 * the same worker count give the same bits) and applies the change under the constraints.
 * @module
 */
import { fileURLToPath } from "node:url";
import { existsSync } from "node:fs";
import { Piscina } from "piscina";
import { fail } from "../../errors/index.js";
import { buildNetwork, parameterBuffers, type Network } from "../../network/network.js";
import { applyDelta, ParameterDelta, parseRule, type RuleConfig, type RuleConfigInput, type Batch } from "../../rules/index.js";
import type { Dtype, FloatArray } from "../../types/index.js";
import type { SharedArray, SliceTask } from "./protocol.js";
import { selectBackend } from "../../kernels/wasm/loader.js";
import type { KernelBackend } from "../../kernels/wasm/backend.js";

let sessions = 0;

function sharedArray(dtype: Dtype, n: number): FloatArray {
  const bytes = (dtype === "float32" ? 4 : 8) * n;
  const buf = new SharedArrayBuffer(bytes);
  return dtype === "float32" ? new Float32Array(buf) : new Float64Array(buf);
}

/** The compiled worker script; tests running from `src/` use the build in `dist/`. */
function workerFile(): string {
  const here = fileURLToPath(new URL("./worker.js", import.meta.url));
  if (existsSync(here)) return here;
  const built = here.replace(/([\\/])src([\\/]node[\\/]parallel[\\/]worker\.js)$/, "$1dist$2");
  if (!existsSync(built)) fail("unsupported", "workers", "the compiled worker (run `npm run build`)", built);
  return built;
}

/** Rules whose internal state changes from batch to batch cannot be split across workers. */
function checkRule(rule: RuleConfig): void {
  const stateful =
    rule.rule === "bcm" ||
    (rule.rule === "calcium" && rule.threshold !== "error") ||
    (rule.rule === "eqprop" && rule.mode === "random-sign");
  if (stateful) fail("unsupported", "rule", "a rule without state that changes per batch for multi-core training (not bcm, calcium with a bcm or mix threshold, or eqprop random-sign)", rule.rule);
}

/**
 * A learning rule run on several worker threads. Its {@link ParallelRule.net} holds the parameters in
 * shared memory (a copy of the network given); train that network. With WebAssembly kernels each worker
 * keeps its own copy of the parameters in its kernels' memory and refreshes it once per batch (no copy
 * per settling step); with TypeScript kernels the workers compute on the shared parameters directly.
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
  readonly config: RuleConfig;
  readonly workers: number;
  private readonly pool: Piscina;
  private readonly session: number;
  private readonly params: SharedArray[];
  private readonly slots: SharedArray[][];
  private readonly slotViews: FloatArray[][];
  private inputs: SharedArrayBuffer = new SharedArrayBuffer(8);
  private targets: SharedArrayBuffer = new SharedArrayBuffer(8);
  private readonly delta: ParameterDelta;
  private readonly inputName: string;
  private readonly outputName: string;
  /** The kernels the workers compute with. */
  readonly kernels: "typescript" | "wasm";

  private constructor(net: Network, config: RuleConfig, workers: number, kernels: "typescript" | "wasm") {
    this.kernels = kernels;
    this.config = config;
    this.workers = workers;
    // parameters and the slices' change arrays live in shared memory: plain SharedArrayBuffers with the
    // TypeScript kernels, or the main thread's shared WebAssembly memory with the WebAssembly kernels (so the
    // reduction and the update below run in WebAssembly too)
    const main: KernelBackend | null = kernels === "wasm" ? selectBackend("wasm") : null;
    const alloc = main !== null ? (dtype: Dtype, n: number) => main.allocate(dtype, n) : sharedArray;
    this.net = main !== null ? buildNetwork(net.spec, { backend: main }) : buildNetwork(net.spec, { allocate: sharedArray });
    const src = parameterBuffers(net);
    const dst = parameterBuffers(this.net);
    dst.forEach((a, i) => a.set(src[i] as FloatArray));
    this.slotViews = Array.from({ length: workers }, () => dst.map((a) => alloc(this.net.dtype, a.length)));
    const describe = (a: FloatArray): SharedArray => ({ buffer: a.buffer as SharedArrayBuffer, byteOffset: a.byteOffset, length: a.length });
    this.params = dst.map(describe);
    this.slots = this.slotViews.map((views) => views.map(describe));
    this.delta = new ParameterDelta(this.net);
    const ins = this.net.inputLayers;
    const outs = this.net.outputLayers;
    if (ins.length !== 1 || outs.length !== 1) fail("unsupported", "layers", "exactly one input and one output layer for multi-core training", `${ins.length} and ${outs.length}`);
    this.inputName = ins[0]!.name;
    this.outputName = outs[0]!.name;
    this.session = ++sessions;
    this.pool = new Piscina({ filename: workerFile(), minThreads: workers, maxThreads: workers, idleTimeout: 60_000 });
  }

  /** Starts `workers` threads for `rule` on a shared-memory copy of `net`. */
  static async create(net: Network, rule: RuleConfigInput, workers: number, options: { kernels?: "typescript" | "wasm" | undefined } = {}): Promise<ParallelRule> {
    if (!Number.isInteger(workers) || workers < 1) fail("invalid_parameter", "workers", "an integer >= 1", workers);
    const config = parseRule(rule);
    checkRule(config);
    // by default the workers use the same kind of kernels as the network they were given
    const kernels = options.kernels ?? (net.kernels.name === "typescript" ? "typescript" : "wasm");
    return new ParallelRule(net, config, workers, kernels);
  }

  /** The change for `batch` (mean over its patterns), computed on the workers; the network is not changed. */
  async computeDelta(batch: Batch, out: ParameterDelta = this.delta): Promise<ParameterDelta> {
    const x = batch.inputs[this.inputName];
    const t = batch.targets[this.outputName];
    const nIn = this.net.layers.find((l) => l.name === this.inputName)!.size;
    const nOut = this.net.layers.find((l) => l.name === this.outputName)!.size;
    if (x === undefined || x.length % nIn !== 0 || x.length === 0) fail("shape_mismatch", `inputs.${this.inputName}`, `a non-empty multiple of ${nIn} values`, x === undefined ? "missing" : `${x.length} values`);
    const B = x.length / nIn;
    if (t === undefined || t.length !== B * nOut) fail("shape_mismatch", `targets.${this.outputName}`, `${B * nOut} values`, t === undefined ? "missing" : `${t.length} values`);
    if (this.inputs.byteLength < 8 * x.length) this.inputs = new SharedArrayBuffer(8 * x.length);
    if (this.targets.byteLength < 8 * t.length) this.targets = new SharedArrayBuffer(8 * t.length);
    new Float64Array(this.inputs).set(x as ArrayLike<number>);
    new Float64Array(this.targets).set(t as ArrayLike<number>);
    const slices = Math.min(this.workers, B);
    const tasks: Promise<number>[] = [];
    for (let i = 0; i < slices; i++) {
      const start = Math.floor((i * B) / slices);
      const end = Math.floor(((i + 1) * B) / slices);
      const task: SliceTask = {
        session: this.session,
        spec: this.net.spec,
        rule: this.config,
        kernels: this.kernels,
        parameters: this.params,
        deltas: this.slots[i] as SharedArray[],
        slice: i,
        inputs: this.inputs,
        targets: this.targets,
        inputName: this.inputName,
        outputName: this.outputName,
        inputSize: nIn,
        targetSize: nOut,
        start,
        count: end - start,
        total: B,
      };
      tasks.push(this.pool.run(task) as Promise<number>);
    }
    await Promise.all(tasks);
    // deterministic reduction: the slices' mean changes weighted by their share of the batch, slice 0 first
    out.clear();
    const K = this.net.kernels;
    const targetsOut: FloatArray[] = [...out.biases];
    this.net.connections.forEach((c) => {
      targetsOut.push(out.weights[c.index] as FloatArray);
      if (c.feedback.kind === "separate") targetsOut.push(out.feedback[c.index] ?? new Float64Array(0));
    });
    for (let i = 0; i < slices; i++) {
      const views = this.slotViews[i] as FloatArray[];
      const share = (Math.floor(((i + 1) * B) / slices) - Math.floor((i * B) / slices)) / B;
      targetsOut.forEach((dst, p) => {
        if (dst.length > 0) K.axpy(dst, views[p] as FloatArray, share, dst.length);
      });
    }
    return out;
  }

  /** Computes the change on the workers and applies it to {@link ParallelRule.net}. */
  async step(batch: Batch): Promise<ParameterDelta> {
    await this.computeDelta(batch, this.delta);
    applyDelta(this.net, this.delta);
    return this.delta;
  }

  /** Stops the worker threads. */
  async close(): Promise<void> {
    await this.pool.destroy();
  }
}
