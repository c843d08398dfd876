import { describe, it, expect } from "vitest";
import { buildNetwork, Trainer, trainTestSplit, fitScaler, type RuleConfigInput } from "../../src/index.js";
import { irisDataset, digitsDataset } from "../../src/node/index.js";

describe("open data: Fisher's iris flowers (data/iris.csv)", () => {
  const cases: [string, RuleConfigInput, number][] = [
    ["GeneRec", { rule: "generec", rate: 0.2 }, 150],
    ["EqProp (symmetric nudging)", { rule: "eqprop", beta: 0.5, rate: 0.3, mode: "symmetric" }, 200],
  ];
  for (const [name, rule, epochs] of cases) {
    it(`${name} reaches at least 90% held-out accuracy on a seeded 70/30 split`, async () => {
      const { train, test } = trainTestSplit(await irisDataset(), 0.3, 1);
      const scaler = fitScaler(train);
      const net = buildNetwork({
        seed: 1,
        layers: [
          { name: "measurements", size: 4, role: "input" },
          { name: "hidden", size: 10, role: "hidden" },
          { name: "species", size: 3, role: "output" },
        ],
        connections: [
          { from: "measurements", to: "hidden", feedback: { kind: "tied", gain: 1 } },
          { from: "hidden", to: "species", feedback: { kind: "tied", gain: 1 } },
        ],
        dynamics: { dt: 0.5, maxSteps: 100, tolerance: 1e-5 },
      });
      const t = new Trainer(net, rule, scaler.apply(train), { epochs, batchSize: 10 }, { test: scaler.apply(test), seed: 1 });
      t.run();
      expect(t.history.at(-1)!.test!.accuracy).toBeGreaterThanOrEqual(0.9);
    });
  }
});

describe("open data: handwritten digits (the mnist package)", () => {
  it("GeneRec on a 2,000-image subset reaches at least 80% held-out accuracy in 5 epochs (784-64-10, float32)", async () => {
    const { train, test } = trainTestSplit(await digitsDataset({ count: 2000 }), 0.2, 1);
    const net = buildNetwork({
      seed: 1,
      dtype: "float32",
      layers: [
        { name: "image", size: 784, role: "input" },
        { name: "hidden", size: 64, role: "hidden" },
        { name: "digit", size: 10, role: "output" },
      ],
      connections: [
        { from: "image", to: "hidden", feedback: { kind: "tied", gain: 1 } },
        { from: "hidden", to: "digit", feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: { dt: 0.5, maxSteps: 50, tolerance: 1e-4 },
    });
    const t = new Trainer(net, { rule: "generec", rate: 0.1 }, train, { epochs: 5, batchSize: 20 }, { test, seed: 1 });
    t.run();
    expect(t.history.at(-1)!.test!.accuracy).toBeGreaterThanOrEqual(0.8);
  });
});
