/**
 * The one name each rule is shown by in output.
 * @module
 */
import { parseRule, type RuleConfig, type RuleConfigInput } from "./config.js";

/**
 * The name a rule config is shown by in output (the demo, gradient-agreement reports, learning-curve
 * titles, benchmark tables): its id, followed by its `variant` (generec) or `mode` (eqprop) in
 * parentheses. Defaults are filled in first.
 * @param config - a rule config (defaults may be omitted)
 * @returns e.g. `"chl"`, `"generec (basic)"`, `"eqprop (symmetric)"`, `"calcium"`
 * @throws {@link EbbflowError} `invalid_config` if `config` is not a valid rule config
 * @category Rules
 * @example
 * ```ts
 * ruleDisplayName({ rule: "eqprop", beta: 0.1, rate: 1 }); // "eqprop (one-sided)"
 * ruleDisplayName({ rule: "calcium", rate: 1, threshold: "blend" }); // "calcium"
 * ```
 */
export function ruleDisplayName(config: RuleConfigInput | RuleConfig): string {
  const c = parseRule(config);
  return c.rule + ("variant" in c ? ` (${c.variant})` : "mode" in c ? ` (${c.mode})` : "");
}
