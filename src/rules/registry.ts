/**
 * The registry of rules: the built-in ten, and any a user adds under a new name. A registry is an
 * immutable value passed to what needs it (`createRule`, `parseRule`, the Trainer, `gradientAgreement`,
 * `ParallelRule`, experiment files); there is no global mutable list.
 * @module
 */
import { z } from "zod";
import { EbbflowError, fail, inputShapeIssues, issueText, type Issue } from "../errors/index.js";
import { describeValue } from "../errors/index.js";
import type { Network } from "../network/network.js";
import { issuesFromZod } from "../network/spec.js";
import type { LearningRule } from "./base.js";
import { builtinUnits } from "../units/builtins.js";
import type { UnitDescriptor, UnitRegistry } from "../units/registry.js";
import { RULE_NAME, type RuleConfigBase, type RuleDescriptor } from "./descriptor.js";
import { calciumRule, chlRule, generecRule, xieSeungRule } from "./contrastive.js";
import { eqpropRule } from "./eqprop.js";
import { bcmRule } from "./bcm.js";
import { backpropRule, directFeedbackAlignmentRule, feedbackAlignmentRule } from "./feedforward.js";
import { predictiveCodingRule } from "./predictive.js";

/** The state of a rule that keeps none. */
const EMPTY_STATE = z.object({}).strict();

/** A rule config of any registered rule: the common fields and the rule's own options. @category Rules */
export type AnyRuleConfig = RuleConfigBase & Readonly<Record<string, unknown>>;

/** A descriptor of any config type (the registry stores them side by side). @category Rules */
// eslint-disable-next-line @typescript-eslint/no-explicit-any
export type AnyRuleDescriptor = RuleDescriptor<any>;

/** What may be added to a registry. @category Rules */
export interface RegistryAdditions {
  /** Rule descriptors under new names. */
  readonly rules?: readonly AnyRuleDescriptor[] | undefined;
  /** Unit descriptors under new kinds (see `defineUnit`). */
  // eslint-disable-next-line @typescript-eslint/no-explicit-any
  readonly units?: readonly UnitDescriptor<any, any>[] | undefined;
  /**
   * Module specifiers (absolute file URLs or paths) that define the additions: recorded so that worker
   * threads, sweep tasks and resumed runs import the same modules (see `loadPlugins` in `ebbflow/node`).
   */
  readonly plugins?: readonly string[] | undefined;
}

/** Checks a descriptor's shape; returns the problems found (path under `at`). */
function descriptorProblems(d: AnyRuleDescriptor, at: string): Issue[] {
  const problems: Issue[] = [];
  if (d === null || typeof d !== "object") return [issueText("invalid_config", at, "a rule descriptor object", describeValue(d))];
  if (typeof d.name !== "string" || !RULE_NAME.test(d.name)) problems.push(issueText("invalid_config", `${at}.name`, "a rule name of lower-case letters, digits and single hyphens, starting with a letter", describeValue(d.name)));
  if (d.schema === undefined || typeof (d.schema as { safeParse?: unknown }).safeParse !== "function") problems.push(issueText("invalid_config", `${at}.schema`, "a zod schema of the rule's config", describeValue(d.schema)));
  for (const key of ["create", "phases", "label"] as const) if (typeof d[key] !== "function") problems.push(issueText("invalid_config", `${at}.${key}`, "a function", describeValue(d[key])));
  if (d.readout !== "settle" && d.readout !== "forward") problems.push(issueText("invalid_config", `${at}.readout`, '"settle" or "forward"', describeValue(d.readout)));
  if (typeof d.summary !== "string") problems.push(issueText("invalid_config", `${at}.summary`, "a one-line description", describeValue(d.summary)));
  return problems;
}

/**
 * An immutable set of rule descriptors by name, and of unit kinds ({@link Registry.units}).
 * {@link builtinRegistry} holds the built-in rules and units; `builtinRegistry.with({ rules: [myRule],
 * units: [myUnit] })` returns a registry that also knows them.
 * @category Rules
 * @example
 * ```ts
 * const registry = builtinRegistry.with({ rules: [rewardHebbian] });
 * const trainer = new Trainer(net, { rule: "reward-hebbian", rate: 0.1 }, data, { epochs: 20 }, { registry });
 * ```
 */
export class Registry {
  /** Rule descriptors by name. */
  readonly rules: ReadonlyMap<string, AnyRuleDescriptor>;
  /** The unit kinds layers may name (pass to `buildNetwork(spec, { units })`). */
  readonly units: UnitRegistry;
  /** Modules that define what was added beyond the built-ins (for worker threads and resumed runs). */
  readonly plugins: readonly string[];

  /** The module each rule came from, when it was added with one (see {@link RegistryAdditions.plugins}). */
  private readonly origins: ReadonlyMap<string, string>;

  private constructor(rules: ReadonlyMap<string, AnyRuleDescriptor>, units: UnitRegistry, plugins: readonly string[], origins: ReadonlyMap<string, string>) {
    this.rules = rules;
    this.units = units;
    this.plugins = Object.freeze([...plugins]);
    this.origins = origins;
    Object.freeze(this);
  }

  /** A registry of exactly these descriptors. @throws {@link EbbflowError} `invalid_config` for a malformed or duplicate descriptor. */
  static of(rules: readonly AnyRuleDescriptor[], plugins: readonly string[] = [], units: UnitRegistry = builtinUnits): Registry {
    return new Registry(new Map(), units, [], new Map()).with({ rules, plugins });
  }

