/**
 * The topographic-map example (examples/topographic-map.json): an 8×8 sensor sheet projecting to a
 * 6×6 map through local 3×3 fields, a frozen lateral difference-of-Gaussians within the map
 * (symmetric, no self-connections), written as a declaration alone. Trained through the Trainer, the
 * command line and a sweep; its map develops orientation selectivity measured against a control with
 * each unit's weights shuffled within its receptive field.
 */
import { describe, it, expect } from "vitest";
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { buildNetwork, createRandom, modelFromData, orientedBarsDataset, parseExperiment, patternViolation, Settler, Trainer, type Network } from "../../src/index.js";
import { loadSweepFile, runSweepLocally } from "../../src/node/sweep/index.js";

const root = path.resolve(import.meta.dirname, "../..");
const file = path.join(root, "examples", "topographic-map.json");
const experiment = JSON.parse(readFileSync(file, "utf8")) as Record<string, unknown>;
const bars = orientedBarsDataset({ size: 8 });

function expectInPattern(net: Network): void {
  for (const c of net.connections) expect(patternViolation(c.pattern, c.weights), c.label).toBeNull();
}

/**
 * Mean orientation selectivity of the map's units: `|Σ_θ r(θ) e^{2iθ}| / Σ_θ r(θ)` (one minus the
 * circular variance; Ringach, Shapley & Hawken 2002, J. Neurosci. 22:5639, from memory), r(θ) the
 * evoked response (above the response to a blank sheet) averaged over the bar's offsets; a silent
 * unit counts 0.
 */
function selectivity(net: Network): number {
  const map = net.layerIndex("map");
  const size = net.layers[map]!.size;
  const y = new Settler(net, bars.size).settle({ phase: "free", inputs: { sensors: bars.inputs } }).activity[map]!;
  const blank = new Settler(net, 1).settle({ phase: "free", inputs: { sensors: new Float64Array(64) } }).activity[map]!;
  const K = bars.targetSize;
  const per = bars.size / K;
  let sum = 0;
  for (let u = 0; u < size; u++) {
    let re = 0;
    let im = 0;
    let total = 0;
    for (let o = 0; o < K; o++) {
      let r = 0;
      for (let s = 0; s < per; s++) r += Math.max(0, (y[(o * per + s) * size + u] as number) - (blank[u] as number));
      r /= per;
      re += r * Math.cos((2 * Math.PI * o) / K);
      im += r * Math.sin((2 * Math.PI * o) / K);
      total += r;
    }
    sum += total > 0 ? Math.hypot(re, im) / total : 0;
  }
  return sum / size;
}

/** A copy whose sensor-to-map weights are permuted within each unit's receptive field (same values, no structure). */
function shuffledFields(net: Network, seed: number): Network {
  const copy = net.clone();
  const c = copy.connection("sensors", "map");
  const p = c.pattern;
  const rng = createRandom(seed);
  for (let i = 0; i < p.rows; i++) {
    const at: number[] = [];
    for (let s = p.rowStart[i]!; s < p.rowStart[i + 1]!; s++) at.push(i * p.cols + p.colIndex[s]!);
    const values = rng.shuffle(at.map((k) => c.weights[k] as number));
    at.forEach((k, j) => (c.weights[k] = values[j]!));
  }
  return copy;
}

/** Trains an experiment through the Trainer; the map's selectivity before and after, and against five shuffled-field controls. */
function trainedSelectivity(ex: ReturnType<typeof parseExperiment>): { before: number; trained: number; controls: number[]; control: number } {
  const net = buildNetwork(ex.network);
  const before = selectivity(net);
  new Trainer(net, ex.rules[0]!, bars, ex.training!).run();
  expectInPattern(net);
  const trained = selectivity(net);
  const controls = [1, 2, 3, 4, 5].map((s) => selectivity(shuffledFields(net, s)));
  return { before, trained, controls, control: controls.reduce((a, b) => a + b, 0) / controls.length };
}

describe("the topographic map example", () => {
  it("is a declaration alone: 3×3 fields (324 of 2,304 weights), a symmetric lateral difference of Gaussians without self-weights", () => {
    const ex = parseExperiment(experiment);
    const net = buildNetwork(ex.network);
    const ff = net.connection("sensors", "map").pattern;
    expect(ff.stored).toBe(36 * 9);
    expect(ff.rows * ff.cols).toBe(2304);
    const lat = net.connection("map", "map");
    expect(lat.pattern.symmetric).toBe(true);
    for (let i = 0; i < 36; i++) expect(lat.weights[i * 36 + i]).toBe(0);
    // nearest neighbours excite, the surround inhibits
    expect(lat.weights[0 * 36 + 1]!).toBeGreaterThan(0);
    expect(lat.weights[0 * 36 + 2]!).toBeLessThan(0);
  });

  it("trained through the Trainer, its map becomes orientation-selective beyond a shuffled-weights control, with every out-of-pattern weight exactly 0", () => {
    const { before, trained, controls, control } = trainedSelectivity(parseExperiment(experiment));
    // measured here (deterministic: one seed): 0.021 before training, 0.892 after; shuffled controls 0.554-0.673 (mean 0.607)
    expect(before).toBeLessThan(0.2);
    expect(trained).toBeGreaterThan(0.8);
    expect(trained - control).toBeGreaterThan(0.2);
    expect(trained).toBeGreaterThan(Math.max(...controls));
  });

  it("with the BCM rule and rectified map units (examples/topographic-map-bcm.json) the map also becomes orientation-selective beyond the shuffled control", () => {
    const bcm = JSON.parse(readFileSync(path.join(root, "examples", "topographic-map-bcm.json"), "utf8")) as Record<string, unknown>;
    const ex = parseExperiment(bcm);
    expect(ex.rules[0]!.rule).toBe("bcm");
    const { before, trained, controls, control } = trainedSelectivity(ex);
    // measured here (deterministic: network seed 3): 0.019 before, 0.745 after 100 epochs; shuffled controls
    // 0.487-0.547; with network seeds 1, 2, 4, 5: 0.69-0.76 against controls of at most 0.57
    expect(before).toBeLessThan(0.1);
    expect(trained).toBeGreaterThan(0.6);
    expect(trained - control).toBeGreaterThan(0.12);
    expect(trained).toBeGreaterThan(Math.max(...controls) + 0.08);
  });

  it("trains with `ebbflow train` and in a sweep; the saved models keep the patterns (loading checks them)", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-topographic-"));
    writeFileSync(path.join(dir, "topographic-map.json"), JSON.stringify({ ...experiment, training: { epochs: 3, batchSize: 1 } }));
    const bin = path.join(root, "dist", "cli", "main.js");
    const run = spawnSync(process.execPath, [bin, "train", "topographic-map.json", "--out", "run"], { cwd: dir, encoding: "utf8", env: { ...process.env, FORCE_COLOR: "0" } });
    expect(run.status, run.stderr).toBe(0);
    expectInPattern(modelFromData(JSON.parse(readFileSync(path.join(dir, "run", "model.json"), "utf8"))));
    writeFileSync(path.join(dir, "map.sweep.json"), JSON.stringify({ base: "topographic-map.json", grid: { "rule.rate": [0.02, 0.05] }, seeds: [1] }));
    const plan = await loadSweepFile(path.join(dir, "map.sweep.json"));
    const report = await runSweepLocally(plan, { out: path.join(dir, "sweep"), workers: 0 });
    expect(report.finished).toBe(2);
    for (const r of plan.runs) expectInPattern(modelFromData(JSON.parse(readFileSync(path.join(dir, "sweep", "runs", r.id, "model.json"), "utf8"))));
  });
});
