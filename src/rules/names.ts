/**
 * The one name each rule is shown by in output.
 * @module
 */
import { builtinRegistry, type Registry } from "./registry.js";

/**
 * The name a rule config is shown by in output (the demo, gradient-agreement reports, learning-curve
 * titles, benchmark tables): its descriptor's `label` — for the built-in rules the rule id, followed by
 * its `variant` (generec) or `mode` (eqprop) in parentheses. Defaults are filled in first.
 * @param config - a rule config (defaults may be omitted)
 * @param registry - where the rule is looked up (default: the built-in rules)
 * @returns e.g. `"chl"`, `"generec (basic)"`, `"eqprop (symmetric)"`, `"calcium"`
 * @throws {@link EbbflowError} `invalid_config` if `config` is not a valid rule config, `unknown_name`
 *   for a rule that is not registered
 * @category Rules
 * @example
 * ```ts
 * ruleDisplayName({ rule: "eqprop", beta: 0.1, rate: 1 }); // "eqprop (one-sided)"
 * ruleDisplayName({ rule: "calcium", rate: 1, threshold: "blend" }); // "calcium"
 * ```
 */
export function ruleDisplayName(config: unknown, registry: Registry = builtinRegistry): string {
  const c = registry.parseRule(config);
  return registry.rule(c.rule).label(c);
}
