/**
 * Batch scaling on the published digits setting (bench/experiments/digits-eqprop-2017.json): µs per
 * training example at batch 20 and 64 on real digit images, with the activity-sparse update on and off
 * (timed in turn, median of rounds, so the drift of a shared machine falls on both alike), and the
 * measured fractions of hidden units whose phase difference was non-zero and of image->hidden entries
 * that are active (that unit and a non-zero pixel in some pattern of the batch). EBBFLOW_BATCH_HIDDEN overrides
 * the hidden size (comma-separated list), EBBFLOW_BATCH_KERNELS the kernels (auto, typescript, wasm).
 */
import { buildNetwork, selectBackend, createRule, Settler, Snapshot, type BackendChoice } from "../src/index.js";
import { resolveData } from "../src/node/index.js";
import { readModelArgument } from "../src/cli/inputs.js";
import { setSparseUpdateCrossover, SPARSE_UPDATE_CROSSOVER } from "../src/rules/base.js";

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)] as number;
}

export async function run(): Promise<void> {
  const { experiment } = await readModelArgument("bench/experiments/digits-eqprop-2017.json");
  const data = experiment.data!;
  const { train } = await resolveData(data.source, { testFraction: 0, seed: 1, split: data.split });
  const hiddens = (process.env.EBBFLOW_BATCH_HIDDEN ?? "500").split(",").map(Number);
  const backend = selectBackend((process.env.EBBFLOW_BATCH_KERNELS ?? "auto") as BackendChoice);
  console.log(`kernels ${backend.name}; ${train.size} training images`);
  console.log("| hidden | batch | µs per example, sparse update | µs per example, dense update | dense / sparse | active hidden rows | active entries of image->hidden |");
  console.log("| --- | --- | --- | --- | --- | --- | --- |");
  for (const hidden of hiddens) {
    for (const B of [20, 64]) {
      const spec = { ...experiment.network, layers: experiment.network.layers.map((l) => (l.role === "hidden" ? { ...l, size: hidden } : l)) };
      const net = buildNetwork(spec, { backend });
      const rule = createRule(net, experiment.rules[0]!);
      const k = train.inputSize;
      const batches = Math.floor(train.size / B);
      const xs = new Float32Array(train.inputs);
      const ts = new Float32Array(train.targets);
      let cursor = 0;
      const next = () => {
        const b = cursor++ % batches;
        return { inputs: { image: xs.subarray(b * B * k, (b + 1) * B * k) }, targets: { digit: ts.subarray(b * B * 10, (b + 1) * B * 10) } };
      };
      // warm up and let the weights leave their initial state
      for (let i = 0; i < 40; i++) rule.step(next());
      const times: Record<string, number[]> = { sparse: [], dense: [] };
      for (let round = 0; round < 6; round++) {
        for (const mode of ["sparse", "dense"] as const) {
          setSparseUpdateCrossover(mode === "sparse" ? SPARSE_UPDATE_CROSSOVER : { typescript: 0, wasm: 0, wasmRows: 0 });
          const steps = Math.max(4, Math.round(1200 / B));
          const t0 = performance.now();
          for (let i = 0; i < steps; i++) rule.step(next());
          times[mode]!.push(((performance.now() - t0) * 1000) / (steps * B));
        }
      }
      setSparseUpdateCrossover(SPARSE_UPDATE_CROSSOVER);
      // the fraction of hidden units whose phase difference is non-zero in some pattern (the rows the update computes), over 20 batches
      const settler = new Settler(net, B);
      const a = new Snapshot(net, B);
      const c = new Snapshot(net, B, a);
      const h = net.layers.find((l) => l.role === "hidden")!;
      let rows = 0;
      let entries = 0;
      for (let q = 0; q < 20; q++) {
        const batch = next();
        settler.settle({ phase: "free", inputs: batch.inputs, maxSteps: 20 }, a);
        settler.settle({ phase: "nudged", beta: 0.5, cost: { loss: "squared-error", on: "rate", factor: 2 }, reuseDrive: true, inputs: batch.inputs, targets: batch.targets, start: a, maxSteps: 4 }, c);
        const x = a.activity[h.index]!;
        const y = c.activity[h.index]!;
        let r = 0;
        for (let i = 0; i < hidden; i++) {
          for (let b = 0; b < B; b++) {
            if (x[b * hidden + i] !== y[b * hidden + i]) {
              r++;
              break;
            }
          }
        }
        // pixels that are non-zero in some image of the batch (the active columns of image->hidden)
        const img = batch.inputs.image;
        let cols = 0;
        for (let j = 0; j < k; j++) {
          for (let b = 0; b < B; b++) {
            if (img[b * k + j] !== 0) {
              cols++;
              break;
            }
          }
        }
        rows += r;
        entries += (r * cols) / (hidden * k);
      }
      const active = rows / (20 * hidden);
      const activeEntries = entries / 20;
      const s = median(times.sparse!);
      const d = median(times.dense!);
      console.log(`| ${hidden} | ${B} | ${s.toFixed(1)} | ${d.toFixed(1)} | ${(d / s).toFixed(2)} | ${(active * 100).toFixed(0)}% | ${(activeEntries * 100).toFixed(0)}% |`);
    }
  }
}
