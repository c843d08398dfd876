/**
 * The gradient-agreement table of every rule on one fixed 4-8-3 network (the figures recorded in the
 * closing note of the rules work). Not a speed benchmark: it prints cosines and relative errors.
 */
import { buildNetwork, gradientAgreement, formatAgreement, type RuleConfigInput, type NetworkSpecInput } from "../src/index.js";

export function agreementNetwork(gain: number): NetworkSpecInput {
  return {
    seed: 2024,
    layers: [
      { name: "sensors", size: 4, role: "input" },
      { name: "hidden", size: 8, role: "hidden" },
      { name: "decision", size: 3, role: "output" },
    ],
    connections: [
      { from: "sensors", to: "hidden", init: { kind: "normal", std: 0.8 }, feedback: { kind: "tied", gain } },
      { from: "hidden", to: "decision", init: { kind: "normal", std: 0.8 }, feedback: { kind: "tied", gain } },
    ],
    dynamics: { dt: 0.5, maxSteps: 100000, tolerance: 1e-13 },
  };
}

export const agreementBatch = {
  inputs: { sensors: [1, 0, 1, 0, 0, 1, 1, 0, 1, 1, 0, 1, 0.5, 0.2, 0.9, 0.1] },
  targets: { decision: [1, 0, 0, 0, 1, 0, 0, 0, 1, 1, 0, 0] },
};

export const agreementRules: RuleConfigInput[] = [
  { rule: "chl", rate: 1 },
  { rule: "generec", variant: "basic", rate: 1 },
  { rule: "generec", variant: "symmetric", rate: 1 },
  { rule: "generec", variant: "midpoint", rate: 1 },
  { rule: "generec", variant: "symmetric-midpoint", rate: 1 },
  { rule: "xie-seung", rate: 1 },
  { rule: "eqprop", beta: 0.05, rate: 1 },
  { rule: "eqprop", beta: 0.05, rate: 1, mode: "symmetric" },
  { rule: "calcium", rate: 1 },
  { rule: "bcm", rate: 1 },
  { rule: "feedback-alignment", rate: 1 },
  { rule: "direct-feedback-alignment", rate: 1 },
  { rule: "backprop", rate: 1 },
];

export async function run(): Promise<void> {
  for (const gain of [1, 0.1]) {
    console.log(`\n### 4-8-3 network, logistic units, tied feedback gain ${gain}; reference: recurrent backprop at the free fixed point\n`);
    const rows: string[] = [];
    for (const rule of agreementRules) {
      const report = gradientAgreement(buildNetwork(agreementNetwork(gain)), rule, agreementBatch);
      const per = report.rows.map((r) => `${r.parameter}: ${r.cosine.toFixed(3)}`).join(", ");
      rows.push(`| ${report.rule} | ${report.overall.cosine.toFixed(4)} | ${report.overall.relativeError.toExponential(2)} | ${per} |`);
      if (rule.rule === "eqprop" && gain === 1 && "mode" in rule) console.log(formatAgreement(report) + "\n");
    }
    console.log("| rule | cosine (all) | rel. error (all) | cosine per parameter |");
    console.log("| --- | --- | --- | --- |");
    for (const r of rows) console.log(r);
  }
}
