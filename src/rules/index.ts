/**
 * Learning rules as plug-ins, chosen by a config object.
 * @module
 */
import type { Network } from "../network/network.js";
import type { LearningRule } from "./base.js";
import { parseRule, type RuleConfigInput } from "./config.js";
import { ContrastiveHebbian, GeneRec, SlidingThresholdRule } from "./contrastive.js";
import { EquilibriumPropagation } from "./eqprop.js";
import { FeedforwardRule } from "./feedforward.js";
import { BcmRule } from "./bcm.js";
import { PredictiveCoding } from "./predictive.js";

export * from "./config.js";
export * from "./names.js";
export * from "./delta.js";
export * from "./base.js";
export { ContrastiveHebbian, GeneRec, SlidingThresholdRule, generecFromSnapshots, layerDepths } from "./contrastive.js";
export { EquilibriumPropagation } from "./eqprop.js";
export { FeedforwardRule, feedforwardGradient, forwardOrder, createForwardPass, runForward, type ForwardPass } from "./feedforward.js";
export { BcmRule } from "./bcm.js";
export { PredictiveCoding } from "./predictive.js";

/**
 * Builds the learning rule a config names, bound to `net`. One network trains under any rule by
 * changing only this config.
 * @throws {@link EbbflowError} `invalid_config` (path under `rule`, or the network path a rule needs).
 * @category Rules
 * @example
 * ```ts
 * const rule = createRule(net, { rule: "eqprop", beta: 0.1, rate: 0.05 });
 * rule.step({ inputs: { in: xs }, targets: { out: ts } });
 * ```
 */
export function createRule(net: Network, config: RuleConfigInput): LearningRule {
  const c = parseRule(config);
  switch (c.rule) {
    case "chl":
    case "xie-seung":
      return new ContrastiveHebbian(net, c);
    case "generec":
      return new GeneRec(net, c);
    case "eqprop":
      return new EquilibriumPropagation(net, c);
    case "calcium":
      return new SlidingThresholdRule(net, c);
    case "bcm":
      return new BcmRule(net, c);
    case "backprop":
    case "feedback-alignment":
    case "direct-feedback-alignment":
      return new FeedforwardRule(net, c);
    case "predictive-coding":
      return new PredictiveCoding(net, c);
  }
}
