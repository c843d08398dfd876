/**
 * Rule configs as data: `{ "rule": "eqprop", "beta": 0.1, "rate": 0.05 }`. Each rule's schema lives in
 * its descriptor; this module gives the union of the built-in ones (types and JSON Schema) and the parse
 * entry point.
 * @module
 */
import { z } from "zod";
import { calciumRule, chlRule, generecRule, xieSeungRule } from "./contrastive.js";
import { eqpropRule } from "./eqprop.js";
import { bcmRule } from "./bcm.js";
import { backpropRule, directFeedbackAlignmentRule, feedbackAlignmentRule } from "./feedforward.js";
import { predictiveCodingRule } from "./predictive.js";
import { builtinRegistry, builtinRules, type AnyRuleConfig, type Registry } from "./registry.js";

/** Schema of every built-in rule config (for types and the JSON Schema; parsing goes through a {@link Registry}). @category Rules */
export const ruleSchema = z.discriminatedUnion(
  "rule",
  [
    chlRule.schema as typeof chlRule.schema & z.ZodObject,
    generecRule.schema as typeof generecRule.schema & z.ZodObject,
    xieSeungRule.schema as typeof xieSeungRule.schema & z.ZodObject,
    eqpropRule.schema as typeof eqpropRule.schema & z.ZodObject,
    calciumRule.schema as typeof calciumRule.schema & z.ZodObject,
    bcmRule.schema as typeof bcmRule.schema & z.ZodObject,
    feedbackAlignmentRule.schema as typeof feedbackAlignmentRule.schema & z.ZodObject,
    directFeedbackAlignmentRule.schema as typeof directFeedbackAlignmentRule.schema & z.ZodObject,
    predictiveCodingRule.schema as typeof predictiveCodingRule.schema & z.ZodObject,
    backpropRule.schema as typeof backpropRule.schema & z.ZodObject,
  ],
  { error: `a rule: ${builtinRules.map((d) => d.name).join(", ")}` },
);

/** A built-in rule config as written (defaults may be omitted). @category Rules */
export type RuleConfigInput = z.input<typeof ruleSchema>;
/** A built-in rule config with defaults filled in. @category Rules */
export type RuleConfig = z.output<typeof ruleSchema>;
/** Names of the built-in rules. @category Rules */
export type RuleName = RuleConfig["rule"];

/**
 * Validates a rule config; every problem is reported with its path under `prefix` (default `rule`).
 * Rules of your own are found in `registry` (default: the built-ins).
 * @throws {@link EbbflowError} `invalid_config`, or `unknown_name` for a rule that is not registered.
 * @category Rules
 */
export function parseRule(input: unknown, prefix = "rule", registry: Registry = builtinRegistry): AnyRuleConfig {
  return registry.parseRule(input, prefix);
}

/** The JSON Schema of a built-in rule config. @category Rules */
export function ruleJsonSchema(): Record<string, unknown> {
  return z.toJSONSchema(ruleSchema, { io: "input", unrepresentable: "any" }) as Record<string, unknown>;
}
