/**
 * Handwritten digits, time to accuracy: the published Equilibrium Propagation setting (Scellier & Bengio
 * 2017; bench/experiments/digits-eqprop-2017.json, trained exactly as `ebbflow train` trains that file)
 * against a NumPy implementation of the same equations (bench/peers/numpy_eqprop_digits.py) with one BLAS
 * thread and with NumPy's default threads, on the same 8,000 / 2,000 split, in the same run, epoch by epoch
 * in turn (ebbflow's epoch, then each peer's, so a shared machine's load falls on all alike): seconds per
 * epoch (training only, evaluation excluded), held-out accuracy per epoch, and training seconds until the
 * held-out accuracy first reaches 93% and 94%. Then `ebbflow bench` (EqProp 784-256-10, µs per example) at
 * batch 1, 20 and 64 with its NumPy peer.
 *
 * Environment: EBBFLOW_DIGIT_EPOCHS (default: the experiment's 10), EBBFLOW_DIGIT_SEEDS (comma-separated
 * training seeds, default 1), EBBFLOW_DIGIT_NUMPY_THREADS (`1,default`, or either alone),
 * EBBFLOW_DIGIT_BENCH=0 to skip the µs-per-example part.
 */
import { spawn } from "node:child_process";
import { existsSync } from "node:fs";
import path from "node:path";
import { createRequire } from "node:module";
import { buildNetwork, Trainer, selectBackend, type EpochRecord } from "../src/index.js";
import { resolveData } from "../src/node/index.js";
import { readModelArgument } from "../src/cli/inputs.js";
import { formatBench, runBench } from "../src/node/bench/workload.js";

const EXPERIMENT = "bench/experiments/digits-eqprop-2017.json";
const PEER = "bench/peers/numpy_eqprop_digits.py";

/** One implementation's training run: per epoch, training seconds and held-out accuracy. */
interface Curve {
  readonly label: string;
  readonly seed: number;
  readonly epochs: { seconds: number; test: number }[];
}

/** Training seconds until the held-out accuracy first reaches `level` (null: never within the run). */
function secondsTo(c: Curve, level: number): number | null {
  let total = 0;
  for (const e of c.epochs) {
    total += e.seconds;
    if (e.test >= level) return total;
  }
  return null;
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)] as number;
}

/** A NumPy peer process that trains one epoch per line written to it (lockstep with ebbflow's epochs). */
interface Peer {
  readonly curve: Curve;
  /** Runs the peer's next epoch; resolves when its result line has arrived (false: the peer failed). */
  epoch(): Promise<boolean>;
  readonly failure: () => string;
}

function startPeer(epochs: number, seed: number, oneThread: boolean): Peer | string {
  let digits: string;
  try {
    digits = path.dirname(createRequire(import.meta.url).resolve("mnist/src/digits/0.json"));
  } catch {
    return "skipped: the mnist package is not installed";
  }
  if (!existsSync(PEER)) return `skipped: ${PEER} not found`;
  const threads = oneThread ? { OPENBLAS_NUM_THREADS: "1", OMP_NUM_THREADS: "1", MKL_NUM_THREADS: "1" } : {};
  const label = `NumPy, ${oneThread ? "one BLAS thread" : "default BLAS threads"}`;
  const curve: Curve = { label, seed, epochs: [] };
  const child = spawn("python3", [PEER, digits, String(epochs), String(seed)], { env: { ...process.env, ...threads, EBBFLOW_PEER_LOCKSTEP: "1" }, stdio: ["pipe", "pipe", "pipe"] });
  let out = "";
  let err = "";
  let waiting: ((ok: boolean) => void) | null = null;
  child.stdout.on("data", (d: Buffer) => {
    out += d.toString();
    let nl: number;
    while ((nl = out.indexOf("\n")) >= 0) {
      const line = out.slice(0, nl);
      out = out.slice(nl + 1);
      const r = JSON.parse(line) as { epoch: number; seconds: number; test: number; numpy: string };
      curve.epochs.push({ seconds: r.seconds, test: r.test });
      console.log(`  ${label} (NumPy ${r.numpy}) seed ${seed} epoch ${r.epoch}: ${r.seconds.toFixed(2)} s, held-out ${(r.test * 100).toFixed(2)}%`);
      waiting?.(true);
      waiting = null;
    }
  });
  child.stderr.on("data", (d: Buffer) => (err += d.toString()));
  const fail = () => {
    waiting?.(false);
    waiting = null;
  };
  child.on("error", fail);
  child.on("close", fail);
  return {
    curve,
    epoch: () =>
      new Promise<boolean>((resolve) => {
        if (child.exitCode !== null || child.killed) return resolve(false);
        waiting = resolve;
        child.stdin.write("\n");
      }),
    failure: () => `skipped: python3 with NumPy not available (${err.trim().split("\n").at(-1) ?? ""})`,
  };
}

