/**
 * The experiment file: a network declaration, the rules to train or compare, training options and a
 * data source, validated together (every problem with its path).
 * @module
 */
import { z } from "zod";
import { EbbflowError, inputShapeIssues, type Issue } from "../errors/index.js";
import { issuesFromZod, safeParseNetwork, type NetworkSpec } from "../network/spec.js";
import { ruleSchema } from "../rules/config.js";
import { builtinRegistry, type AnyRuleConfig, type Registry } from "../rules/registry.js";
import { trainingSchema, type TrainingOptions } from "../train/loop.js";
import { fixedSplitSchema } from "./split-schema.js";

/** Schema of an experiment's data section. @category Files */
export const dataSourceSchema = z
  .object({
    /** A built-in set (`xor`, `parity:N`, `touch-strip`, `oriented-bars[:N]`, `iris`, `digits` or `digits:N`) or a CSV/JSON file path. */
    source: z.string({ error: "a data source name or file path" }).min(1),
    /** Fraction held out for testing (seeded split), 0 for none. */
    testFraction: z.number().min(0).max(0.9, { error: "a fraction in [0, 0.9]" }).default(0),
    /** For CSV files: the columns that hold the targets (0-based indices or header names). */
    targetColumns: z.array(z.union([z.number().int().min(0), z.string()])).optional(),
    /** For CSV files: the column groups of the output layers (layer name → columns), instead of targetColumns; a group of empty cells is a target not observed. */
    targetLayers: z.record(z.string(), z.array(z.union([z.number().int().min(0), z.string()])).min(1, { error: "at least one column" })).optional(),
    /** For CSV files: the column groups of the input layers (layer name → columns). */
    inputLayers: z.record(z.string(), z.array(z.union([z.number().int().min(0), z.string()])).min(1, { error: "at least one column" })).optional(),
    /** For CSV files: one-hot encode the (single) target column as class labels. */
    oneHot: z.boolean().optional(),
    /** For CSV files of sequences: the column naming each row's sequence (its rows consecutive). JSON files with a `sequences` key are read as sequences without it. */
    sequenceColumn: z.union([z.number().int().min(0), z.string()]).optional(),
    /** Scale inputs to [0, 1] with the training split's minimum and maximum. */
    scale: z.boolean().default(false),
    /** A fixed split instead of `testFraction`: index files `{ train, test }` (relative to the working folder) or a CSV column `{ column }` of `train`/`test`. */
    split: fixedSplitSchema.optional(),
  })
  .strict();

/** Module paths of rules and units of your own, relative to the file (see `loadPlugins` in `ebbflow/node`). */
const pluginsSchema = z.array(z.string({ error: "a module path" }).min(1, { error: "a module path" }), { error: "an array of module paths" });

/**
 * Schema of an experiment file (without the network, which has its own validator). Its rules are listed
 * with the built-in rules' schemas (for editors); when parsing, each rule is checked against its
 * descriptor in the registry, so rules of your own (loaded from `plugins`) are accepted too.
 * @category Files
 */
export const experimentSchema = z
  .object({
    name: z.string().optional(),
    plugins: pluginsSchema.optional(),
    network: z.unknown(),
    rules: z.array(ruleSchema).min(1, { error: "at least one rule" }).optional(),
    training: trainingSchema.optional(),
    data: dataSourceSchema.optional(),
  })
  .strict();

/** The same, with rules left to the registry. */
const experimentParseSchema = experimentSchema.extend({ rules: z.array(z.unknown()).min(1, { error: "at least one rule" }).optional() }).strict();

/** A validated experiment. @category Files */
export interface Experiment {
  readonly name: string | undefined;
  /** Module paths of rules and units of your own, as written (relative to the file). */
  readonly plugins: readonly string[];
  readonly network: NetworkSpec;
  readonly rules: readonly AnyRuleConfig[];
  readonly training: TrainingOptions | undefined;
  readonly data: z.output<typeof dataSourceSchema> | undefined;
}

/**
 * Validates an experiment object. A bare network declaration (with `layers`) is accepted as an
 * experiment with only a network. Reports every problem at once. Rules are looked up in `registry`
 * (default: the built-ins); load the modules named in `plugins` first (`loadPlugins` in `ebbflow/node`).
 * @throws {@link EbbflowError} `invalid_config`, or `unknown_name` for a rule that is not registered.
 * @category Files
 */
export function parseExperiment(input: unknown, registry: Registry = builtinRegistry): Experiment {
  if (input !== null && typeof input === "object" && "layers" in input && !("network" in input)) input = { network: input };
  const shape = inputShapeIssues(input);
  if (shape.length > 0) throw new EbbflowError(shape);
  const problems: Issue[] = [];
  const r = experimentParseSchema.safeParse(input);
  if (!r.success) problems.push(...issuesFromZod(r.error, input));
  const rules: AnyRuleConfig[] = [];
  if (r.success)
    (r.data.rules ?? []).forEach((rule, i) => {
      try {
        rules.push(registry.parseRule(rule, `rules[${i}]`));
      } catch (e) {
        if (!(e instanceof EbbflowError)) throw e;
        problems.push(...e.issues);
      }
    });
  const net = safeParseNetwork((input as { network?: unknown } | null)?.network, registry.units);
  if (!net.ok) problems.push(...net.issues.map((i) => ({ ...i, path: i.path === "" ? "network" : `network.${i.path}` })));
  if (problems.length > 0 || !r.success || !net.ok) throw new EbbflowError(problems);
  return { name: r.data.name, plugins: r.data.plugins ?? [], network: net.value, rules, training: r.data.training, data: r.data.data };
}

/** The JSON Schema of an experiment file (the network part refers to the network schema). @category Files */
export function experimentJsonSchema(): Record<string, unknown> {
  return z.toJSONSchema(experimentSchema, { io: "input", unrepresentable: "any" }) as Record<string, unknown>;
}
