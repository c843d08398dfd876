/**
 * Activity-sparse products (src/kernels/active.ts) against the dense product, two parts:
 *
 * 1. Kernels: `C += X·Wᵀ` with a fraction of each pattern's sending blocks active (whole blocks of the
 *    backend's width non-zero, the rest exactly 0), for the products of the published digits network and a
 *    second hidden layer (784→500, 500→10, 500→500) at batch 20 and 64, per backend; the active side pays its
 *    listing on every call, as in the settler. Timed in turn (rounds, medians), ratio dense / active (> 1: the
 *    active product is faster). ACTIVE_PRODUCT_CROSSOVER is where the ratio falls to about 1.
 * 1b. Tied feedback: `C += X·W` (X the receiving layer's activities, W stored receiving × sending) with a fraction
 *    of each pattern's entries non-zero (independently, the rest exactly 0), for the feedback paths 10→500
 *    (output to hidden) and 500→500 (between two hidden layers) at batch 1, 20 and 64: the dense gemm against
 *    listEntries + activeProductNN. ACTIVE_FEEDBACK_CROSSOVER is where the ratio falls to about 1.
 * 2. Training on the published digits setting (bench/experiments/digits-eqprop-2017.json, real images): µs per
 *    training example with the active products at the crossover and with them off, timed in turn, and the
 *    measured fraction of active blocks in the products the settler formed; for the tied feedback, the same with
 *    the feedback products dense, and the fraction of non-zero entries of the layers fed back. EBBFLOW_ACTIVE_HIDDEN sets the
 *    hidden layers ("500" or "500,500"; several networks separated by ";"), EBBFLOW_ACTIVE_KERNELS the kernels
 *    (typescript, simd, wasm: both WebAssembly builds, all), EBBFLOW_ACTIVE_PART the parts (kernels: 1 and 1b,
 *    feedback: 1b, training: 2; all when unset).
 */
import { setFlagsFromString } from "node:v8";
import { buildNetwork, createRule, type NetworkSpecInput } from "../src/index.js";
import { typescriptBackend } from "../src/kernels/index.js";
import type { KernelBackend } from "../src/kernels/backend.js";
import { ACTIVE_FEEDBACK_CROSSOVER, ACTIVE_PRODUCT_CROSSOVER } from "../src/kernels/active.js";
import { loadWasmKernelsSync, wasmRelaxedSimdSupported } from "../src/kernels/wasm/index.js";
import { activeProductCounts, setActiveFeedbackCrossover, setActiveProductCrossover } from "../src/network/active-drive.js";
import { resolveData } from "../src/node/index.js";
import { readModelArgument } from "../src/cli/inputs.js";

if (Number(process.versions.node.split(".")[0]) === 20) setFlagsFromString("--experimental-wasm-relaxed-simd");

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)] as number;
}

/** µs per call of each function, timed in turn for `rounds` rounds of about `ms` each; medians. */
function timeInTurn(fns: (() => void)[], ms: number, rounds = 5): number[] {
  for (const f of fns) f();
  const samples = fns.map(() => [] as number[]);
  for (let r = 0; r < rounds; r++) {
    fns.forEach((f, q) => {
      let reps = 0;
      const t0 = performance.now();
      let t = t0;
      while (t - t0 < ms) {
        f();
        reps++;
        t = performance.now();
      }
      samples[q]!.push(((t - t0) / reps) * 1000);
    });
  }
  return samples.map(median);
}

function backendsWanted(): KernelBackend[] {
  const which = process.env.EBBFLOW_ACTIVE_KERNELS ?? "all";
  const out: KernelBackend[] = [];
  if (which === "all" || which === "typescript") out.push(typescriptBackend);
  if (which === "all" || which === "wasm" || which === "simd") out.push(loadWasmKernelsSync({ relaxed: false }));
  if ((which === "all" || which === "wasm") && wasmRelaxedSimdSupported()) out.push(loadWasmKernelsSync({ relaxed: true }));
  return out;
}

