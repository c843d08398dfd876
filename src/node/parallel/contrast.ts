/**
 * The row split's plan of a rule: its descriptor's contrast form laid out on the network (see
 * `src/rules/contrast-form.ts`, which holds the arithmetic shared by one thread and the workers).
 * @module
 */
import type { Network } from "../../network/network.js";
import { contrastPlan, type ContrastPlan, type RuleConfigBase, type Registry } from "../../rules/index.js";

/**
 * The row-split plan of a rule config on `net`, or null when the rule has no contrast form here (its
 * descriptor has none, or declines for this network) or a trained connection has a sign or bound
 * constraint (those go through the constrained update).
 */
export function rowPlan(net: Network, config: RuleConfigBase, registry: Registry): ContrastPlan | null {
  const d = registry.rule(config.rule);
  if (d.split?.(config, net) !== "rows") return null;
  const form = d.contrast?.(config, net) ?? null;
  return form === null ? null : contrastPlan(net, config, form);
}
