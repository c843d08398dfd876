/**
 * The demo's computations: no-hidden-layer failure, hidden-layer learning per rule, and the
 * gradient-agreement table, on the touch-strip scenario.
 * @module
 */
import { buildNetwork, type Network } from "../network/network.js";
import type { NetworkSpecInput } from "../network/spec.js";
import type { RuleConfigInput } from "../rules/config.js";
import { ruleDisplayName } from "../rules/names.js";
import { Trainer, type EpochRecord } from "../train/loop.js";
import { gradientAgreement, type AgreementReport } from "../verify/agreement.js";
import { touchStripDataset } from "./touchStrip.js";

/** A rule as the demo trains it; it is shown by its {@link ruleDisplayName}. @category Demo */
export interface DemoRule {
  readonly config: RuleConfigInput;
  /** Target activity for "off" (the calcium curve cannot depress when the clamped activity is exactly 0). */
  readonly low: number;
}

/** The rules the demo compares. @category Demo */
export const DEMO_RULES: readonly DemoRule[] = [
  { config: { rule: "generec", rate: 1 }, low: 0 },
  { config: { rule: "chl", rate: 0.5 }, low: 0 },
  { config: { rule: "eqprop", beta: 0.5, rate: 2 }, low: 0 },
  { config: { rule: "calcium", rate: 1 }, low: 0.05 },
];

/** The demo's network: 8 sensors, an optional hidden layer, 2 texture units; symmetric feedback. @category Demo */
export function demoNetwork(hidden: number, seed: number): NetworkSpecInput {
  const link = (from: string, to: string) => ({ from, to, init: { kind: "uniform" as const, low: -1, high: 1 }, feedback: { kind: "tied" as const, gain: 1 } });
  return {
    seed,
    layers: [
      { name: "sensors", size: 8, role: "input" },
      ...(hidden > 0 ? [{ name: "hidden", size: hidden, role: "hidden" as const }] : []),
      { name: "texture", size: 2, role: "output" },
    ],
    connections: hidden > 0 ? [link("sensors", "hidden"), link("hidden", "texture")] : [link("sensors", "texture")],
    dynamics: { dt: 0.5, maxSteps: 300, tolerance: 1e-5 },
  };
}

/** One training run of the demo. @category Demo */
export interface DemoRun {
  /** The rule's display name ({@link ruleDisplayName}). */
  readonly rule: string;
  readonly seed: number;
  readonly solved: boolean;
  /** Epoch at which all four patterns were first right (or the epoch limit). */
  readonly epochs: number;
  /** Most patterns right at any epoch. */
  readonly bestCorrect: number;
  readonly finalSse: number;
  readonly history: readonly EpochRecord[];
}

/** Trains one rule on one seed; stops when all four patterns are right. @category Demo */
export function demoRun(rule: DemoRule, seed: number, hidden: number, epochs: number): DemoRun {
  const data = touchStripDataset({ low: rule.low, high: 1 - rule.low });
  const net: Network = buildNetwork(demoNetwork(hidden, seed));
  const trainer = new Trainer(net, rule.config, data, { epochs, batchSize: 4, shuffle: false, stopWhen: { metric: "accuracy", atLeast: 1 } }, { seed });
  const { reason, epochs: ran } = trainer.run();
  const best = Math.max(...trainer.history.map((r) => Math.round((r.train?.accuracy ?? 0) * 4)));
  return { rule: ruleDisplayName(rule.config), seed, solved: reason === "target-reached", epochs: ran, bestCorrect: best, finalSse: trainer.history.at(-1)?.train?.sse ?? Number.NaN, history: trainer.history };
}

/**
 * The gradient-agreement reports on one hidden-layer network: each demo rule with the targets it trains on
 * (the calcium rule's "off" target is 0.05), then symmetric EqProp at small β and backprop.
 * @category Demo
 */
export function demoAgreement(hidden: number, seed: number): AgreementReport[] {
  const rules: DemoRule[] = [
    ...DEMO_RULES.map((r) => ({ ...r, config: { ...r.config, rate: 1 } as RuleConfigInput })),
    { config: { rule: "eqprop", beta: 0.01, rate: 1, mode: "symmetric" }, low: 0 },
    { config: { rule: "backprop", rate: 1 }, low: 0 },
  ];
  return rules.map((r) => {
    const data = touchStripDataset({ low: r.low, high: 1 - r.low });
    const batch = { inputs: { sensors: data.inputs }, targets: { texture: data.targets } };
    const net = buildNetwork(demoNetwork(hidden, seed)).withDynamics({ maxSteps: 100000, tolerance: 1e-12 });
    return gradientAgreement(net, r.config, batch);
  });
}
