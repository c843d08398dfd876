import { describe, it, expect } from "vitest";
import { buildNetwork, createDataset, createRule, ParameterDelta, Trainer, EbbflowError, Optimizer, optimizerSchema, type NetworkSpecInput } from "../../src/index.js";
import { ParallelRule } from "../../src/node/index.js";

const spec = (tolerance = 1e-9): NetworkSpecInput => ({
  seed: 4,
  layers: [
    { name: "in", size: 3, role: "input" },
    { name: "h", size: 4, role: "hidden" },
    { name: "out", size: 2, role: "output" },
  ],
  connections: [
    { from: "in", to: "h", feedback: { kind: "tied", gain: 1 } },
    { from: "h", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.5, maxSteps: 40, tolerance },
});
const inputs = [[0.1, 0.9, 0.2], [0.8, 0.1, 0.7], [0.3, 0.3, 0.9], [0.9, 0.8, 0.1]];
const targets = [[1, 0], [0, 1], [1, 0], [0, 1]];
const data = createDataset("cases", inputs, targets);
const batch = { inputs: { in: inputs.flat() }, targets: { out: targets.flat() } };
const params = (net: ReturnType<typeof buildNetwork>) => [...net.connections.flatMap((c) => Array.from(c.weights)), ...net.layers.flatMap((l) => Array.from(l.bias))];

/**
 * The published update formulas written out naively on the rule's own change (the reference): d = Δ/ε,
 * momentum v ← μv + d, w += εv (Polyak 1964); Adam m, s, bias-corrected, w += ε m̂/(√ŝ + ϵ) (Kingma & Ba
 * 2015, Algorithm 1); decoupled decay w −= ελw (Loshchilov & Hutter 2019, Algorithm 2); L2 decay d −= λw.
 */
function reference(kind: "momentum" | "adam", decay: "l2" | "decoupled", lambda: number, steps: number): number[] {
  const net = buildNetwork(spec());
  const rule = createRule(net, { rule: "generec", rate: 0.3 });
  const arrays = () => [...net.connections.map((c) => c.weights), ...net.layers.filter((l) => l.role !== "input").map((l) => l.bias)];
  const m = arrays().map((a) => new Float64Array(a.length));
  const s = arrays().map((a) => new Float64Array(a.length));
  for (let t = 1; t <= steps; t++) {
    const d = rule.computeDelta(batch, new ParameterDelta(net));
    const deltas = [...net.connections.map((c) => d.weights[c.index]!), ...net.layers.filter((l) => l.role !== "input").map((l) => d.biases[l.index]!)];
    arrays().forEach((w, i) => {
      for (let k = 0; k < w.length; k++) {
        let g = deltas[i]![k]! / 0.3;
        if (decay === "l2") g -= lambda * w[k]!;
        let step: number;
        if (kind === "momentum") {
          m[i]![k] = 0.9 * m[i]![k]! + g;
          step = 0.3 * m[i]![k]!;
        } else {
          m[i]![k] = 0.9 * m[i]![k]! + 0.1 * g;
          s[i]![k] = 0.999 * s[i]![k]! + 0.001 * g * g;
          step = (0.3 * (m[i]![k]! / (1 - 0.9 ** t))) / (Math.sqrt(s[i]![k]! / (1 - 0.999 ** t)) + 1e-8);
        }
        if (decay === "decoupled") step -= 0.3 * lambda * w[k]!;
        w[k] = w[k]! + step;
      }
    });
  }
  return params(net);
}

const trained = (optimizer: Record<string, unknown> | undefined, epochs: number) => {
  const net = buildNetwork(spec());
  new Trainer(net, { rule: "generec", rate: 0.3 }, data, { epochs, batchSize: 4, shuffle: false, ...(optimizer ? { optimizer } : {}) }).run();
  return params(net);
};
const close = (a: number[], b: number[], tol: number) => a.forEach((v, i) => expect(Math.abs(v - b[i]!)).toBeLessThan(tol * Math.max(1, Math.abs(b[i]!))));

describe("training.optimizer", () => {
  it("momentum and Adam, with L2 or decoupled weight decay, follow the published update formulas on the rule's change (naive reference, 1e-12)", () => {
    for (const [kind, decay, lambda] of [["momentum", "l2", 0], ["momentum", "l2", 0.01], ["adam", "l2", 0.01], ["adam", "decoupled", 0.05]] as const) {
      close(trained({ kind, decay, weightDecay: lambda }, 5), reference(kind, decay, lambda, 5), 1e-12);
    }
  });

  it("plain sgd without decay is the rule's own step (within rounding); biasRates set a layer's bias rate", () => {
    close(trained({ kind: "sgd" }, 3), trained(undefined, 3), 1e-13);
    // one step: the output bias moves 0.9/0.3 = 3 times as far as the rule's own step, the hidden bias as far
    const base = buildNetwork(spec());
    const scaled = buildNetwork(spec());
    const before = Array.from(base.layers[2]!.bias);
    new Trainer(base, { rule: "generec", rate: 0.3 }, data, { epochs: 1, batchSize: 4, shuffle: false }).run();
    new Trainer(scaled, { rule: "generec", rate: 0.3 }, data, { epochs: 1, batchSize: 4, shuffle: false, optimizer: { biasRates: { out: 0.9 } } }).run();
    scaled.layers[2]!.bias.forEach((v, j) => expect(v - before[j]!).toBeCloseTo(3 * (base.layers[2]!.bias[j]! - before[j]!), 12));
    close(Array.from(scaled.layers[1]!.bias), Array.from(base.layers[1]!.bias), 1e-13);
    expect(() => new Trainer(buildNetwork(spec()), { rule: "generec", rate: 0.3 }, data, { epochs: 1, optimizer: { biasRates: { in: 1 } } })).toThrow(EbbflowError);
    expect(() => new Trainer(buildNetwork(spec()), { rule: "generec", rate: 0.3 }, data, { epochs: 1, optimizer: { kind: "adam", beta: 0.9 } as never })).toThrow(EbbflowError);
  });

  it("plain sgd without decay leaves the weights exactly as the rule stepped them (no copy, same bits), with or without biasRates", () => {
    // the rule's own step is the definition of plain SGD at the rule's rate (Optimizer doc): bit for bit, not just within rounding
    const plain = buildNetwork(spec());
    const withRates = buildNetwork(spec());
    // one step (the whole set as one batch): after it the bias rates have made the networks differ
    new Trainer(plain, { rule: "generec", rate: 0.3 }, data, { epochs: 1, batchSize: 1000, shuffle: false }).run();
    new Trainer(withRates, { rule: "generec", rate: 0.3 }, data, { epochs: 1, batchSize: 1000, shuffle: false, optimizer: { kind: "sgd", biasRates: { out: 0.9 } } }).run();
    for (const c of plain.connections) expect(Array.from(withRates.connections[c.index]!.weights)).toEqual(Array.from(c.weights));
  });

  it("resuming from saveState gives the same bits as training straight through (Adam's moments and step count in the state)", () => {
    const opt = { kind: "adam" as const, weightDecay: 0.01, decay: "decoupled" as const };
    const straight = buildNetwork(spec());
    new Trainer(straight, { rule: "generec", rate: 0.3 }, data, { epochs: 4, batchSize: 2, optimizer: opt }, { seed: 5 }).run();
    const first = buildNetwork(spec());
    const a = new Trainer(first, { rule: "generec", rate: 0.3 }, data, { epochs: 2, batchSize: 2, optimizer: opt }, { seed: 5 });
    a.run();
    const state = JSON.parse(JSON.stringify(a.saveState()));
    const b = new Trainer(first, { rule: "generec", rate: 0.3 }, data, { epochs: 4, batchSize: 2, optimizer: opt }, { seed: 5 });
    b.loadState(state);
    b.run();
    expect(params(first)).toEqual(params(straight));
    expect(() => b.loadState({ ...state, optimizer: { steps: 1, moments: [] } })).toThrow(EbbflowError);
  });

  it("on 2 worker threads gives the same bits as one thread: the optimizer steps the reduced change on the main thread", async () => {
    // settling a fixed number of steps (tolerance below any change) makes the row split bit-identical to one thread
    const rule = { rule: "eqprop", beta: 0.2, rate: 0.2, mode: "symmetric", freeSteps: 15, nudgedSteps: 6 };
    const config = optimizerSchema.parse({ kind: "adam", weightDecay: 0.01 });
    const one = buildNetwork(spec(Number.MIN_VALUE));
    const single = createRule(one, rule);
    const optOne = new Optimizer(one, single, config);
    const par = await ParallelRule.create(buildNetwork(spec(Number.MIN_VALUE)), rule, 2);
    try {
      expect(par.split).toBe("rows");
      const optTwo = new Optimizer(par.net, par, config);
      for (let k = 0; k < 3; k++) {
        optOne.before();
        single.step(batch);
        optOne.after(1);
        optTwo.before();
        await par.step(batch);
        optTwo.after(1);
      }
      expect(params(par.net)).toEqual(params(one));
      expect(optTwo.saveState()).toEqual(optOne.saveState());
    } finally {
      await par.close();
    }
  });
});
