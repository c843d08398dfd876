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
import { parseNetwork, type NetworkSpec, type NetworkSpecInput } from "../../network/spec.js";
import { createRule } from "../../rules/index.js";
import { createRandom } from "../../random/index.js";
import type { KernelBackend } from "../../kernels/backend.js";
import { typescriptBackend } from "../../kernels/typescript-backend.js";
import { loadWasmKernelsSync, selectBackend, wasmRelaxedSimdSupported, wasmSimdSupported } from "../../kernels/wasm/loader.js";
import { ParallelRule } from "../parallel/pool.js";
import { estimatedPeakGflops, machineFingerprint, type MachineFingerprint } from "./machine.js";
import { describePeerWorkload, peerWorkload, type PeerWorkload } from "./peer-workload.js";

/** One measured figure. @category Benchmarks */
export interface BenchFigure {
  readonly implementation: string;
  readonly batch: number;
  readonly workers: number;
  /** Microseconds per training example (null when skipped). */
  readonly usPerExample: number | null;
  readonly note?: string | undefined;
  /**
   * What this contender ran, as it reports it (`describePeerWorkload`); a ratio is printed only between figures
   * whose workloads are equal. Absent in reports written before this field existed.
   */
  readonly workload?: string | undefined;
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
 * Exported for the test of like-for-like workloads (not from the package). @internal
 */
export async function numpyPeer(batches: number[], seconds: number, work: PeerWorkload): Promise<BenchFigure[]> {
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
    const r = spawnSync("python3", [script, String(seconds), ...batches.map(String), "--workload", JSON.stringify(work)], { encoding: "utf8", timeout: 600_000, env: { ...process.env, ...env } });
    if (r.error !== undefined || r.status !== 0) {
      out.push(...skip(`skipped: python3 with NumPy not available (${(r.stderr || r.error?.message || "").trim().split("\n").at(-1) ?? ""})`));
      continue;
    }
    const res = JSON.parse(r.stdout) as { numpy: string; threads?: string; workload?: string; results: Record<string, number> };
    out.push(...batches.map((b) => ({ implementation, batch: b, workers: 1, usPerExample: res.results[String(b)] ?? null, note: `NumPy ${res.numpy}, BLAS threads ${res.threads ?? "default"}`, workload: res.workload })));
  }
  return out;
}

