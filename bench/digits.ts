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
 * Like for like: each seed S sets the network's seed and the training seed, and the peers take ebbflow's random
 * draws (the initial weights, the order of the examples per epoch, the sign of β per batch; written to a
 * temporary folder, `--draws`), and the experiment's `training.persistentStates`, `persistentTestStates` and
 * `shuffle` (`--persistent`, `--persistent-test`, `--fixed-order`): the two then differ only by floating-point
 * rounding. Held-out accuracy is
 * scored by the experiment's tie policy for ebbflow; the peers print it both ways (first of the tied units, and a
 * tie as wrong), and both print the number of tied read-outs.
 *
 * Environment: EBBFLOW_DIGIT_EPOCHS (default: the experiment's 10), EBBFLOW_DIGIT_SEEDS (comma-separated
 * seeds, default 1), EBBFLOW_DIGIT_NUMPY_THREADS (`1,default`, or either alone), EBBFLOW_DIGIT_TRAINING (JSON
 * merged into the experiment's training section for both implementations, e.g. `{"shuffle":true,
 * "persistentStates":false}`), EBBFLOW_DIGIT_OWN_DRAWS=1 (the peers draw their own weights, order and signs from
 * NumPy's generator instead), EBBFLOW_DIGIT_BENCH=0 to skip the µs-per-example part.
 */
import { spawn } from "node:child_process";
import { existsSync, mkdtempSync, rmSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { createRequire } from "node:module";
import { buildNetwork, createRandom, Trainer, selectBackend, type Network, type TrainingOptionsInput } from "../src/index.js";
import { resolveData } from "../src/node/index.js";
import { readModelArgument } from "../src/cli/inputs.js";
import { formatBench, runBench } from "../src/node/bench/workload.js";

const EXPERIMENT = "bench/experiments/digits-eqprop-2017.json";
const PEER = "bench/peers/numpy_eqprop_digits.py";

/** One implementation's training run: per epoch, training seconds and held-out accuracy. */
interface Curve {
  readonly label: string;
  readonly seed: number;
  /** Per epoch: training seconds, held-out accuracy (the experiment's tie policy; the peers: first of the tied
   * units), held-out accuracy with a tie scored as wrong (peers only), tied read-outs. */
  readonly epochs: { seconds: number; test: number; strict?: number; ties: number }[];
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

/** What the peer is told about the run: epochs, seed, hidden size, the draws folder and the training flags. */
interface PeerRun {
  readonly epochs: number;
  readonly seed: number;
  readonly hidden: number;
  readonly draws: string | null;
  readonly flags: readonly string[];
}

function startPeer(run: PeerRun, oneThread: boolean): Peer | string {
  const { epochs, seed } = run;
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
  const args = [PEER, digits, String(epochs), String(seed), String(run.hidden), ...run.flags, ...(run.draws !== null ? ["--draws", run.draws] : [])];
  const child = spawn("python3", args, { env: { ...process.env, ...threads, EBBFLOW_PEER_LOCKSTEP: "1" }, stdio: ["pipe", "pipe", "pipe"] });
  let out = "";
  let err = "";
  let waiting: ((ok: boolean) => void) | null = null;
  child.stdout.on("data", (d: Buffer) => {
    out += d.toString();
    let nl: number;
    while ((nl = out.indexOf("\n")) >= 0) {
      const line = out.slice(0, nl);
      out = out.slice(nl + 1);
      const r = JSON.parse(line) as { epoch: number; seconds: number; test: number; test_ties_wrong: number; ties: number; numpy: string };
      curve.epochs.push({ seconds: r.seconds, test: r.test, strict: r.test_ties_wrong, ties: r.ties });
      console.log(`  ${label} (NumPy ${r.numpy}) seed ${seed} epoch ${r.epoch}: ${r.seconds.toFixed(2)} s, held-out ${(r.test * 100).toFixed(2)}% (ties as wrong ${(r.test_ties_wrong * 100).toFixed(2)}%, ${r.ties} tied)`);
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

/**
 * Writes ebbflow's random draws for the peer: the initial weights (float32), the example order of every epoch
 * (the Trainer's shuffle stream, src/train/loop.ts) and the sign of β of every batch (the rule's sign stream,
 * src/rules/eqprop.ts). The stream names mirror those files; were they to change, the peer would see other
 * draws than ebbflow (a fair run still, no longer the same draws).
 */
function writeDraws(net: Network, seed: number, epochs: number, examples: number, batchSize: number): string {
  const dir = mkdtempSync(path.join(os.tmpdir(), "ebbflow-digits-draws-"));
  const f32 = (a: ArrayLike<number>) => Buffer.from(Float32Array.from(a).buffer);
  writeFileSync(path.join(dir, "w1.f32"), f32(net.connections[0]!.weights));
  writeFileSync(path.join(dir, "w2.f32"), f32(net.connections[1]!.weights));
  const shuffle = createRandom(seed).child("train/shuffle");
  const order = new Int32Array(epochs * examples);
  for (let e = 0; e < epochs; e++) order.set(shuffle.permutation(examples), e * examples);
  writeFileSync(path.join(dir, "order.i32"), Buffer.from(order.buffer));
  const signs = createRandom(net.spec.seed).child("eqprop/sign");
  const s = new Int8Array(epochs * Math.ceil(examples / batchSize));
  for (let k = 0; k < s.length; k++) s[k] = signs.sign();
  writeFileSync(path.join(dir, "signs.i8"), Buffer.from(s.buffer));
  return dir;
}

/** ebbflow on the experiment file and the NumPy peers, epoch by epoch in turn (the same machine load for each). */
async function lockstep(epochs: number | undefined, seed: number, threadModes: boolean[], overrides: TrainingOptionsInput | object, skipped: string[]): Promise<Curve[]> {
  const { experiment } = await readModelArgument(EXPERIMENT);
  const backend = selectBackend("auto");
  // the seed sets the initial weights and the signs of β (the network's seed) and the order (the training seed)
  const net = buildNetwork({ ...experiment.network, seed }, { backend });
  const data = experiment.data!;
  const { train, test } = await resolveData(data.source, { testFraction: data.testFraction, seed, split: data.split, scale: data.scale });
  // the training accuracy is not needed here (it is not timed either way)
  const training = { ...experiment.training!, ...overrides, evaluateTrain: false, ...(epochs !== undefined ? { epochs } : {}) };
  const curve: Curve = { label: `ebbflow (${backend.name}, one thread)`, seed, epochs: [] };
  const own = process.env.EBBFLOW_DIGIT_OWN_DRAWS === "1";
  const draws = own ? null : writeDraws(net, seed, training.epochs, train.size, training.batchSize ?? 16);
  const trainer = new Trainer(net, experiment.rules[0]!, train, training, { test, seed });
  const hidden = net.layers.find((l) => l.role === "hidden")!.size;
  const flags = [...(training.persistentStates === true ? ["--persistent"] : []), ...(training.persistentTestStates === true ? ["--persistent-test"] : []), ...(training.shuffle === false ? ["--fixed-order"] : [])];
  const peers: Peer[] = [];
  for (const one of threadModes) {
    const p = startPeer({ epochs: training.epochs, seed, hidden, draws, flags }, one);
    if (typeof p === "string") skipped.push(p);
    else peers.push(p);
  }
  const live = new Set(peers);
  try {
    for (let e = 1; e <= training.epochs; e++) {
      const r = trainer.runEpoch();
      const ties = r.test?.ties ?? 0;
      curve.epochs.push({ seconds: r.seconds, test: r.test?.accuracy ?? 0, ties });
      console.log(`  ${curve.label} seed ${seed} epoch ${r.epoch}: ${r.seconds.toFixed(2)} s, held-out ${((r.test?.accuracy ?? 0) * 100).toFixed(2)}% (ties: ${trainer.options.ties}, ${ties} tied)`);
      for (const p of peers) {
        if (!live.has(p)) continue;
        if (!(await p.epoch())) {
          live.delete(p);
          if (p.curve.epochs.length === 0) skipped.push(p.failure());
        }
      }
    }
  } finally {
    if (draws !== null) rmSync(draws, { recursive: true, force: true });
  }
  return [curve, ...peers.filter((p) => p.curve.epochs.length > 0).map((p) => p.curve)];
}

const pct = (v: number | undefined) => (v === undefined ? "–" : `${(v * 100).toFixed(2)}%`);
const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;

export async function run(): Promise<void> {
  const epochsEnv = process.env.EBBFLOW_DIGIT_EPOCHS;
  const epochs = epochsEnv !== undefined ? Number(epochsEnv) : undefined;
  const seeds = (process.env.EBBFLOW_DIGIT_SEEDS ?? "1").split(",").map(Number);
  // NumPy's BLAS threads: one, and its default (every core; on a loaded machine that can be far slower)
  const threadModes = (process.env.EBBFLOW_DIGIT_NUMPY_THREADS ?? "1,default").split(",").map((t) => t.trim() === "1");
  const overrides = JSON.parse(process.env.EBBFLOW_DIGIT_TRAINING ?? "{}") as object;
  const { experiment } = await readModelArgument(EXPERIMENT);
  const n = epochs ?? experiment.training!.epochs;
  const t = { ...experiment.training!, ...overrides };
  console.log(`digits, published EqProp setting (${EXPERIMENT}): ${n} epochs, seeds ${seeds.join(", ")}; the same split and equations for NumPy (${PEER})`);
  console.log(`training: shuffle ${t.shuffle ?? true}, persistent states ${t.persistentStates ?? false}, held-out persistent states ${t.persistentTestStates ?? false}, ties ${t.ties ?? "wrong"}; ${process.env.EBBFLOW_DIGIT_OWN_DRAWS === "1" ? "NumPy draws its own weights, order and signs" : "NumPy takes ebbflow's draws (weights, order, signs)"}`);
  const curves: Curve[] = [];
  const skipped: string[] = [];
  for (const seed of seeds) curves.push(...(await lockstep(epochs, seed, threadModes, overrides, skipped)));
  console.log("\n| implementation | seed | s per epoch (median) | held-out after the last epoch | ties as wrong | tied | best held-out | s to 93% | s to 94% |");
  console.log("| --- | --- | --- | --- | --- | --- | --- | --- | --- |");
  curves.forEach((c) => {
    const to = (l: number) => secondsTo(c, l)?.toFixed(1) ?? "not reached";
    const last = c.epochs.at(-1);
    console.log(`| ${c.label} | ${c.seed} | ${median(c.epochs.map((e) => e.seconds)).toFixed(2)} | ${pct(last?.test)} | ${pct(last?.strict)} | ${last?.ties ?? "–"} | ${pct(Math.max(...c.epochs.map((e) => e.test)))} | ${to(0.93)} | ${to(0.94)} |`);
  });
  for (const label of [...new Set(curves.map((c) => c.label))]) {
    const cs = curves.filter((c) => c.label === label);
    const lasts = cs.map((c) => c.epochs.at(-1)?.test ?? 0);
    console.log(`${label}: held-out after the last epoch, mean over ${cs.length} seed(s) ${pct(mean(lasts))} (${pct(Math.min(...lasts))}–${pct(Math.max(...lasts))}); ${cs.filter((c) => secondsTo(c, 0.94) !== null).length} of ${cs.length} reached 94% at some epoch`);
  }
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
