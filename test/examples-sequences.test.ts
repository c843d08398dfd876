/**
 * The sequence example (examples/sequences.ts, examples/texture-memory.json and its sweep file): the
 * texture-memory task learned with state carried through the Trainer, the command line and a sweep,
 * and adaptation's reduction of the response to a repeated stimulus against a no-adaptation control.
 */
import { describe, it, expect } from "vitest";
import { spawnSync } from "node:child_process";
import { copyFileSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { CALCIUM_SEQUENCE_RULE, runAdaptation, runTextureMemory } from "../examples/sequences.js";
import { buildNetwork, textureMemoryDataset, textureMemoryNetwork, Trainer } from "../src/index.js";
import { loadSweepFile, runSweepLocally } from "../src/node/sweep/index.js";
import { readResults } from "../src/node/plot/results.js";

const root = path.resolve(import.meta.dirname, "..");
const bin = path.join(root, "dist", "cli", "main.js");

describe("the sequence example", () => {
  it("GeneRec with the state carried over beats both the reset-every-pattern control and always answering no (held-out sequences)", () => {
    const r = runTextureMemory({ rule: "generec", rate: 0.05 }, 60);
    // measured: carried 0.766, control 0.660, majority 0.660 (seeded, deterministic)
    expect(r.carried).toBeGreaterThan(r.control + 0.05);
    expect(r.carried).toBeGreaterThan(r.majority + 0.05);
    // without memory the answer cannot beat the majority share (the target does not depend on the present pattern)
    expect(r.control).toBeLessThanOrEqual(r.majority + 1e-12);
  });

  it("the calcium rule with its continuous traces carried across each sequence beats its reset-every-pattern control and always answering no (fixed hidden expansion)", () => {
    // small and fast: 32 training sequences (32 held out), 20 epochs, seed 1 (network seed 1, data seeds 1 and 2)
    const r = runTextureMemory(CALCIUM_SEQUENCE_RULE, 20, 0.05, { network: { hidden: "fixed" }, seed: 1, sequences: 32 });
    // measured at these sizes, seed 1: carried 0.813, control 0.660 = majority 0.660. Over seeds 1-10 at these sizes
    // (bench-style runs, not asserted): carried 0.723 mean (0.625-0.813), control at or below the majority share on
    // every seed, carried minus control 0.124 mean and above 0.06 on 9 of 10 seeds (seed 4: 0.625 both, no gain).
    // At full size (64 sequences, 60 epochs, seeds 1-10; npm run bench -- sequences): see docs/guide/sequences.md.
    expect(r.carried).toBeGreaterThan(r.control + 0.1);
    expect(r.carried).toBeGreaterThan(r.majority + 0.1);
    // without memory the answer cannot beat the majority share (the target does not depend on the present pattern)
    expect(r.control).toBeLessThanOrEqual(r.majority + 1e-12);
  });

  it("the fixed hidden expansion: the hidden weights stay as drawn (uniform in ±scale) and only the read-out and biases learn", () => {
    const net = buildNetwork(textureMemoryNetwork(5, undefined, undefined, { hidden: "fixed", size: 12, scale: 1.5 }));
    const hidden = net.layers.find((l) => l.name === "hidden")!;
    expect(hidden.size).toBe(12);
    const reads = net.connections.filter((c) => c.to === hidden.index);
    const readout = net.connections.find((c) => c.from === hidden.index)!;
    expect(readout.feedback.kind).toBe("none");
    const before = reads.map((c) => Float64Array.from(c.weights));
    for (const w of before) for (const v of w) expect(Math.abs(v)).toBeLessThanOrEqual(1.5);
    const readoutBefore = Float64Array.from(readout.weights);
    new Trainer(net, CALCIUM_SEQUENCE_RULE, textureMemoryDataset({ sequences: 4, length: 4, seed: 3, low: 0.05 }), { epochs: 2, batchSize: 2, sequences: {}, evaluateTrain: false }).run();
    reads.forEach((c, i) => expect(Array.from(c.weights)).toEqual(Array.from(before[i]!)));
    expect(Array.from(readout.weights)).not.toEqual(Array.from(readoutBefore));
  });

  it("adaptation lowers the response to a repeated stimulus; the control (gain 0) answers every presentation alike", () => {
    const r = runAdaptation();
    for (let k = 1; k < 5; k++) expect(r.adapted[k]!).toBeLessThan(r.adapted[k - 1]!);
    expect(r.reduction).toBeGreaterThan(0.05);
    expect(r.versusControl).toBeGreaterThan(0.15);
    expect(Math.abs(r.controlReduction)).toBeLessThan(1e-9);
    // the adaptation variable rises from rest during the first presentation (recorded per step)
    expect(r.trace[0]!).toBeLessThan(r.trace[39]!);
    expect(r.trace.length).toBe(200);
  });

  /** Copies examples/NAME.json (with `epochs`) and its sweep file to `dir`, trains it with `ebbflow train`, runs the sweep; returns the summary. */
  async function trainAndSweep(dir: string, name: string, epochs: number): Promise<{ epochs: number; train: { examples: number }; test: { examples: number } }> {
    const experiment = JSON.parse(readFileSync(path.join(root, "examples", `${name}.json`), "utf8"));
    writeFileSync(path.join(dir, `${name}.json`), JSON.stringify({ ...experiment, training: { ...experiment.training, epochs } }));
    copyFileSync(path.join(root, "examples", `${name}.sweep.json`), path.join(dir, `${name}.sweep.json`));
    const r = spawnSync(process.execPath, [bin, "train", `${name}.json`, "--out", `run-${name}`, "--json"], { encoding: "utf8", cwd: dir, env: { ...process.env, FORCE_COLOR: "0" } });
    expect(r.status, r.stderr).toBe(0);
    const results = readResults(readFileSync(path.join(dir, `run-${name}`, "results.jsonl"), "utf8"), "results.jsonl");
    expect(results.epochs.length).toBe(epochs);
    const plan = await loadSweepFile(path.join(dir, `${name}.sweep.json`));
    expect(plan.runs.length).toBe(4);
    const report = await runSweepLocally(plan, { out: path.join(dir, `sweep-${name}`), workers: 0 });
    expect(report.finished).toBe(4);
    return JSON.parse(r.stdout);
  }

  it("trains from the experiment files through the command line (ebbflow train) and through a sweep", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-seq-"));
    const summary = await trainAndSweep(dir, "texture-memory", 3);
    expect(summary.epochs).toBe(3);
    expect(summary.test.examples).toBe(16 * 8);
    // the calcium variant (fixed hidden expansion, traces carried), 2 epochs each
    const calcium = await trainAndSweep(dir, "texture-memory-calcium", 2);
    expect(calcium.epochs).toBe(2);
    expect(calcium.train.examples).toBe(48 * 8);
    expect(calcium.test.examples).toBe(16 * 8);
  }, 120_000);
});
