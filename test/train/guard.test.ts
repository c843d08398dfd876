import { describe, it, expect } from "vitest";
import { buildNetwork, createDataset, EbbflowError, Trainer, type Metrics } from "../../src/index.js";
import { accumulateMetrics, MetricSums } from "../../src/train/metrics.js";

// two examples with both outputs tied at 0.5: targets class 1 and class 0 (definitions of the policies)
const y = Float64Array.from([0.5, 0.5, 0.5, 0.5]);
const t = [0, 1, 1, 0];

describe("tie policy of the arg-max read-out", () => {
  it('"wrong" counts a tie as wrong, "first" takes the lowest tied index; both count the ties', () => {
    const wrong = new MetricSums("squared-error", "wrong");
    accumulateMetrics(wrong, y, t, 2, 2);
    expect(wrong.result()).toMatchObject({ accuracy: 0, ties: 2 });
    const first = new MetricSums("squared-error", "first");
    accumulateMetrics(first, y, t, 2, 2);
    expect(first.result()).toMatchObject({ accuracy: 0.5, ties: 2 });
  });

  it('"random" picks one of the tied units from the seeded source: r < ½ the first, else the second; it needs a source', () => {
    const low = new MetricSums("squared-error", "random", () => 0.2);
    accumulateMetrics(low, y, t, 2, 2);
    expect(low.result().accuracy).toBe(0.5); // picks unit 0 both times: right for example 1 only
    const high = new MetricSums("squared-error", "random", () => 0.7);
    accumulateMetrics(high, y, t, 2, 2);
    expect(high.result().accuracy).toBe(0.5); // picks unit 1: right for example 0 only
    // three-way tie among units 0, 2, 3 (unit 1 lower): r = ⌊0.9·3⌋ = 2 picks unit 3
    const three = new MetricSums("squared-error", "random", () => 0.9);
    accumulateMetrics(three, Float64Array.from([1, 0, 1, 1]), [0, 0, 0, 1], 1, 4);
    expect(three.result().accuracy).toBe(1);
    expect(() => new MetricSums("squared-error", "random")).toThrow(EbbflowError);
  });
});

/** Frozen zero weights: every example gives the same outputs; balanced targets keep the two output biases equal, so the outputs tie. */
const tiedNet = () =>
  buildNetwork({
    seed: 2,
    layers: [
      { name: "in", size: 2, role: "input" },
      { name: "out", size: 2, role: "output" },
    ],
    connections: [{ from: "in", to: "out", weights: [0, 0, 0, 0], frozen: true }],
  });
const data = createDataset("pairs", [[0, 1], [1, 0], [1, 1], [0, 0]], [[1, 0], [0, 1], [1, 0], [0, 1]]);

describe("the training guard", () => {
  it('stops with "outputs-tied" when every example\'s outputs tie (on by default); guard: false trains on', () => {
    const tr = new Trainer(tiedNet(), { rule: "backprop", rate: 0.5 }, data, { epochs: 5, batchSize: 4 });
    expect(tr.run()).toEqual({ reason: "outputs-tied", epochs: 1 });
    expect(tr.history[0]!.train).toMatchObject({ ties: 4, accuracy: 0 });
    expect(new Trainer(tiedNet(), { rule: "backprop", rate: 0.5 }, data, { epochs: 5, batchSize: 4, guard: false }).run().reason).toBe("max-epochs");
  });

  it("random tie-breaking is reproducible: same seed, same accuracy bits", () => {
    const acc = (seed: number) => {
      const tr = new Trainer(tiedNet(), { rule: "backprop", rate: 0.5 }, data, { epochs: 3, batchSize: 4, guard: false, ties: "random" }, { seed });
      tr.run();
      return tr.history.map((r) => r.train!.accuracy);
    };
    expect(acc(9)).toEqual(acc(9));
  });

  it('stops with "non-finite-loss" when an evaluation\'s loss is not finite', () => {
    const tr = new Trainer(tiedNet(), { rule: "backprop", rate: 0.5 }, data, { epochs: 5 });
    const bad: Metrics = { sse: Number.POSITIVE_INFINITY, loss: Number.POSITIVE_INFINITY, binaryCrossEntropy: 0, softmaxCrossEntropy: 0, accuracy: 0.5, cosine: 0, ties: 0, examples: 4 };
    expect(tr.stopAfter({ kind: "epoch", epoch: 1, seconds: 0, rate: 0.5, train: bad })).toBe("non-finite-loss");
  });
});
