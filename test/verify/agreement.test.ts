import { describe, it, expect } from "vitest";
import { buildNetwork, gradientAgreement, formatAgreement } from "../../src/index.js";
import { agreementNetwork, agreementBatch } from "../../bench/agreement.js";

describe("gradient agreement reports", () => {
  it("symmetric EqProp at small β agrees with the recurrent gradient on the 4-8-3 network (Laborieux et al. 2021: bias O(β²))", () => {
    const report = gradientAgreement(buildNetwork(agreementNetwork(1)), { rule: "eqprop", beta: 0.01, rate: 0.3, mode: "symmetric" }, agreementBatch);
    expect(report.rows.map((r) => r.parameter)).toEqual(["sensors->hidden", "hidden->decision", "hidden bias", "decision bias"]);
    for (const r of report.rows) {
      expect(r.cosine).toBeGreaterThan(0.99999);
      expect(r.relativeError).toBeLessThan(1e-3);
      expect(r.updateNorm).toBeCloseTo(r.gradientNorm, 3);
    }
  });

  it("backprop agrees exactly when the network has no feedback (recurrent backprop reduces to backprop)", () => {
    const report = gradientAgreement(buildNetwork(agreementNetwork(0)), { rule: "backprop", rate: 2 }, agreementBatch);
    expect(report.overall.cosine).toBeCloseTo(1, 12);
    expect(report.overall.relativeError).toBeLessThan(1e-10);
  });

  it("the finite-difference reference gives the same table as the recurrent one", () => {
    const a = gradientAgreement(buildNetwork(agreementNetwork(0.5)), { rule: "chl", rate: 1 }, agreementBatch);
    const b = gradientAgreement(buildNetwork(agreementNetwork(0.5)), { rule: "chl", rate: 1 }, agreementBatch, { reference: "finite-difference" });
    a.rows.forEach((r, i) => expect(b.rows[i]!.cosine).toBeCloseTo(r.cosine, 6));
  });

  it("prints a table with one row per parameter and an overall row; the network is left unchanged", () => {
    const net = buildNetwork(agreementNetwork(1));
    const before = Array.from(net.connections[0]!.weights);
    const text = formatAgreement(gradientAgreement(net, { rule: "generec", rate: 1 }, agreementBatch));
    const lines = text.split("\n");
    expect(lines[0]).toBe("generec (basic) vs recurrent gradient");
    expect(lines[1]).toMatch(/^parameter\s+cosine\s+rel\. error/);
    expect(lines.filter((l) => /^(sensors|hidden|decision|\(all)/.test(l))).toHaveLength(5);
    expect(Array.from(net.connections[0]!.weights)).toEqual(before);
  });
});