/** ebbflow on the experiment file and the NumPy peers, epoch by epoch in turn (the same machine load for each). */
async function lockstep(epochs: number | undefined, seed: number, threadModes: boolean[], skipped: string[]): Promise<Curve[]> {
  const { experiment } = await readModelArgument(EXPERIMENT);
  const backend = selectBackend("auto");
  const net = buildNetwork(experiment.network, { backend });
  const data = experiment.data!;
  const { train, test } = await resolveData(data.source, { testFraction: data.testFraction, seed, split: data.split, scale: data.scale });
  // the training accuracy is not needed here (it is not timed either way)
  const training = { ...experiment.training!, evaluateTrain: false, ...(epochs !== undefined ? { epochs } : {}) };
  const curve: Curve = { label: `ebbflow (${backend.name}, one thread)`, seed, epochs: [] };
  const trainer = new Trainer(net, experiment.rules[0]!, train, training, { test, seed });
  const peers: Peer[] = [];
  for (const one of threadModes) {
    const p = startPeer(training.epochs, seed, one);
    if (typeof p === "string") skipped.push(p);
    else peers.push(p);
  }
  const live = new Set(peers);
  for (let e = 1; e <= training.epochs; e++) {
    const r = trainer.runEpoch();
    curve.epochs.push({ seconds: r.seconds, test: r.test?.accuracy ?? 0 });
    console.log(`  ${curve.label} seed ${seed} epoch ${r.epoch}: ${r.seconds.toFixed(2)} s, held-out ${((r.test?.accuracy ?? 0) * 100).toFixed(2)}%`);
    for (const p of peers) {
      if (!live.has(p)) continue;
      if (!(await p.epoch())) {
        live.delete(p);
        if (p.curve.epochs.length === 0) skipped.push(p.failure());
      }
    }
  }
  return [curve, ...peers.filter((p) => p.curve.epochs.length > 0).map((p) => p.curve)];
}

export async function run(): Promise<void> {
  const epochsEnv = process.env.EBBFLOW_DIGIT_EPOCHS;
  const epochs = epochsEnv !== undefined ? Number(epochsEnv) : undefined;
  const seeds = (process.env.EBBFLOW_DIGIT_SEEDS ?? "1").split(",").map(Number);
  // NumPy's BLAS threads: one, and its default (every core; on a loaded machine that can be far slower)
  const threadModes = (process.env.EBBFLOW_DIGIT_NUMPY_THREADS ?? "1,default").split(",").map((t) => t.trim() === "1");
  const { experiment } = await readModelArgument(EXPERIMENT);
  const n = epochs ?? experiment.training!.epochs;
  console.log(`digits, published EqProp setting (${EXPERIMENT}): ${n} epochs, seeds ${seeds.join(", ")}; the same split and equations for NumPy (${PEER})`);
  const curves: Curve[] = [];
  const skipped: string[] = [];
  for (const seed of seeds) curves.push(...(await lockstep(epochs, seed, threadModes, skipped)));
  console.log("\n| implementation | seed | s per epoch (median) | held-out after the last epoch | best held-out | s to 93% | s to 94% |");
  console.log("| --- | --- | --- | --- | --- | --- | --- |");
  curves.forEach((c) => {
    const to = (l: number) => secondsTo(c, l)?.toFixed(1) ?? "not reached";
    console.log(`| ${c.label} | ${c.seed} | ${median(c.epochs.map((e) => e.seconds)).toFixed(2)} | ${((c.epochs.at(-1)?.test ?? 0) * 100).toFixed(2)}% | ${(Math.max(...c.epochs.map((e) => e.test)) * 100).toFixed(2)}% | ${to(0.93)} | ${to(0.94)} |`);
  });
  for (const s of [...new Set(skipped)]) console.log(`NumPy: ${s}`);
  const ours = curves.filter((c) => c.label.startsWith("ebbflow"));
  const peer = curves.filter((c) => c.label === "NumPy, one BLAS thread");
  if (ours.length > 0 && peer.length > 0) {
    const r = median(peer.flatMap((c) => c.epochs.map((e) => e.seconds))) / median(ours.flatMap((c) => c.epochs.map((e) => e.seconds)));
    console.log(`epoch time, NumPy one thread / ebbflow (medians over epochs and seeds): ${r.toFixed(2)} (> 1: ebbflow faster)`);
  }
  if (process.env.EBBFLOW_DIGIT_BENCH === "0") return;
  console.log("\nebbflow bench, batch 1, 20, 64 (EqProp 784-256-10, one thread):");
  const report = await runBench({ seconds: 2, batches: [1, 20, 64], workers: [1], log: (l) => console.log("  " + l) });
  console.log(formatBench(report));
}
