/**
 * The training benchmark: Equilibrium Propagation on a 784-256-10 network (20 free + 4 nudged steps,
 * float32, input drive once per training step), microseconds per example at batch 1 and 64, for ebbflow on one
 * thread and on worker threads, and for peers measured in the same run: a NumPy implementation of the
 * same workload (`bench/peers/numpy_eqprop.py`, when python3 with NumPy is present) and TF.js on its CPU
 * backend (when `@tensorflow/tfjs-core` and `@tensorflow/tfjs-backend-cpu` are installed).
 * @module
 */
import { spawnSync } from "node:child_process";
import { existsSync } from "node:fs";
import { fileURLToPath } from "node:url";
import path from "node:path";
import { buildNetwork, type Network } from "../../network/network.js";
import type { NetworkSpec, NetworkSpecInput } from "../../network/spec.js";
import { createRule } from "../../rules/index.js";
import { createRandom } from "../../random/index.js";
import type { KernelBackend } from "../../kernels/backend.js";
import { typescriptBackend } from "../../kernels/typescript-backend.js";
import { loadWasmKernelsSync, selectBackend, wasmRelaxedSimdSupported, wasmSimdSupported } from "../../kernels/wasm/loader.js";
import { ParallelRule } from "../parallel/pool.js";
import { estimatedPeakGflops, machineFingerprint, type MachineFingerprint } from "./machine.js";

/** One measured figure. @category Benchmarks */
export interface BenchFigure {
  readonly implementation: string;
  readonly batch: number;
  readonly workers: number;
  /** Microseconds per training example (null when skipped). */
  readonly usPerExample: number | null;
  readonly note?: string | undefined;
}

/** One kernel figure. @category Benchmarks */
export interface KernelFigure {
  readonly kernel: string;
  readonly size: number;
  readonly dtype: "float32" | "float64";
  readonly gflops: number;
  readonly percentOfPeak: number | null;
}

/** A benchmark run, as written to JSON. @category Benchmarks */
export interface BenchReport {
  readonly kind: "ebbflow-bench";
  readonly version: 1;
  readonly created: string;
  readonly machine: MachineFingerprint;
  readonly peakGflops: number | null;
  readonly workload: string;
  /**
   * The kernels `selectBackend("auto")` picks on this engine (what training runs on by default, in the main
   * thread and, attached to its memory, in worker threads), and whether relaxed SIMD is on without a flag.
   */
  readonly selected?: { readonly kernels: string; readonly relaxedByDefault: boolean } | undefined;
  readonly figures: readonly BenchFigure[];
  readonly kernels: readonly KernelFigure[];
  /**
   * Memory of a network being trained, per batch size (TypeScript kernels, one thread): the bytes of
   * its parameters and of one state per unit and pattern (the workload keeps no traces), and the
   * bytes of every array allocated through the network's kernels up to the end of its first training
   * step (parameters, settling buffers, phase snapshots, scratch, change arrays).
   */
  readonly memory: readonly { readonly batch: number; readonly parameterBytes: number; readonly stateBytes: number; readonly measuredBytes: number }[];
}

