/**
 * Validation of a saved sweep plan (`runs.json` in a sweep's folder) before it is used: every field's type,
 * each run's index (its position), and each run's id, which must be the hash of its config and seed (ids
 * name the runs' folders, so a damaged or edited id is refused rather than followed).
 * @module
 */
import { z } from "zod";
import { EbbflowError, inputShapeIssues, issueText, type Issue } from "../errors/index.js";
import { savedDataIssues } from "../errors/saved.js";
import { runIdOf, safeParseRunConfig, SWEEP_PLAN_FORMAT, type SweepPlan } from "./expand.js";
import { sweepSeedSchema } from "./schema.js";
import { builtinRegistry, type Registry } from "../rules/registry.js";

const id = z.string({ error: "a 16-digit hexadecimal id" }).regex(/^[0-9a-f]{16}$/, { error: "a 16-digit hexadecimal id" });
const index = z.number({ error: "an integer >= 0" }).int({ error: "an integer >= 0" }).min(0, { error: "an integer >= 0" });

const planSchema = z
  .object({
    format: z.literal(SWEEP_PLAN_FORMAT, { error: JSON.stringify(SWEEP_PLAN_FORMAT) }),
    version: z.literal(1, { error: "1" }),
    name: z.string({ error: "a name" }),
    paths: z.array(z.string()),
    seeds: z.array(sweepSeedSchema).min(1),
    checkpointEvery: index.min(1, { error: "an integer >= 1" }),
    configurations: z.array(
      z
        .object({
          index,
          id,
          label: z.string(),
          assignments: z.array(z.object({ path: z.string(), value: z.unknown(), from: z.enum(["grid", "draw"]) }).strict()),
        })
        .strict(),
    ),
    runs: z.array(z.object({ index, id, configuration: id, label: z.string(), seed: sweepSeedSchema, config: z.record(z.string(), z.unknown()) }).strict()),
    duplicates: index,
    baseDir: z.string().optional(),
    plugins: z.array(z.string().min(1)).optional(),
  })
  .strict();

/**
 * Validates a saved sweep plan.
 * @param data - The parsed `runs.json`.
 * @param where - The file's name, put before every error path.
 * @param registry - Where the runs' rules are looked up (load the plan's `plugins` first; default: the built-ins).
 * @returns The plan.
 * @throws {@link EbbflowError} `parse_error` naming the field (e.g. `runs.json: runs[3].id`).
 * @category Sweeps
 */
export function parseSweepPlan(data: unknown, where: string, registry: Registry = builtinRegistry): SweepPlan {
  const named = (issues: readonly Issue[]) => new EbbflowError(issues.slice(0, 100).map((i) => ({ ...i, code: "parse_error" as const, path: `${where}: ${i.path}` })));
  const shape = inputShapeIssues(data);
  if (shape.length > 0) throw named(shape);
  const r = planSchema.safeParse(data);
  if (!r.success) {
    throw named(savedDataIssues(r.error.issues, data));
  }
  const problems: Issue[] = [];
  const p = r.data;
  p.runs.forEach((run, i) => {
    if (problems.length >= 20) return;
    if (run.index !== i) problems.push(issueText("parse_error", `runs[${i}].index`, `${i} (its position)`, String(run.index)));
    const c = safeParseRunConfig(run.config, registry);
    if (!c.ok) {
      problems.push(...c.issues.slice(0, 5).map((x) => ({ ...x, path: `runs[${i}].config.${x.path}` })));
      return;
    }
    const expected = runIdOf(c.value, run.seed);
    if (expected !== run.id) problems.push(issueText("parse_error", `runs[${i}].id`, `the hash of the run's config and seed (${expected})`, JSON.stringify(run.id)));
  });
  p.configurations.forEach((c, i) => {
    if (c.index !== i && problems.length < 20) problems.push(issueText("parse_error", `configurations[${i}].index`, `${i} (its position)`, String(c.index)));
  });
  if (problems.length > 0) throw named(problems);
  return p as unknown as SweepPlan;
}
