import { describe, it, expect } from "vitest";
import { buildNetwork, createRule, feedforwardGradient, ParameterDelta } from "../../src/index.js";
import { expectClose, relativeError } from "../helpers/tolerance.js";

function pcNet(seed: number) {
  // methods.md item 12: a 3-3-4-2 tanh network (input 3, hidden 3 and 4, output 2); outputs linear (the prediction)
  return buildNetwork({
    seed,
    layers: [
      { name: "in", size: 3, role: "input" },
      { name: "h1", size: 3, role: "hidden", unit: { kind: "tanh" }, bias: [0.1, -0.2, 0.05] },
      { name: "h2", size: 4, role: "hidden", unit: { kind: "tanh" }, bias: [0, 0.1, -0.1, 0.2] },
      { name: "out", size: 2, role: "output", unit: { kind: "linear" } },
    ],
    connections: [
      { from: "in", to: "h1", init: { kind: "normal", std: 0.8 } },
      { from: "h1", to: "h2", init: { kind: "normal", std: 0.8 } },
      { from: "h2", to: "out", init: { kind: "normal", std: 0.8 } },
    ],
  });
}
const batch = { inputs: { in: [0.5, -0.3, 0.8] }, targets: { out: [0.7, -0.4] } };
const flat = (d: ParameterDelta) => d.weights.flatMap((w) => Array.from(w));

describe("predictive coding (Whittington & Bogacz 2017)", () => {
  it("the error against backprop shrinks as 1/Σ_out: about tenfold per tenfold Σ_out once asymptotic (Σ_out >= 100 for these nets; methods.md item 12 [DER, numerically verified] states it from 10 for its own draw)", () => {
    for (const seed of [1, 2, 3]) {
      const net = pcNet(seed);
      const bp = flat(feedforwardGradient(net, batch)).map((v) => -v);
      const err = (variance: number) => relativeError(flat(createRule(net, { rule: "predictive-coding", rate: 1, outputVariance: variance, dt: 0.2, maxSteps: 100000, tolerance: 1e-14 }).computeDelta(batch, new ParameterDelta(net))), bp);
      const e = [100, 1000, 10000].map(err);
      expect(e[0]! / e[1]!).toBeGreaterThan(8);
      expect(e[0]! / e[1]!).toBeLessThan(12);
      expect(e[1]! / e[2]!).toBeGreaterThan(8);
      expect(e[1]! / e[2]!).toBeLessThan(12);
    }
  });

  it("with no hidden layer the update is the delta rule exactly (methods.md item 12, check 2 [DER])", () => {
    const net = buildNetwork({
      seed: 3,
      layers: [
        { name: "in", size: 3, role: "input" },
        { name: "out", size: 2, role: "output", unit: { kind: "linear" } },
      ],
      connections: [{ from: "in", to: "out", init: { kind: "normal", std: 1 } }],
    });
    const d = createRule(net, { rule: "predictive-coding", rate: 1, outputVariance: 4 }).computeDelta(batch, new ParameterDelta(net));
    const W = net.connections[0]!.weights;
    const x = batch.inputs.in;
    for (let i = 0; i < 2; i++) {
      const y = W[i * 3]! * x[0]! + W[i * 3 + 1]! * x[1]! + W[i * 3 + 2]! * x[2]!;
      for (let j = 0; j < 3; j++) expectClose(d.weights[0]![i * 3 + j]!, (batch.targets.out[i]! - y) * x[j]!, 1e-12);
    }
  });

  it("nonlinear output units are rejected with the layer's path", () => {
    const net = buildNetwork({
      layers: [
        { name: "in", size: 1, role: "input" },
        { name: "out", size: 1, role: "output" },
      ],
      connections: [{ from: "in", to: "out" }],
    });
    expect(() => createRule(net, { rule: "predictive-coding", rate: 1 })).toThrow(/layers\[1\]\.unit\.kind/);
  });
});
