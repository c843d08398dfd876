/**
 * Telling a rule the loss it follows: rules whose descriptor has an `objective` take a `loss` field,
 * filled in from the training config (`training.loss`) or from `gradientAgreement`'s `loss` option.
 * @module
 */
import { fail } from "../errors/index.js";
import { DEFAULT_OBJECTIVE, type LossName, type Objective } from "../train/loss.js";
import type { Registry } from "./registry.js";
import type { RuleConfigBase } from "./descriptor.js";

/**
 * The rule config with `loss` set to `loss` when the rule takes a loss (its descriptor has an
 * `objective`); unchanged otherwise. A config that names a different loss is refused, so that training
 * metrics, the rule and the verification never measure different things.
 * @throws {@link EbbflowError} `invalid_config` at `<path>.loss`.
 * @category Rules
 */
export function configWithLoss<T>(registry: Registry, rule: T, loss: LossName | undefined, path = "rule"): T {
  if (loss === undefined || rule === null || typeof rule !== "object" || Array.isArray(rule)) return rule;
  const d = registry.rules.get((rule as { rule?: unknown }).rule as string);
  if (d?.objective === undefined) return rule;
  const given = (rule as { loss?: unknown }).loss;
  if (given !== undefined && given !== loss) fail("invalid_config", `${path}.loss`, `the loss of the training config, ${JSON.stringify(loss)} (or no loss: it is filled in)`, given);
  return { ...rule, loss };
}

/**
 * The objective a rule follows: its descriptor's for rules that take a loss, otherwise the loss named
 * (on the output state) or the default squared error.
 * @category Rules
 */
export function ruleObjective(registry: Registry, config: RuleConfigBase, loss: LossName | undefined): Objective {
  const d = registry.rules.get(config.rule);
  if (d?.objective !== undefined) return d.objective(config);
  return loss === undefined ? DEFAULT_OBJECTIVE : { loss, on: "state", factor: 1 };
}