/** The benchmark's network (overridable by a model file). @category Benchmarks */
export function benchNetwork(dtype: "float32" | "float64" = "float32"): NetworkSpecInput {
  return {
    dtype,
    seed: 1,
    layers: [
      { name: "image", size: 784, role: "input" },
      { name: "hidden", size: 256, role: "hidden" },
      { name: "digit", size: 10, role: "output" },
    ],
    connections: [
      { from: "image", to: "hidden", feedback: { kind: "tied", gain: 1 } },
      { from: "hidden", to: "digit", feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.5, maxSteps: 20, tolerance: 1e-30 },
  };
}

function batchOf(net: Network, B: number): { inputs: Record<string, Float32Array>; targets: Record<string, Float32Array> } {
  const rng = createRandom(7).child("bench-data");
  const input = net.inputLayers[0]!;
  const output = net.outputLayers[0]!;
  const x = new Float32Array(B * input.size);
  for (let i = 0; i < x.length; i++) x[i] = rng.uniform() < 0.15 ? 1 : 0;
  const t = new Float32Array(B * output.size);
  for (let p = 0; p < B; p++) t[p * output.size + rng.int(output.size)] = 1;
  return { inputs: { [input.name]: x }, targets: { [output.name]: t } };
}

async function timeIt(fn: () => unknown, seconds: number): Promise<number> {
  await fn();
  let reps = 0;
  const t0 = performance.now();
  let t = t0;
  while (t - t0 < seconds * 1000) {
    await fn();
    reps++;
    t = performance.now();
  }
  return (t - t0) / reps / 1000;
}

/**
 * The NumPy peer, run twice: with NumPy's default BLAS threads (every core) and restricted to one
 * thread (`OPENBLAS_NUM_THREADS=1` and friends), the like-for-like peer of ebbflow on one thread.
 */
async function numpyPeer(batches: number[], seconds: number): Promise<BenchFigure[]> {
  // beside the package (dist/node/bench -> bench/peers), or in the working folder (the repository's bench build)
  const candidates = [fileURLToPath(new URL("../../../bench/peers/numpy_eqprop.py", import.meta.url)), path.resolve("bench/peers/numpy_eqprop.py")];
  const script = candidates.find((f) => existsSync(f)) ?? (candidates[0] as string);
  const out: BenchFigure[] = [];
  for (const [implementation, env] of [
    ["numpy", {}],
    ["numpy-1-thread", { OPENBLAS_NUM_THREADS: "1", OMP_NUM_THREADS: "1", MKL_NUM_THREADS: "1" }],
  ] as const) {
    const skip = (note: string) => batches.map((b) => ({ implementation, batch: b, workers: 1, usPerExample: null, note }));
    if (!existsSync(script)) {
      out.push(...skip(`peer script not found (${script})`));
      continue;
    }
    const r = spawnSync("python3", [script, String(seconds), ...batches.map(String)], { encoding: "utf8", timeout: 600_000, env: { ...process.env, ...env } });
    if (r.error !== undefined || r.status !== 0) {
      out.push(...skip(`skipped: python3 with NumPy not available (${(r.stderr || r.error?.message || "").trim().split("\n").at(-1) ?? ""})`));
      continue;
    }
    const res = JSON.parse(r.stdout) as { numpy: string; threads?: string; results: Record<string, number> };
    out.push(...batches.map((b) => ({ implementation, batch: b, workers: 1, usPerExample: res.results[String(b)] ?? null, note: `NumPy ${res.numpy}, BLAS threads ${res.threads ?? "default"}` })));
  }
  return out;
}

async function tfjsPeer(batches: number[], seconds: number): Promise<BenchFigure[]> {
  let tf: typeof import("@tensorflow/tfjs-core");
  try {
    tf = await import("@tensorflow/tfjs-core");
    await import("@tensorflow/tfjs-backend-cpu");
    tf.env().set("IS_TEST", true);
    await tf.setBackend("cpu");
  } catch {
    return batches.map((b) => ({ implementation: "tfjs-cpu", batch: b, workers: 1, usPerExample: null, note: "skipped: the optional peers are not installed (npm install @tensorflow/tfjs-core@4.22.0 @tensorflow/tfjs-backend-cpu@4.22.0)" }));
  }
  const out: BenchFigure[] = [];
  for (const B of batches) {
    const rng = createRandom(1).child("tfjs");
    const lim1 = Math.sqrt(6 / (784 + 256));
    const lim2 = Math.sqrt(6 / (256 + 10));
    let w1 = tf.tensor2d(Float32Array.from({ length: 256 * 784 }, () => rng.between(-lim1, lim1)), [256, 784]);
    let w2 = tf.tensor2d(Float32Array.from({ length: 10 * 256 }, () => rng.between(-lim2, lim2)), [10, 256]);
    const x = tf.tensor2d(Float32Array.from({ length: B * 784 }, () => (rng.uniform() < 0.15 ? 1 : 0)), [B, 784]);
    const t = tf.cast(tf.oneHot(tf.tensor1d(Array.from({ length: B }, () => rng.int(10)), "int32"), 10), "float32");
    // the input drive once per training step, as ebbflow and the NumPy peer compute it
    const settle = (drive: import("@tensorflow/tfjs-core").Tensor2D, h: import("@tensorflow/tfjs-core").Tensor2D, y: import("@tensorflow/tfjs-core").Tensor2D, steps: number, nudge: boolean) => {
      for (let s = 0; s < steps; s++) {
        const etaH = tf.add(drive, tf.matMul(y, w2));
        let etaY = tf.matMul(h, w2, false, true);
        if (nudge) etaY = tf.add(etaY, tf.mul(0.5, tf.sub(t, y)));
        h = tf.add(h, tf.mul(0.5, tf.sub(tf.sigmoid(etaH), h))) as import("@tensorflow/tfjs-core").Tensor2D;
        y = tf.add(y, tf.mul(0.5, tf.sub(tf.sigmoid(etaY), y))) as import("@tensorflow/tfjs-core").Tensor2D;
      }
      return [h, y] as const;
    };
    const step = () => {
      const [nw1, nw2] = tf.tidy(() => {
        const drive = tf.matMul(x, w1, false, true) as import("@tensorflow/tfjs-core").Tensor2D;
        const [h0, y0] = settle(drive, tf.zeros([B, 256]), tf.zeros([B, 10]), 20, false);
        const [hb, yb] = settle(drive, h0, y0, 4, true);
        const s = 0.01 / (0.5 * B);
        return [tf.add(w1, tf.mul(s, tf.matMul(tf.sub(hb, h0), x, true))), tf.add(w2, tf.mul(s, tf.sub(tf.matMul(yb, hb, true), tf.matMul(y0, h0, true))))];
      });
      w1.dispose();
      w2.dispose();
      w1 = nw1 as import("@tensorflow/tfjs-core").Tensor2D;
      w2 = nw2 as import("@tensorflow/tfjs-core").Tensor2D;
    };
    const sec = await timeIt(step, seconds);
    out.push({ implementation: "tfjs-cpu", batch: B, workers: 1, usPerExample: (sec / B) * 1e6, note: `tfjs ${tf.version_core}` });
    tf.dispose([w1, w2, x, t]);
  }
  return out;
}

function kernelFigures(backends: readonly KernelBackend[], peak: number | null, seconds: number): Promise<KernelFigure[]> {
  const out: KernelFigure[] = [];
  const run = async () => {
    for (const be of backends) {
      for (const dtype of ["float32", "float64"] as const) {
        for (const n of [64, 256]) {
          const a = be.allocate(dtype, n * n).fill(0.5);
          const b = be.allocate(dtype, n * n).fill(0.25);
          const c = be.allocate(dtype, n * n);
          for (const [label, tA, tB] of [["NN", false, false], ["NT", false, true]] as const) {
            // median of 7 short samples (as bench/wasm.ts): one long mean lets a burst of other work through
            const samples: number[] = [];
            for (let q = 0; q < 7; q++) samples.push(await timeIt(() => be.gemm(c, a, b, n, n, n, tA, tB, 1, 0), seconds / 7));
            const sec = [...samples].sort((x, y) => x - y)[3] as number;
            const gflops = (2 * n * n * n) / sec / 1e9;
            const p = peak === null ? null : dtype === "float32" ? peak : peak / 2;
            out.push({ kernel: `gemm ${label} (${be.name})`, size: n, dtype, gflops, percentOfPeak: p === null ? null : (100 * gflops) / p });
          }
        }
      }
    }
    return out;
  };
  return run();
}

/** The kernel backends this engine offers: TypeScript, WebAssembly SIMD, and relaxed SIMD when validated. */
function availableBackends(): KernelBackend[] {
  const list: KernelBackend[] = [typescriptBackend];
  if (wasmSimdSupported()) list.push(loadWasmKernelsSync({ relaxed: false, arenaBytes: 64 * 2 ** 20 }));
  if (wasmRelaxedSimdSupported()) list.push(loadWasmKernelsSync({ relaxed: true, arenaBytes: 64 * 2 ** 20 }));
  return list;
}

/** Whether this Node line enables WebAssembly relaxed SIMD without a flag (Node 22 and later). */
function relaxedByDefault(): boolean {
  return Number(process.versions.node.split(".")[0]) >= 22 && wasmRelaxedSimdSupported();
}

/** Options of {@link runBench}. @category Benchmarks */
export interface BenchOptions {
  readonly model?: NetworkSpec | undefined;
  readonly batches?: readonly number[] | undefined;
  readonly workers?: readonly number[] | undefined;
  readonly seconds?: number | undefined;
  readonly peers?: boolean | undefined;
  /** Rounds in which every ebbflow contender of a batch size and backend is timed in turn (median taken; default 3). */
  readonly rounds?: number | undefined;
  readonly log?: ((line: string) => void) | undefined;
}

/** Runs the training benchmark and returns its report. @category Benchmarks */
export async function runBench(options: BenchOptions = {}): Promise<BenchReport> {
  const machine = machineFingerprint();
  const peak = estimatedPeakGflops(machine);
  const seconds = options.seconds ?? 1;
  const batches = [...(options.batches ?? [1, 64])];
  const workers = [...(options.workers ?? [1, 2])];
  const log = options.log ?? (() => undefined);
  const spec = options.model ?? (benchNetwork() as NetworkSpec);
  const figures: BenchFigure[] = [];
  const memory: { batch: number; parameterBytes: number; stateBytes: number; measuredBytes: number }[] = [];
  const backends = availableBackends();
  const rounds = Math.max(1, Math.floor(options.rounds ?? 3));
  // the peers' workload: 20 free steps (the network's maxSteps) and 4 nudged steps
  const rule = { rule: "eqprop" as const, beta: 0.5, rate: 0.01, nudgedSteps: 4 };
  for (const B of batches) {
    for (const be of backends) {
      // one contender per worker count, set up first, then timed in turn for `rounds` rounds (medians):
      // the machine's drift then falls on every contender alike, and the worker ratios compare like with like
      const contenders: { w: number; step: () => unknown; close: () => Promise<void>; times: number[] }[] = [];
      try {
        for (const w of workers) {
          // workers attach to the main thread's build; on Node 20 relaxed SIMD needs a flag that worker
          // threads do not validate with, so the relaxed build runs with workers only where it is on by default
          if (w > 1 && be.name === "wasm-relaxed-simd" && !relaxedByDefault()) continue;
          if (w > 1 && B < w) continue;
          const data = batchOf(buildNetwork(spec), B);
          // count every array the network, its settler, snapshots and the rule allocate
          let allocated = 0;
          const counted: KernelBackend = { ...be, allocate: (dtype, n) => ((allocated += n * (dtype === "float32" ? 4 : 8)), be.allocate(dtype, n)) };
          const net = buildNetwork({ ...spec, dynamics: { ...spec.dynamics, maxSteps: 20, tolerance: 1e-30 } }, { backend: w === 1 && be === typescriptBackend ? counted : be });
          if (w === 1) {
            const r = createRule(net, rule);
            r.step(data);
            if (be === typescriptBackend) {
              const width = net.dtype === "float32" ? 4 : 8;
              const parameterBytes = [...net.layers.map((l) => (l.role === "input" ? 0 : l.bias.byteLength)), ...net.connections.map((c) => c.weights.byteLength)].reduce((x, y) => x + y, 0);
              memory.push({ batch: B, parameterBytes, stateBytes: B * net.layers.reduce((x, l) => x + l.size, 0) * width, measuredBytes: allocated });
            }
            contenders.push({ w, step: () => r.step(data), close: async () => undefined, times: [] });
          } else {
            const par = await ParallelRule.create(net, rule, w);
            contenders.push({ w, step: () => par.step(data), close: () => par.close(), times: [] });
          }
        }
        for (let round = 0; round < rounds; round++) {
          for (const c of contenders) c.times.push(await timeIt(c.step, seconds / rounds));
        }
      } finally {
        for (const c of contenders) await c.close();
      }
      for (const c of contenders) {
        const sorted = [...c.times].sort((x, y) => x - y);
        const sec = sorted[Math.floor(sorted.length / 2)] as number;
        const fig = { implementation: `ebbflow-${be.name}`, batch: B, workers: c.w, usPerExample: (sec / B) * 1e6 };
        figures.push(fig);
        log(`${fig.implementation} batch ${B} workers ${c.w}: ${fig.usPerExample.toFixed(1)} µs/example (median of ${rounds} rounds)`);
      }
    }
  }
  if (options.peers !== false) {
    for (const f of [...(await numpyPeer(batches, seconds)), ...(await tfjsPeer(batches, seconds))]) {
      figures.push(f);
      log(`${f.implementation} batch ${f.batch}: ${f.usPerExample === null ? f.note : `${f.usPerExample.toFixed(1)} µs/example`}`);
    }
  }
  const kernels = await kernelFigures(backends, peak, Math.min(seconds, 0.5));
  return {
    kind: "ebbflow-bench",
    version: 1,
    created: new Date().toISOString(),
    machine,
    peakGflops: peak,
    selected: { kernels: selectBackend("auto").name, relaxedByDefault: relaxedByDefault() },
    workload: "eqprop (one-sided) on 784-256-10 (or the model given), 20 free + 4 nudged steps, rate dynamics, float32, input drive once per training step (shared by both phases)",
    figures,
    kernels,
    memory,
  };
}

/** Renders a report, or two side by side, as a text table. @category Benchmarks */
export function formatBench(a: BenchReport, b?: BenchReport): string {
  const key = (f: BenchFigure) => `${f.implementation} | batch ${f.batch} | ${f.workers} worker${f.workers > 1 ? "s" : ""}`;
  const rows = new Map<string, [BenchFigure | undefined, BenchFigure | undefined]>();
  for (const f of a.figures) rows.set(key(f), [f, undefined]);
  for (const f of b?.figures ?? []) rows.set(key(f), [rows.get(key(f))?.[0], f]);
  const v = (f: BenchFigure | undefined) => (f === undefined ? "-" : f.usPerExample === null ? "skipped" : f.usPerExample.toFixed(1));
  const lines = [`A: ${a.machine.cpu}, ${a.machine.cores} cores, Node ${a.machine.node}, ${a.created}${a.selected ? `; default kernels ${a.selected.kernels}${a.selected.relaxedByDefault ? " (relaxed SIMD on by default)" : ""}` : ""}`];
  if (b !== undefined) lines.push(`B: ${b.machine.cpu}, ${b.machine.cores} cores, Node ${b.machine.node}, ${b.created}`);
  lines.push("", b === undefined ? "| workload | µs per example |" : "| workload | A µs/example | B µs/example | B/A |", b === undefined ? "| --- | --- |" : "| --- | --- | --- | --- |");
  for (const [k, [fa, fb]] of rows) {
    if (b === undefined) lines.push(`| ${k} | ${v(fa)} |`);
    else {
      const ratio = fa?.usPerExample && fb?.usPerExample ? (fb.usPerExample / fa.usPerExample).toFixed(2) : "-";
      lines.push(`| ${k} | ${v(fa)} | ${v(fb)} | ${ratio} |`);
    }
  }
  const base = (impl: string, B: number, w = 1) => a.figures.find((f) => f.implementation === impl && f.batch === B && f.workers === w)?.usPerExample ?? null;
  lines.push("", "ratios in run A (time of peer / time of ebbflow on one thread; > 1 means ebbflow is faster):");
  for (const B of [...new Set(a.figures.map((f) => f.batch))]) {
    const ourOptions = a.figures.filter((f) => f.implementation.startsWith("ebbflow-") && f.batch === B && f.workers === 1 && f.usPerExample !== null);
    const best = ourOptions.sort((x, y) => (x.usPerExample as number) - (y.usPerExample as number))[0];
    const ours = best?.usPerExample ?? null;
    if (best !== undefined) lines.push(`  batch ${B}: fastest ebbflow on one thread: ${best.implementation}`);
    for (const peer of ["numpy", "numpy-1-thread", "tfjs-cpu"]) {
      const p = base(peer, B);
      if (ours !== null && p !== null) lines.push(`  batch ${B}: ${peer} / ebbflow = ${(p / ours).toFixed(2)}`);
    }
    for (const impl of [...new Set(a.figures.filter((f) => f.implementation.startsWith("ebbflow-")).map((f) => f.implementation))]) {
      const one = base(impl, B, 1);
      const two = base(impl, B, 2);
      if (one !== null && two !== null) lines.push(`  batch ${B}: ${impl} throughput with 2 workers / 1 worker = ${(one / two).toFixed(2)}`);
    }
  }
  lines.push("", `kernels (peak estimate ${a.peakGflops === null ? "unknown" : `${a.peakGflops.toFixed(0)} GFLOP/s per core, float32`}):`);
  for (const k of a.kernels) lines.push(`  ${k.kernel} ${k.size} ${k.dtype}: ${k.gflops.toFixed(2)} GFLOP/s${k.percentOfPeak === null ? "" : ` (${k.percentOfPeak.toFixed(1)}% of peak)`}`);
  lines.push("");
  for (const m of a.memory ?? []) {
    lines.push(`memory at batch ${m.batch}: parameters ${m.parameterBytes} B + states ${m.stateBytes} B; measured ${m.measuredBytes} B = ${(m.measuredBytes / (m.parameterBytes + m.stateBytes)).toFixed(2)}× (target <= 1.25×)`);
  }
  return lines.join("\n");
}
