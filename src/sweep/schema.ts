/**
 * The sweep file: a base experiment, a grid over config paths and/or seeded random draws over paths,
 * times a list of seeds. One zod schema gives the types, the shape validation and the JSON Schema export
 * (`schema/sweep.schema.json`); the paths and values are checked against the base experiment by
 * `expandSweep`.
 *
 * ```json
 * { "name": "strip-rates",
 *   "base": "experiment.json",
 *   "grid": { "rule.rate": [0.5, 1, 2], "network.layers[1].size": [4, 8] },
 *   "draws": { "count": 4, "seed": 7, "over": { "training.batchSize": { "kind": "choice", "values": [2, 4] } } },
 *   "seeds": [1, 2, 3] }
 * ```
 * @module
 */
import { z } from "zod";
import { EbbflowError, capIssues, describeValue, inputShapeIssues, issueText, valueAt, type Issue } from "../errors/index.js";
import { experimentSchema } from "../config/experiment.js";
import { canonicalJson } from "./hash.js";
import { requireRuns } from "../limits/index.js";

const finite = (what = "a finite number") => z.number({ error: what }).refine(Number.isFinite, { error: what });
const positive = (what: string) => z.number({ error: what }).refine((v) => Number.isFinite(v) && v > 0, { error: what });
const positiveInt = (what = "an integer >= 1") => z.number({ error: what }).int({ error: what }).min(1, { error: what });

/** Schema of a seed: a finite number or a non-empty string. @category Sweeps */
export const sweepSeedSchema = z.union([finite(), z.string().min(1)], { error: "a seed: a finite number or a non-empty string" });

/** Schema of one random draw over a config path. @category Sweeps */
export const drawSchema = z.discriminatedUnion(
  "kind",
  [
    z
      .object({
        kind: z.literal("uniform"),
        low: finite(),
        high: finite(),
        integer: z.boolean().default(false).describe("draw whole numbers from low to high inclusive"),
      })
      .strict()
      .describe("uniform in [low, high)"),
    z
      .object({ kind: z.literal("log-uniform"), low: positive("a number > 0"), high: positive("a number > 0") })
      .strict()
      .describe("log-uniform in [low, high): the logarithm is uniform"),
    z
      .object({ kind: z.literal("choice"), values: z.array(z.unknown()).min(1, { error: "at least one value" }) })
      .strict()
      .describe("one of the values, each equally likely"),
  ],
  { error: "a draw kind: uniform, log-uniform or choice" },
);

/** One random draw as written. @category Sweeps */
export type DrawSpecInput = z.input<typeof drawSchema>;
/** One random draw with defaults filled in. @category Sweeps */
export type DrawSpec = z.output<typeof drawSchema>;

const sweepShape = {
  $schema: z.string().optional().describe("the JSON Schema this file follows (for editors)"),
  name: z.string().min(1, { error: "a non-empty name" }).optional().describe("name of the sweep"),
  base: z
    .union([z.string().min(1), z.record(z.string(), z.unknown())], { error: "an experiment file path or an inline experiment object" })
    .describe("the base experiment: a path (relative to the sweep file) or an inline experiment with network, rules, training and data"),
  grid: z
    .record(z.string(), z.array(z.unknown(), { error: "an array of values" }).min(1, { error: "at least one value" }))
    .optional()
    .describe('config path -> values, e.g. "rule.rate": [0.5, 1]; every combination is run'),
  draws: z
    .object({
      count: positiveInt().describe("number of draws (each combined with every grid point)"),
      seed: sweepSeedSchema.describe("seed of the draws (independent of the runs' seeds)"),
      over: z.record(z.string(), drawSchema).describe("config path -> distribution"),
    })
    .strict()
    .optional()
    .describe("seeded random draws over config paths"),
  seeds: z.array(sweepSeedSchema, { error: "an array of seeds" }).min(1, { error: "at least one seed" }).describe("every configuration runs once per seed; the seed sets the network's seed (weights) and the training seed (order, split)"),
  checkpointEvery: positiveInt().default(10).describe("epochs between checkpoints of each run"),
};

/** Schema of a sweep file. @category Sweeps */
export const sweepSchema = z.object(sweepShape).strict();

/** A sweep file as written. @category Sweeps */
export type SweepFileInput = z.input<typeof sweepSchema>;
/** A shape-checked sweep file with defaults filled in. @category Sweeps */
export type SweepFile = z.output<typeof sweepSchema>;

/**
 * Renders a path inside a sweep file; keys under `grid` and `draws.over` are config paths and print quoted,
 * as in `grid["rule.rate"][1]`.
 * @param path - The path's keys and indices.
 * @returns The path text.
 * @category Sweeps
 */
export function formatSweepPath(path: readonly PropertyKey[]): string {
  let out = "";
  for (let i = 0; i < path.length; i++) {
    const key = path[i] as PropertyKey;
    const underMap = (i === 1 && path[0] === "grid") || (i === 2 && path[0] === "draws" && path[1] === "over");
    if (typeof key === "number") out += `[${key}]`;
    else if (underMap) out += `[${JSON.stringify(String(key))}]`;
    else out += out === "" ? String(key) : `.${String(key)}`;
  }
  return out;
}