function kernels(backends: KernelBackend[]): void {
  console.log("| backend | product | batch | active blocks | dense µs | active µs | dense / active |");
  console.log("| --- | --- | --- | --- | --- | --- | --- |");
  for (const be of backends) {
    const a = be.active!;
    const width = a.blockWidth("float32");
    for (const [k, n] of [
      [784, 500],
      [500, 10],
      [500, 500],
    ] as const) {
      for (const B of [20, 64]) {
        if (!a.exact(B, k)) continue;
        const w = be.allocate("float32", n * k);
        for (let i = 0; i < w.length; i++) w[i] = Math.sin(i) * 0.05;
        const x = be.allocate("float32", B * k);
        const c = be.allocate("float32", B * n);
        const index = a.indices(B * k);
        const start = a.indices(B + 1);
        for (const density of [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9]) {
          let s = 12345;
          const rnd = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
          for (let b = 0; b < B; b++) {
            for (let q = 0; q * width < k; q++) {
              const on = rnd() < density;
              for (let l = 0; l < width && q * width + l < k; l++) x[b * k + q * width + l] = on ? 0.25 + rnd() : 0;
            }
          }
          const listed = a.listActive(x, B, k, index, start) / (B * Math.floor(k / width));
          const ms = be.name === "typescript" ? 60 : 25;
          const [dense, active] = timeInTurn(
            [
              () => be.gemm(c, x, w, B, n, k, false, true, 1, 1),
              () => {
                a.listActive(x, B, k, index, start);
                a.activeProduct(c, x, w, B, n, k, index, start, 1, 1);
              },
            ],
            ms,
          ) as [number, number];
          console.log(`| ${be.name} | ${k}→${n} | ${B} | ${(listed * 100).toFixed(0)}% | ${dense.toFixed(1)} | ${active.toFixed(1)} | ${(dense / active).toFixed(2)} |`);
        }
      }
    }
  }
}

function feedbackKernels(backends: KernelBackend[]): void {
  console.log("\ntied feedback C += X·W (X: B × k receiving-layer activities, W: k × n); µs per call, listing included");
  console.log("| backend | feedback k→n | batch | non-zero entries | dense µs | active µs | dense / active |");
  console.log("| --- | --- | --- | --- | --- | --- | --- |");
  for (const be of backends) {
    const a = be.active!;
    for (const [k, n] of [
      [10, 500],
      [500, 500],
    ] as const) {
      for (const B of [1, 20, 64]) {
        if (!a.exactNN(B, k)) continue;
        const w = be.allocate("float32", k * n);
        for (let i = 0; i < w.length; i++) w[i] = Math.sin(i) * 0.05;
        const x = be.allocate("float32", B * k);
        const c = be.allocate("float32", B * n);
        const index = a.indices(B * k);
        const start = a.indices(B + 1);
        for (const density of [0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9]) {
          let s = 12345;
          const rnd = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
          for (let e = 0; e < B * k; e++) x[e] = rnd() < density ? 0.25 + rnd() : 0;
          const listed = a.listEntries(x, B, k, index, start) / (B * k);
          const ms = be.name === "typescript" ? 60 : 25;
          const [dense, active] = timeInTurn(
            [
              () => be.gemm(c, x, w, B, n, k, false, false, 1, 1),
              () => {
                a.listEntries(x, B, k, index, start);
                a.activeProductNN(c, x, w, B, n, k, index, start, 1, 1);
              },
            ],
            ms,
          ) as [number, number];
          console.log(`| ${be.name} | ${k}→${n} | ${B} | ${(listed * 100).toFixed(0)}% | ${dense.toFixed(1)} | ${active.toFixed(1)} | ${(dense / active).toFixed(2)} |`);
        }
      }
    }
  }
}

