/**
 * Rule descriptors: everything the library needs to know about a learning rule, in one place. The
 * built-in rules are descriptors like any other; a user's rule becomes usable by config name everywhere
 * (the Trainer, checkpoints, `gradientAgreement`, worker threads, sweeps, the command line) by
 * registering its descriptor (see {@link Registry}).
 * @module
 */
import { z } from "zod";
import type { Network } from "../network/network.js";
import type { LearningRule } from "./base.js";
import type { ContrastForm } from "./contrast-form.js";

/** Fields every rule config has: its name, its learning rate and optional per-connection rates. @category Rules */
export interface RuleConfigBase {
  readonly rule: string;
  /** The learning rate ε (> 0). */
  readonly rate: number;
  /** Learning rates by connection label (`from->to`), replacing `rate` for those connections. */
  readonly rates?: Readonly<Record<string, number>> | undefined;
}

/** Schema of a learning rate: a finite number > 0. @category Rules */
export const rateSchema = z.number({ error: "a learning rate > 0" }).refine((v) => Number.isFinite(v) && v > 0, { error: "a learning rate > 0" });

/**
 * The fields every rule config shares (`rate`, `rates`), to spread into a rule's `z.object({...})`.
 * @category Rules
 * @example
 * ```ts
 * const schema = z.object({ rule: z.literal("my-rule"), gain: z.number().default(1), ...commonRuleFields }).strict();
 * ```
 */
export const commonRuleFields = { rate: rateSchema, rates: z.record(z.string(), rateSchema).optional() } as const;

/**
 * How a rule may be shared out over worker threads (`ParallelRule`):
 * - `"rows"`: its change is a contrast form (see {@link RuleDescriptor.contrast}); each worker adds the
 *   whole batch's change for its own block of rows (the same bits whatever the number of workers);
 * - `"slices"`: each worker computes the change of its slice of the batch with the rule itself and the
 *   main thread adds the slices (equal to one thread's result within rounding);
 * - `"none"`: the rule's state changes from batch to batch (running averages, random streams), so it runs
 *   on one thread only.
 * @category Rules
 */
export type RuleSplit = "rows" | "slices" | "none";

/**
 * A learning rule as a descriptor.
 * @typeParam C - the rule's config with defaults filled in (what `schema` outputs).
 * @category Rules
 */
export interface RuleDescriptor<C extends RuleConfigBase = RuleConfigBase> {
  /** The config name (`{ "rule": name, ... }`): lower case, digits and hyphens. */
  readonly name: string;
  /** One line for listings and errors: what the rule does, with its published source. */
  readonly summary: string;
  /**
   * A zod schema of the whole config (`rule` as a literal, `...commonRuleFields`, the rule's own
   * options with their defaults); `.strict()` so that unknown keys are refused. Its JSON Schema goes into
   * the experiment and sweep schemas.
   */
  readonly schema: z.ZodType<C, unknown>;
  /** The phases the rule settles, in order (for reports). */
  phases(config: C): readonly string[];
  /** The name shown in reports and results: the rule id, with its variant or mode where it has one. */
  label(config: C): string;
  /**
   * Where the Trainer reads its predictions for accuracy under `readout: "auto"`: the settled free phase,
   * or the feedforward pass (rules that learn on the feedforward pass).
   */
  readonly readout: "settle" | "forward";
  /** How the rule may be shared out over worker threads (default `"none"`). */
  split?(config: C, net: Network): RuleSplit;
  /**
   * The rule's change as a contrast form (sums of products of phase activities with constant
   * coefficients), or null where it has none for this network. Used by the row split across workers, and
   * by {@link FormRule} for rules that are declared by their form alone.
   */
  contrast?(config: C, net: Network): ContrastForm | null;
  /**
   * A zod schema of the rule's saved state ({@link LearningRule.saveState}): a checkpoint's rule state is
   * validated with it before {@link LearningRule.loadState}, so a damaged state is a typed error naming the
   * field, never a different run. Default: a state must be an empty object.
   */
  readonly state?: z.ZodType<unknown, unknown> | undefined;
  /** Builds the rule bound to `net` (the config is already validated by `schema`). */
  create(net: Network, config: C): LearningRule;
}

/**
 * Declares a rule descriptor with its config type inferred from the schema (a typed identity helper).
 * @category Rules
 * @example
 * ```ts
 * export const myRule = defineRule({
 *   name: "my-rule",
 *   summary: "...",
 *   schema: z.object({ rule: z.literal("my-rule"), ...commonRuleFields }).strict(),
 *   phases: () => ["free"],
 *   label: (c) => c.rule,
 *   readout: "settle",
 *   create: (net, config) => new MyRule(net, config),
 * });
 * ```
 */
export function defineRule<C extends RuleConfigBase>(descriptor: RuleDescriptor<C>): RuleDescriptor<C> {
  return descriptor;
}

/** Rule names: lower case letters, digits and single hyphens, starting with a letter. */
export const RULE_NAME = /^[a-z][a-z0-9]*(-[a-z0-9]+)*$/;
