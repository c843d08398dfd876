import { describe, it, expect } from "vitest";
import { buildNetwork, gradientAgreement, formatAgreement, EbbflowError } from "../../src/index.js";
import { agreementNetwork, agreementBatch } from "../../bench/agreement.js";

/**
 * A bistable output unit (analytic property): x = σ(0.5·0.2 + 8x − 4) has two stable fixed points, near
 * 0.02 and near 0.98, with the unstable one at 0.5 − 0.1/8 between them. Settling from rest reaches the
 * low one; a state above the middle settles to the high one.
 */
const bistable = () =>
  buildNetwork({
    layers: [
      { name: "in", size: 1, role: "input" },
      { name: "out", size: 1, role: "output", bias: -4 },
    ],
    connections: [
      { from: "in", to: "out", weights: [0.5] },
      { from: "out", to: "out", weights: [8] },
    ],
    dynamics: { kind: "rate", dt: 0.5, maxSteps: 5000, tolerance: 1e-12 },
  });
const batch = { inputs: { in: [0.2, 0.2] }, targets: { out: [1, 0] } };

describe("gradientAgreement's phase report", () => {
  it("reports per phase convergence, steps and the distance from the free state; converged phases without a jump raise no warning", () => {
    const r = gradientAgreement(buildNetwork(agreementNetwork(1)), { rule: "eqprop", beta: 0.01, rate: 1, mode: "symmetric" }, agreementBatch);
    expect(r.phases.map((p) => p.phase)).toEqual(["free", "nudged +β", "nudged −β"]);
    for (const p of r.phases) {
      expect(p.converged).toBe(true);
      expect(p.steps).toBeGreaterThan(1);
      expect(p.basinJump).toBe(false);
    }
    expect(r.phases[0]!.distanceFromFree).toBe(0);
    // the nudged states move O(β) away from the free state
    expect(r.phases[1]!.distanceFromFree).toBeGreaterThan(0);
    expect(r.phases[1]!.distanceFromFree).toBeLessThan(0.01);
    expect(r.warning).toBe(false);
    expect(formatAgreement(r)).toContain("phase nudged +β: converged in");
  });

  it("a phase cut short by its step limit is reported as not converged, with its step count, and warns", () => {
    const r = gradientAgreement(buildNetwork(agreementNetwork(1)), { rule: "eqprop", beta: 0.1, rate: 1, nudgedSteps: 2 }, agreementBatch);
    expect(r.phases[1]).toMatchObject({ phase: "nudged", converged: false, steps: 2 });
    expect(r.warning).toBe(true);
    expect(formatAgreement(r)).toContain("phase nudged: NOT converged in 2 steps");
  });

  it("flags a basin jump on a bistable unit: clamping to 1 or nudging hard carries pattern 0 into the other attractor; a weak nudge does not", () => {
    const weak = gradientAgreement(bistable(), { rule: "eqprop", beta: 0.01, rate: 1 }, batch);
    expect(weak.phases.map((p) => p.basinJump)).toEqual([false, false]);
    const hard = gradientAgreement(bistable(), { rule: "eqprop", beta: 50, rate: 1 }, batch);
    expect(hard.phases[1]).toMatchObject({ basinJump: true, jumpedPatterns: [0], converged: true });
    // released, pattern 0 settles near the high fixed point, about 0.96 from the low one
    expect(hard.phases[1]!.releasedDistance).toBeGreaterThan(0.9);
    expect(hard.warning).toBe(true);
    const clamped = gradientAgreement(bistable(), { rule: "generec", rate: 1 }, batch);
    expect(clamped.phases[1]).toMatchObject({ phase: "clamped", basinJump: true, jumpedPatterns: [0] });
    expect(formatAgreement(clamped)).toMatch(/BASIN JUMP \(patterns 0 settle/);
  });

  it("rules on the feedforward pass report no phases; basinTolerance must be > 0", () => {
    expect(gradientAgreement(buildNetwork(agreementNetwork(0)), { rule: "backprop", rate: 1 }, agreementBatch).phases).toEqual([]);
    expect(() => gradientAgreement(bistable(), { rule: "chl", rate: 1 }, batch, { basinTolerance: 0 })).toThrow(EbbflowError);
  });
});
