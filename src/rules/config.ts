/**
 * Rule configs as data: `{ "rule": "eqprop", "beta": 0.1, "rate": 0.05 }`.
 * One zod schema gives the types, the validation (every problem with its
 * path) and the JSON Schema.
 * @module
 */
import { z } from "zod";
import { EbbflowError, inputShapeIssues } from "../errors/index.js";
import { issuesFromZod } from "../network/spec.js";

const rate = z.number({ error: "a learning rate > 0" }).refine((v) => Number.isFinite(v) && v > 0, { error: "a learning rate > 0" });
const rates = z.record(z.string(), rate).optional();
const common = { rate, rates };
const nonZero = (what: string) => z.number({ error: what }).refine((v) => Number.isFinite(v) && v !== 0, { error: what });
const positive = (what: string) => z.number({ error: what }).refine((v) => Number.isFinite(v) && v > 0, { error: what });
const nonNegative = (what: string) => z.number({ error: what }).refine((v) => Number.isFinite(v) && v >= 0, { error: what });

/** Schema of every rule config. @category Rules */
export const ruleSchema = z.discriminatedUnion(
  "rule",
  [
    z.object({ rule: z.literal("chl"), ...common }).strict(),
    z.object({ rule: z.literal("generec"), variant: z.enum(["basic", "symmetric", "midpoint", "symmetric-midpoint"], { error: "one of basic, symmetric, midpoint, symmetric-midpoint" }).default("basic"), ...common }).strict(),
    z.object({ rule: z.literal("xie-seung"), gamma: nonNegative("a feedback gain gamma >= 0").optional(), ...common }).strict(),
    z
      .object({
        rule: z.literal("eqprop"),
        beta: nonZero("a non-zero nudging strength beta"),
        mode: z.enum(["one-sided", "random-sign", "symmetric"], { error: "one of one-sided, random-sign, symmetric" }).default("one-sided"),
        // settling steps of the free and nudged phases (default: the network's dynamics.maxSteps); the
        // authors settle fewer nudged than free steps, e.g. 20 and 4 (Scellier & Bengio 2017, from memory)
        freeSteps: z.number().int({ error: "an integer >= 1" }).min(1, { error: "an integer >= 1" }).optional(),
        nudgedSteps: z.number().int({ error: "an integer >= 1" }).min(1, { error: "an integer >= 1" }).optional(),
        ...common,
      })
      .strict(),
    z
      .object({
        rule: z.literal("calcium"),
        trough: z.number().refine((v) => v > 0 && v < 1, { error: "a trough position in the open interval (0, 1)" }).default(0.05),
        threshold: z.enum(["error", "bcm", "mix"], { error: "one of error, bcm, mix" }).default("error"),
        mix: z.number().refine((v) => v >= 0 && v <= 1, { error: "a mix weight in [0, 1]" }).default(0.9),
        timing: z.enum(["phases", "continuous"], { error: "one of phases, continuous" }).default("phases"),
        fastTau: positive("a time constant > 0 (settling steps)").default(1),
        slowTau: positive("a time constant > 0 (settling steps)").default(20),
        freeSteps: z.number().int().min(1, { error: "an integer >= 1" }).default(100),
        clampedSteps: z.number().int().min(1, { error: "an integer >= 1" }).default(10),
        averageTau: positive("a time constant > 0 (trials)").default(50),
        ...common,
      })
      .strict(),
    z.object({ rule: z.literal("bcm"), thresholdTau: positive("a time constant > 0 (batches)").default(10), ...common }).strict(),
    z.object({ rule: z.literal("feedback-alignment"), ...common }).strict(),
    z.object({ rule: z.literal("direct-feedback-alignment"), scale: positive("a feedback scale > 0").default(1), ...common }).strict(),
    z
      .object({
        rule: z.literal("predictive-coding"),
        outputVariance: positive("an output variance > 0").default(1),
        dt: positive("an inference step > 0").default(0.1),
        maxSteps: z.number().int().min(1, { error: "an integer >= 1" }).default(2000),
        tolerance: positive("a tolerance > 0").default(1e-10),
        ...common,
      })
      .strict(),
    z.object({ rule: z.literal("backprop"), ...common }).strict(),
  ],
  { error: "a rule: chl, generec, xie-seung, eqprop, calcium, bcm, feedback-alignment, direct-feedback-alignment, predictive-coding or backprop" },
);

/** A rule config as written (defaults may be omitted). @category Rules */
export type RuleConfigInput = z.input<typeof ruleSchema>;
/** A rule config with defaults filled in. @category Rules */
export type RuleConfig = z.output<typeof ruleSchema>;
/** Names of the rules. @category Rules */
export type RuleName = RuleConfig["rule"];

/**
 * Validates a rule config; every problem is reported with its path under `prefix` (default `rule`).
 * @throws {@link EbbflowError} `invalid_config`.
 * @category Rules
 */
export function parseRule(input: unknown, prefix = "rule"): RuleConfig {
  const shape = inputShapeIssues(input, prefix);
  if (shape.length > 0) throw new EbbflowError(shape);
  const r = ruleSchema.safeParse(input);
  if (!r.success) throw new EbbflowError(issuesFromZod(r.error, input, [prefix]));
  return r.data;
}

/** The JSON Schema of a rule config. @category Rules */
export function ruleJsonSchema(): Record<string, unknown> {
  return z.toJSONSchema(ruleSchema, { io: "input", unrepresentable: "any" }) as Record<string, unknown>;
}
