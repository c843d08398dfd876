import { describe, it, expect } from "vitest";
import { mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { buildNetwork, Settler, Trainer, xorDataset, randomAssociation, scheduleFactor, parseTraining, EbbflowError, type NetworkSpecInput, type RuleConfigInput } from "../../src/index.js";
import { accumulateMetrics, MetricSums } from "../../src/train/metrics.js";
import { saveCheckpoint, loadCheckpoint } from "../../src/node/index.js";
import { expectAllClose, expectClose } from "../helpers/tolerance.js";

const xorNet = (seed: number): NetworkSpecInput => ({
  seed,
  layers: [
    { name: "in", size: 2, role: "input" },
    { name: "hid", size: 4, role: "hidden" },
    { name: "out", size: 1, role: "output" },
  ],
  connections: [
    { from: "in", to: "hid", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
    { from: "hid", to: "out", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.5, maxSteps: 200, tolerance: 1e-6 },
});

const assocNet = (seed: number, kind: "rate" | "energy" = "rate"): NetworkSpecInput => ({
  seed,
  layers: [
    { name: "in", size: 10, role: "input" },
    { name: "hid", size: 8, role: "hidden", unit: kind === "energy" ? { kind: "hard-sigmoid" } : { kind: "logistic" } },
    { name: "out", size: 6, role: "output", unit: kind === "energy" ? { kind: "hard-sigmoid" } : { kind: "logistic" } },
  ],
  connections: [
    { from: "in", to: "hid", feedback: { kind: "tied", gain: 1 } },
    { from: "hid", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { kind, dt: 0.5, maxSteps: 60, tolerance: 1e-6 },
});

describe("metrics", () => {
  it("sum squared error, binary and softmax cross-entropy, the loss, accuracy and cosine of a hand-computed batch (definitions; common practice)", () => {
    const s = new MetricSums();
    // two examples, two outputs: y = (0.8, 0.2) vs t = (1, 0); y = (0.4, 0.6) vs t = (1, 0)
    accumulateMetrics(s, Float64Array.from([0.8, 0.2, 0.4, 0.6]), [1, 0, 1, 0], 2, 2);
    const m = s.result();
    expectClose(m.sse, 0.04 + 0.04 + 0.36 + 0.36, 1e-15);
    expectClose(m.binaryCrossEntropy, (-Math.log(0.8) - Math.log(0.8) - Math.log(0.4) - Math.log(0.4)) / 2, 1e-12);
    // softmax cross-entropy, −ln(e^{y_0} / (e^{y_0} + e^{y_1})) per example (definition)
    expectClose(m.softmaxCrossEntropy, (Math.log(1 + Math.exp(0.2 - 0.8)) + Math.log(1 + Math.exp(0.6 - 0.4))) / 2, 1e-12);
    // the default training loss is the squared error, ½‖y − t‖² per example
    expectClose(m.loss, (0.5 * (0.04 + 0.04) + 0.5 * (0.36 + 0.36)) / 2, 1e-15);
    expect(m.accuracy).toBe(0.5);
    expectClose(m.cosine, (0.8 / Math.hypot(0.8, 0.2) + 0.4 / Math.hypot(0.4, 0.6)) / 2, 1e-15);
  });

  it("a tie for the largest output counts as wrong and is reported", () => {
    const s = new MetricSums();
    accumulateMetrics(s, Float64Array.from([0, 0, 1, 0]), [1, 0, 1, 0], 2, 2);
    expect(s.result().ties).toBe(1);
    expect(s.result().accuracy).toBe(0.5);
  });
});

describe("schedules", () => {
  it("step, exponential and cosine factors (Loshchilov & Hutter 2017 for cosine)", () => {
    expect(scheduleFactor({ kind: "step", every: 10, factor: 0.5 }, 1)).toBe(1);
    expect(scheduleFactor({ kind: "step", every: 10, factor: 0.5 }, 21)).toBe(0.25);
    expect(scheduleFactor({ kind: "exponential", decay: 0.9 }, 3)).toBeCloseTo(0.81, 15);
    expect(scheduleFactor({ kind: "cosine", epochs: 10, floor: 0 }, 1)).toBe(1);
    expect(scheduleFactor({ kind: "cosine", epochs: 10, floor: 0 }, 6)).toBeCloseTo(0.5, 15);
    expect(scheduleFactor({ kind: "cosine", epochs: 10, floor: 0.1 }, 11)).toBeCloseTo(0.1, 15);
  });
});

describe("the training loop", () => {
  it("learns XOR with GeneRec and stops when the target is reached", () => {
    const t = new Trainer(buildNetwork(xorNet(1)), { rule: "generec", rate: 1 }, xorDataset(), { epochs: 3000, batchSize: 4, stopWhen: { metric: "accuracy", atLeast: 1 } });
    const r = t.run();
    expect(r.reason).toBe("target-reached");
    expect(t.history.at(-1)!.train!.accuracy).toBe(1);
  });

  it("the same seed gives the same bits; another seed shuffles differently", () => {
    const data = randomAssociation({ patterns: 12, inputSize: 10, targetSize: 6, seed: 3 });
    const run = (seed: number) => {
      const net = buildNetwork(assocNet(2));
      new Trainer(net, { rule: "chl", rate: 0.2 }, data, { epochs: 3, batchSize: 4 }, { seed }).run();
      return Array.from(net.connections[1]!.weights);
    };
    expect(run(5)).toEqual(run(5));
    expect(run(5)).not.toEqual(run(6));
  });

  const resumeCase = async (rule: RuleConfigInput, kind: "rate" | "energy", persistentStates: boolean, persistentTestStates = false) => {
    const data = randomAssociation({ patterns: 12, inputSize: 10, targetSize: 6, seed: 4 });
    const opts = { epochs: 6, batchSize: 5, persistentStates, persistentTestStates, schedule: { kind: "exponential" as const, decay: 0.9 } };
    const whole = buildNetwork(assocNet(9, kind));
    const a = new Trainer(whole, rule, data, opts, { seed: 11, test: data });
    a.run();
    const part = buildNetwork(assocNet(9, kind));
    const b = new Trainer(part, rule, data, opts, { seed: 11, test: data });
    for (let i = 0; i < 3; i++) b.stopAfter(b.runEpoch());
    const file = path.join(mkdtempSync(path.join(tmpdir(), "ebbflow-ckpt-")), "checkpoint.json");
    await saveCheckpoint(file, b, { note: "test" });
    const { net, state } = await loadCheckpoint(file);
    const c = new Trainer(net, rule, data, opts, { seed: 11, test: data });
    c.loadState(state);
    c.run();
    for (let i = 0; i < whole.connections.length; i++) expect(new Uint8Array(net.connections[i]!.weights.buffer)).toEqual(new Uint8Array(whole.connections[i]!.weights.buffer));
    for (let i = 0; i < whole.layers.length; i++) expect(Array.from(net.layers[i]!.bias)).toEqual(Array.from(whole.layers[i]!.bias));
    const strip = (h: typeof a.history) => h.map(({ seconds: _s, ...r }) => r);
    expect(strip(c.history)).toEqual(strip(a.history));
  };

  it("resuming from a checkpoint gives bit-identical results to an uninterrupted run (CHL)", async () => {
    await resumeCase({ rule: "chl", rate: 0.2 }, "rate", false);
  });

  it("resuming is bit-identical for EqProp with random-sign β and persistent free-phase states", async () => {
    await resumeCase({ rule: "eqprop", beta: 0.5, rate: 0.2, mode: "random-sign" }, "energy", true);
  });

  it.each([false, true])("persistent free-phase states continue each example's trajectory (shuffle %s; the authors' persistent particles, Scellier & Bengio 2017 code, model.py)", (shuffle) => {
    // analytic property: with the weights fixed, k visits of s free steps, each starting where the example's last
    // free phase ended, reach the state of one free phase of k·s steps from rest (same example, any visiting order)
    const spec = assocNet(3, "energy");
    const net = buildNetwork({ ...spec, connections: spec.connections!.map((c) => ({ ...c, frozen: true })), dynamics: { kind: "energy", dt: 0.5, maxSteps: 60, tolerance: 1e-300, clip: true } });
    const data = randomAssociation({ patterns: 12, inputSize: 10, targetSize: 6, seed: 2 });
    // a bias rate far below every net input: the biases' changes vanish in rounding, the weights are frozen
    const rule: RuleConfigInput = { rule: "eqprop", beta: 0.5, rate: 1e-300, freeSteps: 3, nudgedSteps: 2 };
    const trainer = new Trainer(net, rule, data, { epochs: 4, batchSize: 5, shuffle, persistentStates: true, evaluateTrain: false }, { seed: 7 });
    for (let e = 0; e < 4; e++) trainer.runEpoch();
    const kept = trainer.saveState().persistent!;
    const whole = new Settler(net, 12).settle({ phase: "free", inputs: { in: data.inputs }, maxSteps: 12 });
    expect(whole.steps).toBe(12);
    for (const l of net.layers) {
      if (l.role === "input") continue;
      expectAllClose(kept[l.index]!, whole.state[l.index]!, 1e-12, l.name);
    }
    // and not the state of a free phase of 3 steps from rest (which the run without persistence keeps)
    const once = new Settler(net, 12).settle({ phase: "free", inputs: { in: data.inputs }, maxSteps: 3 });
    expect(Math.max(...kept[1]!.map((v, i) => Math.abs(v - (once.state[1]![i] as number))))).toBeGreaterThan(1e-6);
  });

  it("resuming is bit-identical with persistent held-out states (the held-out read-out depends on them)", async () => {
    await resumeCase({ rule: "eqprop", beta: 0.5, rate: 0.2, mode: "random-sign" }, "energy", true, true);
  });

  it("persistent held-out states continue each held-out example's free trajectory from one evaluation to the next (the authors' validation, Scellier & Bengio 2017 code, train_model.py)", () => {
    // analytic property as for training: fixed weights, 4 evaluations of 3 free steps reach 12 steps from rest
    const spec = assocNet(5, "energy");
    const net = buildNetwork({ ...spec, connections: spec.connections!.map((c) => ({ ...c, frozen: true })), dynamics: { kind: "energy", dt: 0.5, maxSteps: 3, tolerance: 1e-300, clip: true } });
    const train = randomAssociation({ patterns: 6, inputSize: 10, targetSize: 6, seed: 3 });
    const test = randomAssociation({ patterns: 9, inputSize: 10, targetSize: 6, seed: 8 });
    const trainer = new Trainer(net, { rule: "eqprop", beta: 0.5, rate: 1e-300 }, train, { epochs: 4, batchSize: 3, persistentTestStates: true, evaluateTrain: false }, { test, seed: 1 });
    for (let e = 0; e < 4; e++) trainer.runEpoch();
    const kept = trainer.saveState().persistentTest!;
    const whole = new Settler(net, 9).settle({ phase: "free", inputs: { in: test.inputs }, maxSteps: 12 });
    for (const l of net.layers) if (l.role !== "input") expectAllClose(kept[l.index]!, whole.state[l.index]!, 1e-12, l.name);
    // the training set's evaluation settles from rest, as before
    expect(trainer.evaluate(train).accuracy).toBe(trainer.evaluate(train).accuracy);
  });

  it("persistent held-out states are refused without a held-out set and with a feedforward read-out", () => {
    const data = randomAssociation({ patterns: 6, inputSize: 10, targetSize: 6, seed: 3 });
    const err = (f: () => unknown) => {
      try {
        f();
      } catch (e) {
        return e instanceof EbbflowError ? e.issues[0]!.path : String(e);
      }
      return "no error";
    };
    expect(err(() => new Trainer(buildNetwork(assocNet(1, "energy")), { rule: "eqprop", beta: 0.5, rate: 0.1 }, data, { epochs: 1, persistentTestStates: true }))).toBe("training.persistentTestStates");
    expect(err(() => new Trainer(buildNetwork(assocNet(1)), { rule: "backprop", rate: 0.1 }, data, { epochs: 1, persistentTestStates: true }, { test: data }))).toBe("training.persistentTestStates");
  });

  it("resuming is bit-identical for the sliding-threshold rule with a BCM-like threshold (running averages saved)", async () => {
    await resumeCase({ rule: "calcium", rate: 0.2, threshold: "blend" }, "rate", false);
  });

  it("early stopping ends training when the held-out error stops improving", () => {
    const data = randomAssociation({ patterns: 8, inputSize: 10, targetSize: 6, seed: 1 });
    const t = new Trainer(buildNetwork(assocNet(1)), { rule: "chl", rate: 0.001 }, data, { epochs: 500, batchSize: 8, earlyStopping: { metric: "sse", split: "test", patience: 3, minDelta: 1 } }, { test: data });
    const r = t.run();
    expect(r.reason).toBe("early-stopping");
    expect(r.epochs).toBe(4);
  });

  it("callbacks run per batch and per epoch, and an epoch callback can stop training", () => {
    const data = randomAssociation({ patterns: 10, inputSize: 10, targetSize: 6, seed: 1 });
    const batches: number[] = [];
    const t = new Trainer(buildNetwork(assocNet(1)), { rule: "generec", rate: 0.1 }, data, { epochs: 50, batchSize: 4 }, { hooks: { onBatch: (b) => batches.push(b.size), onEpoch: (r) => (r.epoch === 2 ? "stop" : undefined) } });
    expect(t.run()).toEqual({ reason: "callback", epochs: 2 });
    expect(batches).toEqual([4, 4, 2, 4, 4, 2]);
  });

  it("a learning-rate schedule scales every update", () => {
    const data = randomAssociation({ patterns: 4, inputSize: 10, targetSize: 6, seed: 1 });
    const a = buildNetwork(assocNet(3));
    const b = buildNetwork(assocNet(3));
    new Trainer(a, { rule: "chl", rate: 0.1 }, data, { epochs: 1, batchSize: 4, shuffle: false }).run();
    new Trainer(b, { rule: "chl", rate: 0.2 }, data, { epochs: 1, batchSize: 4, shuffle: false, schedule: { kind: "step", every: 1, factor: 0.5 } }).run();
    // epoch 1 has factor 1 under a step schedule, so b moved twice as far as a
    const w0 = buildNetwork(assocNet(3)).connections[1]!.weights;
    a.connections[1]!.weights.forEach((w, i) => expectClose(b.connections[1]!.weights[i]! - w0[i]!, 2 * (w - w0[i]!), 1e-12));
  });

  it("bad options and mismatched data are reported with their paths", () => {
    expect(() => parseTraining({ epochs: 0 })).toThrow(/training\.epochs/);
    try {
      new Trainer(buildNetwork(xorNet(1)), { rule: "chl", rate: 1 }, randomAssociation({ patterns: 3, inputSize: 5, targetSize: 2, seed: 1 }), { epochs: 1 });
      throw new Error("no error");
    } catch (e) {
      expect(e).toBeInstanceOf(EbbflowError);
      expect((e as EbbflowError).issues.map((i) => i.path)).toEqual(["data.train.inputs", "data.train.targets"]);
    }
  });
});