function issuesOf(error: z.ZodError, input: unknown): Issue[] {
  const out: Issue[] = [];
  for (const zi of error.issues) {
    if (zi.code === "unrecognized_keys") {
      for (const key of zi.keys) out.push(issueText("invalid_config", formatSweepPath([...zi.path, key]), "no such field (unknown key)", describeValue(valueAt(input, [...zi.path, key]))));
      continue;
    }
    const expected = zi.message.replace(/^Invalid input: expected /, "").replace(/, received \w+$/, "");
    out.push(issueText("invalid_config", formatSweepPath(zi.path), expected, describeValue(valueAt(input, zi.path))));
  }
  return capIssues(out);
}

/** Repeated seeds (compared as text: 1 and "1" seed the same streams) and repeated values within a grid path. */
function repeats(input: unknown): Issue[] {
  const out: Issue[] = [];
  if (input === null || typeof input !== "object") return out;
  const o = input as { seeds?: unknown; grid?: unknown };
  const firstOf = (values: readonly unknown[], key: (v: unknown) => string | null, at: (i: number) => string, expected: string, note = ""): void => {
    const seen = new Map<string, number>();
    values.forEach((v, i) => {
      const k = key(v);
      if (k === null) return;
      const first = seen.get(k);
      if (first === undefined) seen.set(k, i);
      else out.push(issueText("invalid_config", at(i), expected, describeValue(v), `same as ${at(first)}${note}`));
    });
  };
  if (Array.isArray(o.seeds)) firstOf(o.seeds, (v) => (typeof v === "number" || typeof v === "string" ? String(v) : null), (i) => `seeds[${i}]`, "seeds distinct from one another", ' (seeds 1 and "1" give the same random streams)');
  if (o.grid !== null && typeof o.grid === "object" && !Array.isArray(o.grid)) {
    for (const [path, values] of Object.entries(o.grid as Record<string, unknown>)) {
      if (!Array.isArray(values)) continue;
      firstOf(values, (v) => {
        try {
          return canonicalJson(v);
        } catch {
          return null;
        }
      }, (i) => `grid[${JSON.stringify(path)}][${i}]`, "values distinct from one another");
    }
  }
  return out;
}

/**
 * Checks the shape of a sweep file (fields, types, non-empty lists) and fills in defaults; the config paths
 * and values are checked later against the base experiment by `expandSweep`. Repeated seeds and repeated
 * values of a grid path are errors. Reports every problem at once, each with its path (`grid["rule.rate"]`,
 * `seeds[2]`, `draws.over["rule.beta"].low`).
 * @param input - The parsed JSON of a sweep file.
 * @returns The sweep file with defaults.
 * @throws {@link EbbflowError} `invalid_config`.
 * @category Sweeps
 */
export function parseSweepFile(input: unknown): SweepFile {
  const shape = inputShapeIssues(input);
  if (shape.length > 0) throw new EbbflowError(shape);
  // lists longer than a sweep may be are refused before their entries are checked one by one
  const raw = (input ?? {}) as { seeds?: unknown; grid?: unknown };
  if (Array.isArray(raw.seeds)) requireRuns("seeds", raw.seeds.length);
  if (raw.grid !== null && typeof raw.grid === "object") for (const [k, v] of Object.entries(raw.grid)) if (Array.isArray(v)) requireRuns(`grid[${JSON.stringify(k)}]`, v.length);
  const r = sweepSchema.safeParse(input);
  // repeated seeds and grid values are checked on the raw input too, so that they are reported with the shape problems
  const problems: Issue[] = [...(r.success ? [] : issuesOf(r.error, input)), ...repeats(input)];
  if (!r.success) throw new EbbflowError(problems);
  for (const [path, d] of Object.entries(r.data.draws?.over ?? {})) {
    if (d.kind !== "choice" && !(d.low < d.high)) problems.push(issueText("invalid_config", `draws.over[${JSON.stringify(path)}].high`, `a number > low (${d.low})`, describeValue(d.high)));
    if (d.kind === "uniform" && d.integer && (!Number.isInteger(d.low) || !Number.isInteger(d.high))) {
      problems.push(issueText("invalid_config", `draws.over[${JSON.stringify(path)}]`, "whole-number low and high for integer draws", `low ${d.low}, high ${d.high}`));
    }
  }
  if (problems.length > 0) throw new EbbflowError(problems);
  return r.data;
}

/**
 * The JSON Schema (draft 2020-12) of a sweep file, for editors; the inline base experiment refers to the
 * experiment file's schema. Committed as `schema/sweep.schema.json`.
 * @returns The schema as a plain object.
 * @category Sweeps
 */
export function sweepJsonSchema(): Record<string, unknown> {
  const documented = z.object({ ...sweepShape, base: z.union([z.string().min(1), experimentSchema]).describe(sweepShape.base.description ?? "") }).strict();
  return z.toJSONSchema(documented, { io: "input", unrepresentable: "any" }) as Record<string, unknown>;
}
