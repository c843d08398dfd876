import { describe, it, expect } from "vitest";
import { spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import {
  buildNetwork,
  createDataset,
  createLayeredDataset,
  datasetBatch,
  datasetToJson,
  layerValues,
  parseCsvDataset,
  parseJsonDataset,
  trainTestSplit,
  Trainer,
  xorDataset,
} from "../../src/index.js";
import { loadSweepFile, runSweepLocally, summarizeSweepFolder } from "../../src/node/sweep/index.js";
import { readResults } from "../../src/node/plot/results.js";
import { greenhouse, greenhouseNetwork } from "./greenhouse.js";

const root = path.resolve(import.meta.dirname, "../..");
const bin = path.join(root, "dist", "cli", "main.js");
const cli = (args: string[], cwd: string) => spawnSync(process.execPath, [bin, ...args], { encoding: "utf8", cwd, env: { ...process.env, FORCE_COLOR: "0" } });

const experiment = {
  name: "greenhouse",
  network: greenhouseNetwork,
  rules: [{ rule: "generec", rate: 1 }],
  training: { epochs: 150, batchSize: 2 },
  data: { source: "greenhouse.json" },
};

/** A folder with the greenhouse data (JSON, per layer, the lamp not observed on every other example) and the experiment. */
function workdir(): string {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-layers-"));
  writeFileSync(path.join(dir, "greenhouse.json"), datasetToJson(createLayeredDataset("greenhouse", greenhouse)));
  writeFileSync(path.join(dir, "experiment.json"), JSON.stringify(experiment));
  return dir;
}

describe("data by layer name", () => {
  it("a layered data set keeps one block per layer; NaN rows mark targets not observed; splits and JSON keep both", () => {
    const ds = createLayeredDataset("greenhouse", greenhouse);
    expect(ds.inputLayers).toEqual([{ layer: "sky", size: 2 }, { layer: "soil", size: 1 }]);
    expect(ds.targetLayers).toEqual([{ layer: "valve", size: 1 }, { layer: "lamp", size: 2 }]);
    expect(Array.from(layerValues(ds, "inputs", "soil"))).toEqual(greenhouse.inputs.soil.flat());
    const lamp = layerValues(ds, "targets", "lamp");
    expect(Number.isNaN(lamp[2]!) && Number.isNaN(lamp[3]!)).toBe(true);
    const back = parseJsonDataset(datasetToJson(ds), "greenhouse.json");
    expect(back.targetLayers).toEqual(ds.targetLayers);
    expect(Array.from(back.targets).map(String)).toEqual(Array.from(ds.targets).map(String));
    const { train } = trainTestSplit(ds, 0.25, 1);
    expect(train.inputLayers).toEqual(ds.inputLayers);
  });

  it("CSV column groups per layer: an all-empty group is not observed, a partly empty one is refused", () => {
    const text = "sun,cloud,wet,valve,lamp_on,lamp_off\n1,0,0,1,0,1\n0,1,1,0,,\n";
    const ds = parseCsvDataset(text, { source: "g.csv", inputLayers: { sky: ["sun", "cloud"], soil: ["wet"] }, targetLayers: { valve: ["valve"], lamp: ["lamp_on", "lamp_off"] } });
    expect(ds.inputLayers).toEqual([{ layer: "sky", size: 2 }, { layer: "soil", size: 1 }]);
    expect(Array.from(ds.targets).map(String)).toEqual(["1", "0", "1", "0", "NaN", "NaN"]);
    expect(() => parseCsvDataset(text.replace("0,,", "0,1,"), { source: "g.csv", targetLayers: { valve: ["valve"], lamp: ["lamp_on", "lamp_off"] } })).toThrow(/g\.csv:row 3, column 6.*all filled \(observed\) or all empty/);
    expect(() => parseCsvDataset(text, { source: "g.csv", inputLayers: { sky: ["sun", "cloud"] }, targetLayers: { valve: ["valve"], lamp: ["lamp_on", "lamp_off"] } })).toThrow(/every column in an input layer/);
  });

  it("the Trainer trains a 2-input/2-output network whose lamp is observed on half the examples, with metrics per output layer", () => {
    const net = buildNetwork(greenhouseNetwork);
    const trainer = new Trainer(net, { rule: "generec", rate: 1 }, createLayeredDataset("greenhouse", greenhouse), { epochs: 150, batchSize: 2 }, { seed: 1 });
    trainer.run();
    const m = trainer.history.at(-1)!.train!;
    expect(m.layers?.valve?.examples).toBe(8);
    expect(m.layers?.lamp?.examples).toBe(4);
    expect(m.examples).toBe(12);
    expect(m.layers?.valve?.accuracy).toBe(1);
    expect(m.layers?.lamp?.accuracy).toBe(1);
    expect(m.sse).toBeCloseTo(m.layers!.valve!.sse + m.layers!.lamp!.sse, 12);
    // the batch by layer name that `ebbflow check` uses
    const batch = datasetBatch(net, createLayeredDataset("greenhouse", greenhouse), 2);
    expect(Object.keys(batch.inputs)).toEqual(["sky", "soil"]);
    expect(Array.from(batch.targets.lamp!).map(String)).toEqual(["0", "1", "NaN", "NaN"]);
  });

  it("refuses data that does not name the network's layers, naming each problem", () => {
    const net = buildNetwork(greenhouseNetwork);
    expect(() => new Trainer(net, { rule: "generec", rate: 1 }, xorDataset(), { epochs: 1 })).toThrow(/data\.train\.inputs.*values for each of the network's 2 input layers/s);
    const wrong = createLayeredDataset("w", { inputs: { sky: greenhouse.inputs.sky, dirt: greenhouse.inputs.soil }, targets: greenhouse.targets });
    expect(() => new Trainer(net, { rule: "generec", rate: 1 }, wrong, { epochs: 1 })).toThrow(/data\.train\.inputs\.dirt[\s\S]*data\.train\.inputs\.soil/);
  });

  it("the single-layer form is unchanged: whole rows to the one input and output layer, and a NaN row is a target not observed", () => {
    const ds = createDataset("and", [[0, 0], [0, 1], [1, 0], [1, 1]], [[0], [Number.NaN], [0], [1]]);
    expect(ds.inputLayers).toBeUndefined();
    const net = buildNetwork({ seed: 2, layers: [{ name: "in", size: 2, role: "input" }, { name: "out", size: 1, role: "output" }], connections: [{ from: "in", to: "out", feedback: { kind: "tied", gain: 1 } }] });
    const t = new Trainer(net, { rule: "chl", rate: 0.5 }, ds, { epochs: 2, batchSize: 4 });
    t.run();
    expect(t.history.at(-1)!.train!.examples).toBe(3);
    expect(t.history.at(-1)!.train!.layers).toBeUndefined();
    expect(() => createDataset("bad", [[0, 0]], [[1, Number.NaN]])).toThrow(/all numbers \(observed\) or all NaN/);
  });
});

describe("the command line and sweeps with several input and output layers", () => {
  it("`ebbflow train` trains the greenhouse and reports each output layer; `ebbflow check` builds its batch by layer name", () => {
    expect(existsSync(bin), "build first (npm run build): the command runs dist/").toBe(true);
    const dir = workdir();
    const r = cli(["train", "experiment.json", "--out", "run"], dir);
    expect(r.status, r.stderr).toBe(0);
    // overall, then one line per output layer over the examples where it was observed
    expect(r.stdout).toMatch(/train: sse [\d.]+, accuracy 100\.00%\n {2}valve: sse [\d.]+, accuracy 100\.00% \(8 observed\)\n {2}lamp: sse [\d.]+, accuracy 100\.00% \(4 observed\)/);
    const results = readResults(readFileSync(path.join(dir, "run", "results.jsonl"), "utf8"), "results.jsonl");
    expect(results.epochs.at(-1)!.train!["layers.lamp.accuracy"]).toBe(1);
    expect(results.epochs.at(-1)!.train!["layers.valve.examples"]).toBe(8);
    const check = cli(["check", "experiment.json", "--rule", "chl", "--examples", "4"], dir);
    expect(check.status, check.stderr).toBe(0);
    expect(check.stdout).toMatch(/sky->hidden/);
  });

  it("a sweep over the rate trains it and summarizes per-layer metrics", async () => {
    const dir = workdir();
    writeFileSync(path.join(dir, "experiment.json"), JSON.stringify({ ...experiment, training: { epochs: 60, batchSize: 2 } }));
    writeFileSync(path.join(dir, "g.sweep.json"), JSON.stringify({ base: "experiment.json", grid: { "rule.rate": [0.5, 1] }, seeds: [1] }));
    const plan = await loadSweepFile(path.join(dir, "g.sweep.json"));
    const report = await runSweepLocally(plan, { out: path.join(dir, "out"), workers: 0 });
    expect(report.finished).toBe(2);
    const s = await summarizeSweepFolder(path.join(dir, "out"), { metric: "layers.lamp.accuracy", write: false });
    expect(s.summary.configurations.map((c) => c.value?.mean)).toEqual([1, 1]);
    expect(Object.keys(s.summary.configurations[0]!.metrics)).toContain("layers.valve.sse");
    // the same sweep on two worker threads (one run each; dist/ holds the worker script) gives the same results
    const threads = await runSweepLocally(plan, { out: path.join(dir, "threads"), workers: 2 });
    expect(threads.finished).toBe(2);
    for (const run of plan.runs) {
      const read = (folder: string) => readResults(readFileSync(path.join(dir, folder, "runs", run.id, "results.jsonl"), "utf8"), "results.jsonl").epochs.map((e) => e.train);
      expect(read("threads")).toEqual(read("out"));
    }
  });
});