async function training(backends: KernelBackend[], hiddens: number[]): Promise<void> {
  const { experiment } = await readModelArgument("bench/experiments/digits-eqprop-2017.json");
  const data = experiment.data!;
  const { train } = await resolveData(data.source, { testFraction: 0, seed: 1, split: data.split });
  const base = experiment.network;
  const hiddenLayer = base.layers.find((l) => l.role === "hidden")!;
  const layers = [base.layers[0]!, ...hiddens.map((size, h) => ({ ...hiddenLayer, name: `hidden${h + 1}`, size })), base.layers[base.layers.length - 1]!];
  const names = layers.map((l) => l.name);
  const conn = base.connections[0]!;
  const spec: NetworkSpecInput = { ...base, layers, connections: names.slice(1).map((to, q) => ({ ...conn, from: names[q]!, to })) } as NetworkSpecInput;
  const ruleSpec = { ...experiment.rules[0]!, rates: {} };
  console.log(`\ntraining, published digits setting with hidden layers ${hiddens.join("-")} (${train.size} images); µs per training example`);
  console.log("| backend | batch | all active | forward active, feedback dense | all dense | dense / all active | feedback dense / all active | active blocks: image | active blocks: hidden (per step) | non-zero entries fed back (per step) |");
  console.log("| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |");
  const k = train.inputSize;
  const xs = new Float32Array(train.inputs);
  const ts = new Float32Array(train.targets);
  for (const be of backends) {
    for (const B of [20, 64]) {
      const net = buildNetwork(spec, { backend: be });
      const rule = createRule(net, ruleSpec as never);
      const batches = Math.floor(train.size / B);
      let cursor = 0;
      const next = () => {
        const b = cursor++ % batches;
        return { inputs: { image: xs.subarray(b * B * k, (b + 1) * B * k) }, targets: { digit: ts.subarray(b * B * 10, (b + 1) * B * 10) } };
      };
      for (let i = 0; i < 40; i++) rule.step(next());
      const steps = Math.max(3, Math.round((be.name === "typescript" ? 300 : 1200) / B));
      const times: number[][] = [[], [], []];
      const noActive = { typescript: { wide: 0, narrow: 0 }, "wasm-simd": { wide: 0, narrow: 0 }, "wasm-relaxed-simd": { wide: 0, narrow: 0 } };
      const tiny = { typescript: { wide: 1e-9, narrow: 1e-9 }, "wasm-simd": { wide: 1e-9, narrow: 1e-9 }, "wasm-relaxed-simd": { wide: 1e-9, narrow: 1e-9 } };
      const noFeedback = { typescript: 0, "wasm-simd": 0, "wasm-relaxed-simd": 0 };
      const tinyFeedback = { typescript: 1e-9, "wasm-simd": 1e-9, "wasm-relaxed-simd": 1e-9 };
      // 0: every active product at its crossover; 1: the forward ones only; 2: none (dense throughout)
      for (let round = 0; round < 6; round++) {
        for (const q of [0, 1, 2]) {
          setActiveProductCrossover(q < 2 ? ACTIVE_PRODUCT_CROSSOVER : noActive);
          setActiveFeedbackCrossover(q === 0 ? ACTIVE_FEEDBACK_CROSSOVER : noFeedback);
          const t0 = performance.now();
          for (let i = 0; i < steps; i++) rule.step(next());
          times[q]!.push(((performance.now() - t0) * 1000) / (steps * B));
        }
      }
      // measured densities: a crossover near 0 lists every product's blocks (entries) and runs it dense
      setActiveProductCrossover(tiny);
      setActiveFeedbackCrossover(tinyFeedback);
      activeProductCounts.listedBlocks = [];
      activeProductCounts.blocks = [];
      activeProductCounts.listedEntries = [];
      activeProductCounts.entries = [];
      for (let i = 0; i < 10; i++) rule.step(next());
      const share = (l: number) => ((activeProductCounts.listedBlocks[l] ?? 0) / Math.max(1, activeProductCounts.blocks[l] ?? 0)) * 100;
      const entryShare = (l: number) => ((activeProductCounts.listedEntries[l] ?? 0) / Math.max(1, activeProductCounts.entries[l] ?? 0)) * 100;
      const hiddenShares = net.layers.filter((l) => l.role === "hidden").map((l) => `${l.name} ${share(l.index).toFixed(0)}%`).join(", ");
      // the layers whose activities are fed back through tied weights (into the layer below)
      const fedBack = net.layers.filter((l) => net.connections.some((c) => c.to === l.index && c.feedback.kind === "tied" && net.layers[c.from]!.role !== "input"));
      const fedBackShares = fedBack.map((l) => `${l.name} ${entryShare(l.index).toFixed(0)}%`).join(", ");
      setActiveProductCrossover(ACTIVE_PRODUCT_CROSSOVER);
      setActiveFeedbackCrossover(ACTIVE_FEEDBACK_CROSSOVER);
      const [all, forward, none] = times.map(median) as [number, number, number];
      console.log(
        `| ${be.name} | ${B} | ${all.toFixed(1)} | ${forward.toFixed(1)} | ${none.toFixed(1)} | ${(none / all).toFixed(2)} | ${(forward / all).toFixed(2)} | ${share(0).toFixed(0)}% | ${hiddenShares} | ${fedBackShares} |`,
      );
    }
  }
}

export async function run(): Promise<void> {
  const backends = backendsWanted();
  const part = process.env.EBBFLOW_ACTIVE_PART;
  if (part === undefined || part === "kernels") kernels(backends);
  if (part === undefined || part === "kernels" || part === "feedback") feedbackKernels(backends);
  // networks separated by ";", hidden layers of one network by ",": "256;500;1024;4096;500,500"
  if (part === undefined || part === "training") for (const net of (process.env.EBBFLOW_ACTIVE_HIDDEN ?? "500").split(";")) await training(backends, net.split(",").map(Number));
}
