/**
 * Learning rules as plug-ins, chosen by a config object.
 * @module
 */
import type { Network } from "../network/network.js";
import type { LearningRule } from "./base.js";
import { builtinRegistry, type Registry } from "./registry.js";

export * from "./config.js";
export * from "./names.js";
export * from "./delta.js";
export * from "./base.js";
export * from "./descriptor.js";
export * from "./registry.js";
export * from "./contrast-form.js";
export { ContrastiveHebbian, GeneRec, SlidingThresholdRule, generecFromSnapshots, layerDepths, xieSeungFactors, phaseContrast, chlRule, xieSeungRule, generecRule, calciumRule } from "./contrastive.js";
export { EquilibriumPropagation, eqpropRule } from "./eqprop.js";
export { FeedforwardRule, feedforwardGradient, forwardOrder, createForwardPass, runForward, type ForwardPass, type FeedforwardConfig, backpropRule, feedbackAlignmentRule, directFeedbackAlignmentRule } from "./feedforward.js";
export { BcmRule, bcmRule } from "./bcm.js";
export { PredictiveCoding, predictiveCodingRule } from "./predictive.js";

/**
 * Builds the learning rule a config names, bound to `net`. One network trains under any rule by
 * changing only this config; rules of your own are found in `registry` (default: the built-ins).
 * @throws {@link EbbflowError} `invalid_config` (path under `rule`, or the network path a rule needs);
 *   `unknown_name` for a rule that is not registered.
 * @category Rules
 * @example
 * ```ts
 * const rule = createRule(net, { rule: "eqprop", beta: 0.1, rate: 0.05 });
 * rule.step({ inputs: { in: xs }, targets: { out: ts } });
 * ```
 */
export function createRule(net: Network, config: unknown, registry: Registry = builtinRegistry): LearningRule {
  return registry.createRule(net, config);
}
