import { describe, it, expect } from "vitest";
import { buildNetwork, createRule, bcmObjective } from "../../src/index.js";

describe("the BCM rule on a network", () => {
  it("a linear neuron on K = 2 equiprobable orthonormal patterns reaches the selective fixed point: preferred response 2, other 0, θ = 2 (methods.md item 7 [DER, numerically verified])", () => {
    const net = buildNetwork({
      seed: 7,
      layers: [
        { name: "in", size: 2, role: "input" },
        { name: "cell", size: 1, role: "output", unit: { kind: "linear" } },
      ],
      connections: [{ from: "in", to: "cell", init: { kind: "uniform", low: 0.1, high: 0.3 } }],
      dynamics: { dt: 1, maxSteps: 5, tolerance: 1e-12 },
    });
    // the threshold follows E[y²] over the pattern set: both patterns form one batch, thresholdTau small
    const rule = createRule(net, { rule: "bcm", rate: 0.05, thresholdTau: 1e-3 });
    for (let i = 0; i < 4000; i++) rule.step({ inputs: { in: [1, 0, 0, 1] }, targets: {} });
    const w = Array.from(net.connections[0]!.weights).sort((a, b) => b - a);
    expect(w[0]).toBeCloseTo(2, 3);
    expect(Math.abs(w[1]!)).toBeLessThan(1e-3);
    expect(bcmObjective(w)).toBeCloseTo(4 / 12, 3); // R = K²/12 at the selective point
  });
});