  /**
   * Can another thread or process rebuild this rule by name? True for the built-in rules and for rules
   * added together with the module that defines them (`loadPlugins`); false for descriptors added in
   * code only.
   */
  portable(name: string): boolean {
    return builtinNames.has(name) || this.origins.has(name);
  }

  /** Can another thread or process rebuild this unit kind by name? (Built-in kinds, and kinds added with their module.) */
  portableUnit(kind: string): boolean {
    return builtinUnits.has(kind) || this.origins.has(`unit:${kind}`);
  }

  /**
   * A new registry with these additions (this one is unchanged).
   * @throws {@link EbbflowError} `invalid_config` naming a malformed descriptor or a name already registered.
   */
  with(additions: RegistryAdditions): Registry {
    const rules = new Map(this.rules);
    const problems: Issue[] = [];
    (additions.rules ?? []).forEach((d, i) => {
      const own = descriptorProblems(d, `rules[${i}]`);
      problems.push(...own);
      if (own.length > 0) return;
      if (rules.has(d.name)) problems.push(issueText("invalid_config", `rules[${i}].name`, `a name not registered yet (registered: ${[...rules.keys()].join(", ")})`, JSON.stringify(d.name)));
      else rules.set(d.name, Object.freeze({ ...d }));
    });
    let units = this.units;
    if ((additions.units ?? []).length > 0) {
      try {
        units = units.with(...(additions.units ?? []));
      } catch (e) {
        if (!(e instanceof EbbflowError)) throw e;
        problems.push(...e.issues.map((x) => ({ ...x, path: x.path === "" ? "units" : `units.${x.path}` })));
      }
    }
    if (problems.length > 0) throw new EbbflowError(problems);
    const plugins = [...this.plugins];
    for (const p of additions.plugins ?? []) if (!plugins.includes(p)) plugins.push(p);
    const origins = new Map(this.origins);
    const from = additions.plugins?.[0];
    if (from !== undefined) {
      for (const d of additions.rules ?? []) origins.set(d.name, from);
      for (const d of additions.units ?? []) origins.set(`unit:${d.kind}`, from);
    }
    return new Registry(rules, units, plugins, origins);
  }

  /** The names of the registered rules, in registration order. */
  get ruleNames(): string[] {
    return [...this.rules.keys()];
  }

  /**
   * The descriptor registered under `name`.
   * @throws {@link EbbflowError} `unknown_name` at `path` listing the registered names.
   */
  rule(name: unknown, path = "rule.rule"): AnyRuleDescriptor {
    const d = typeof name === "string" ? this.rules.get(name) : undefined;
    if (d === undefined) fail("unknown_name", path, `a registered rule (${this.ruleNames.join(", ")}); a rule of your own must be registered (Registry.with, or --plugin on the command line)`, name);
    return d;
  }

  /**
   * Validates a rule config against its descriptor's schema and fills in its defaults; every problem is
   * reported with its path under `prefix`.
   * @throws {@link EbbflowError} `invalid_config` or `unknown_name`.
   */
  parseRule(input: unknown, prefix = "rule"): AnyRuleConfig {
    if (input === null || typeof input !== "object" || Array.isArray(input)) fail("invalid_config", prefix, `a rule config object with "rule" (${this.ruleNames.join(", ")})`, input);
    // deep nesting and reserved keys (which records such as rates would drop silently) are refused first
    const shape = inputShapeIssues(input, prefix);
    if (shape.length > 0) throw new EbbflowError(shape);
    const d = this.rule((input as { rule?: unknown }).rule, `${prefix}.rule`);
    const r = d.schema.safeParse(input);
    if (!r.success) throw new EbbflowError(issuesFromZod(r.error, input, [prefix]));
    return r.data as AnyRuleConfig;
  }

  /** The descriptor of a parsed config. */
  describe(config: RuleConfigBase): AnyRuleDescriptor {
    return this.rule(config.rule);
  }

  /**
   * Checks a saved rule state against the descriptor's state schema (default: an empty object) before it
   * is loaded; problems are reported with paths under `prefix`.
   * @throws {@link EbbflowError} `invalid_config`.
   */
  checkState(config: RuleConfigBase, state: unknown, prefix = "rule"): Readonly<Record<string, unknown>> {
    const schema = this.rule(config.rule).state ?? EMPTY_STATE;
    const r = schema.safeParse(state);
    if (!r.success) throw new EbbflowError(issuesFromZod(r.error, state, [prefix]));
    return r.data as Readonly<Record<string, unknown>>;
  }

  /** Builds the rule a config names, bound to `net`. */
  createRule(net: Network, config: unknown): LearningRule {
    const c = this.parseRule(config);
    return this.rule(c.rule).create(net, c);
  }
}

/** The built-in rules, in documentation order. @category Rules */
export const builtinRules: readonly AnyRuleDescriptor[] = Object.freeze([
  chlRule,
  generecRule,
  xieSeungRule,
  eqpropRule,
  calciumRule,
  bcmRule,
  feedbackAlignmentRule,
  directFeedbackAlignmentRule,
  predictiveCodingRule,
  backpropRule,
]);

const builtinNames: ReadonlySet<string> = new Set(builtinRules.map((d) => d.name));

/** A registry of the built-in rules. @category Rules */
export const builtinRegistry: Registry = Registry.of(builtinRules);