/** The TF.js peer on its CPU backend (float32 only). @internal exported for the test of like-for-like workloads */
export async function tfjsPeer(batches: number[], seconds: number, work: PeerWorkload): Promise<BenchFigure[]> {
  let tf: typeof import("@tensorflow/tfjs-core");
  try {
    tf = await import("@tensorflow/tfjs-core");
    await import("@tensorflow/tfjs-backend-cpu");
    tf.env().set("IS_TEST", true);
    await tf.setBackend("cpu");
  } catch {
    return batches.map((b) => ({ implementation: "tfjs-cpu", batch: b, workers: 1, usPerExample: null, note: "skipped: the optional peers are not installed (npm install @tensorflow/tfjs-core@4.22.0 @tensorflow/tfjs-backend-cpu@4.22.0)" }));
  }
  type T2 = import("@tensorflow/tfjs-core").Tensor2D;
  const T = tf;
  const dtype = work.dtype === "float32" ? "float32" : null;
  if (dtype === null) return batches.map((b) => ({ implementation: "tfjs-cpu", batch: b, workers: 1, usPerExample: null, note: "skipped: the TF.js CPU backend computes in float32 only" }));
  // the unit functions of createUnit (logistic with gain 1 and offset 0)
  const unit = (kind: string, z: T2): T2 =>
    (kind === "logistic" ? T.sigmoid(z) : kind === "hard-sigmoid" ? T.clipByValue(z, 0, 1) : kind === "relu" ? T.relu(z) : kind === "tanh" ? T.tanh(z) : z) as T2;
  const sizes = work.sizes;
  const depth = sizes.length - 1;
  const out: BenchFigure[] = [];
  for (const B of batches) {
    const rng = createRandom(1).child("tfjs");
    let ws: T2[] = [];
    for (let l = 0; l < depth; l++) {
      const lim = Math.sqrt(6 / (sizes[l]! + sizes[l + 1]!));
      ws.push(T.tensor2d(Float32Array.from({ length: sizes[l + 1]! * sizes[l]! }, () => rng.between(-lim, lim)), [sizes[l + 1]!, sizes[l]!]));
    }
    const nOut = sizes[depth]!;
    const x = T.tensor2d(Float32Array.from({ length: B * sizes[0]! }, () => (rng.uniform() < 0.15 ? 1 : 0)), [B, sizes[0]!]);
    const t = T.cast(T.oneHot(T.tensor1d(Array.from({ length: B }, () => rng.int(nOut)), "int32"), nOut), "float32") as T2;
    // the input drive once per training step, as ebbflow and the NumPy peer compute it; biases stay 0 (not timed apart)
    const settle = (drive: T2, start: T2[], steps: number, nudge: boolean): T2[] => {
      let hs = start;
      for (let s = 0; s < steps; s++) {
        const etas = hs.map((h, l) => {
          let eta = l === 0 ? drive : (T.matMul(hs[l - 1]!, ws[l]!, false, true) as T2);
          if (l + 1 < depth) eta = T.add(eta, T.matMul(hs[l + 1]!, ws[l + 1]!)) as T2;
          else if (nudge) eta = T.add(eta, T.mul(work.beta, T.sub(t, h))) as T2;
          return eta;
        });
        hs = hs.map((h, l) => T.add(h, T.mul(work.dt, T.sub(unit(work.units[l]!, etas[l]!), h))) as T2);
      }
      return hs;
    };
    const step = () => {
      const next = T.tidy(() => {
        const drive = T.matMul(x, ws[0]!, false, true) as T2;
        const h0 = settle(drive, sizes.slice(1).map((n) => T.zeros([B, n]) as T2), work.freeSteps, false);
        const hb = settle(drive, h0, work.nudgedSteps, true);
        const s = work.rate / (work.beta * B);
        return ws.map((w, l) =>
          l === 0 ? T.add(w, T.mul(s, T.matMul(T.sub(hb[0]!, h0[0]!), x, true))) : T.add(w, T.mul(s, T.sub(T.matMul(hb[l]!, hb[l - 1]!, true), T.matMul(h0[l]!, h0[l - 1]!, true)))),
        ) as T2[];
      });
      for (const w of ws) w.dispose();
      ws = next;
    };
    const sec = await timeIt(step, seconds);
    const ran: PeerWorkload = { ...work, sizes: [ws[0]!.shape[1], ...ws.map((w) => w.shape[0])] };
    out.push({ implementation: "tfjs-cpu", batch: B, workers: 1, usPerExample: (sec / B) * 1e6, note: `tfjs ${T.version_core}`, workload: describePeerWorkload(ran) });
    T.dispose([...ws, x, t]);
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
  const forPeers = peerWorkload(parseNetwork(spec), { freeSteps: 20, nudgedSteps: rule.nudgedSteps, beta: rule.beta, rate: rule.rate });
  const workload = "workload" in forPeers ? describePeerWorkload(forPeers.workload) : `the model's network, eqprop one-sided, 20 free + 4 nudged steps (the peers do not run it: ${forPeers.refused})`;
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
        const fig = { implementation: `ebbflow-${be.name}`, batch: B, workers: c.w, usPerExample: (sec / B) * 1e6, workload };
        figures.push(fig);
        log(`${fig.implementation} batch ${B} workers ${c.w}: ${fig.usPerExample.toFixed(1)} µs/example (median of ${rounds} rounds)`);
      }
    }
  }
  if (options.peers !== false) {
    const peers =
      "workload" in forPeers
        ? [...(await numpyPeer(batches, seconds, forPeers.workload)), ...(await tfjsPeer(batches, seconds, forPeers.workload))]
        : ["numpy", "numpy-1-thread", "tfjs-cpu"].flatMap((implementation) => batches.map((b) => ({ implementation, batch: b, workers: 1, usPerExample: null, note: `skipped: the peers do not run this model (${forPeers.refused})` })));
    for (const f of peers) {
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
    workload,
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
      const ran = a.figures.find((f) => f.implementation === peer && f.batch === B && f.workers === 1)?.workload;
      if (ours === null || p === null) continue;
      // a ratio only for the same work: the peer's own description of what it ran must be ebbflow's
      if (ran === best?.workload && ran !== undefined) lines.push(`  batch ${B}: ${peer} / ebbflow = ${(p / ours).toFixed(2)}`);
      else lines.push(`  batch ${B}: ${peer}: no ratio (it ran ${ran === undefined ? "a workload it did not describe" : JSON.stringify(ran)}, ebbflow ${JSON.stringify(best?.workload ?? a.workload)})`);
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
