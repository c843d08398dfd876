/**
 * Expanding a sweep file into runs: every config path is resolved against the base experiment, every
 * combination of grid values and random draws becomes a configuration, and every configuration runs once
 * per seed. Each run's id is a hash of its resolved config and seed, so the same run always gets the same
 * id (key order in the files does not matter) and a sweep can be resumed without doing a run twice.
 * @module
 */
import { EbbflowError, describeValue, formatPath, issueText, type Issue } from "../errors/index.js";
import { parseExperiment, type Experiment } from "../config/experiment.js";
import type { NetworkSpec } from "../network/spec.js";
import { builtinRegistry, type AnyRuleConfig, type Registry } from "../rules/registry.js";
import { parseTraining, type TrainingOptions } from "../train/loop.js";
import { createRandom } from "../random/index.js";
import { requireRuns } from "../limits/index.js";
import { canonicalJson, contentId } from "./hash.js";
import { formatConfigPath, lookupPath, parseConfigPath, pathContains, setPath, type PathSegment } from "./paths.js";
import { parseSweepFile, type DrawSpec, type SweepFile } from "./schema.js";

/** The data section of a run (a built-in source or a file, the held-out fraction, CSV options). @category Sweeps */
export type RunData = NonNullable<Experiment["data"]>;

/** Everything that determines one run's results, apart from its seed: network, rule, training options and data. @category Sweeps */
export interface RunConfig {
  readonly network: NetworkSpec;
  readonly rule: AnyRuleConfig;
  readonly training: TrainingOptions;
  readonly data: RunData;
}

/** One value set by a sweep: a grid value or a random draw at a config path. @category Sweeps */
export interface SweepAssignment {
  /** The config path, e.g. `rule.rate`. */
  readonly path: string;
  readonly value: unknown;
  /** Where the value came from. */
  readonly from: "grid" | "draw";
}

/** One configuration of a sweep (the base with some values set), run once per seed. @category Sweeps */
export interface SweepConfiguration {
  /** Position in the sweep (0-based). */
  readonly index: number;
  /** Hash of the resolved config without the seed: the runs of all seeds of this configuration share it. */
  readonly id: string;
  /** Short description, e.g. `rule.rate=0.5, network.layers[1].size=4` (`base` when nothing is set). */
  readonly label: string;
  readonly assignments: readonly SweepAssignment[];
}

/** One run of a sweep: a configuration with one seed. @category Sweeps */
export interface SweepRun {
  /** Position in the sweep (0-based), also the scheduler's array index. */
  readonly index: number;
  /** Hash of the resolved config and the seed; the run's folder is `runs/<id>`. */
  readonly id: string;
  /** Id of the configuration (shared by the seeds). */
  readonly configuration: string;
  /** Label of the configuration. */
  readonly label: string;
  readonly seed: number | string;
  /** The resolved config; its `network.seed` is the run's seed. */
  readonly config: RunConfig;
}

/** Identifier in the `format` field of a saved sweep plan (`runs.json`). @category Sweeps */
export const SWEEP_PLAN_FORMAT = "ebbflow-sweep-plan";

/** A sweep expanded into its configurations and runs (saved as `runs.json` in the sweep's folder). @category Sweeps */
export interface SweepPlan {
  readonly format: typeof SWEEP_PLAN_FORMAT;
  readonly version: 1;
  readonly name: string;
  /** The config paths the sweep varies, sorted. */
  readonly paths: readonly string[];
  readonly seeds: readonly (number | string)[];
  /** Epochs between checkpoints of each run (does not change results, so it is not part of the ids). */
  readonly checkpointEvery: number;
  readonly configurations: readonly SweepConfiguration[];
  readonly runs: readonly SweepRun[];
  /** Configurations dropped because they resolved to the same config as an earlier one (e.g. repeated choice draws). */
  readonly duplicates: number;
  /** Folder that relative data paths are resolved against (set by the file loader; not part of any id). */
  readonly baseDir?: string | undefined;
  /**
   * Modules defining the rules of the user's own that the runs use (resolved addresses, set by the file
   * loader from the base experiment's `plugins`; not part of any id): every run imports them first.
   */
  readonly plugins?: readonly string[] | undefined;
}

/**
 * The id of a run: a hash of its resolved config and its seed.
 * @param config - The resolved config.
 * @param seed - The run's seed.
 * @returns 16 hexadecimal digits.
 * @category Sweeps
 */
export function runIdOf(config: RunConfig, seed: number | string): string {
  return contentId({ config, seed });
}

/**
 * The id of a configuration: a hash of its resolved config with the network's seed left out.
 * @param config - The resolved config.
 * @returns 16 hexadecimal digits.
 * @category Sweeps
 */
export function configurationIdOf(config: RunConfig): string {
  const { seed: _seed, ...network } = config.network;
  return contentId({ ...config, network });
}

/**
 * Validates a run config (network, rule, training, data) and fills in defaults. Problems carry paths such
 * as `rule.rate` or `network.layers[1].size`.
 * @param input - The config as data.
 * @returns The resolved config, or every problem found.
 * @category Sweeps
 */
export function safeParseRunConfig(input: unknown, registry: Registry = builtinRegistry): { readonly ok: true; readonly value: RunConfig } | { readonly ok: false; readonly issues: readonly Issue[] } {
  const o = (input ?? {}) as Record<string, unknown>;
  try {
    const e = parseExperiment({ network: o.network, rules: [o.rule], training: o.training, data: o.data }, registry);
    const problems: Issue[] = [];
    if (e.training === undefined) problems.push(issueText("invalid_config", "training", "training options with epochs", describeValue(o.training)));
    if (e.data === undefined) problems.push(issueText("invalid_config", "data", "a data section with a source", describeValue(o.data)));
    if (problems.length > 0 || e.training === undefined || e.data === undefined) return { ok: false, issues: problems };
    return { ok: true, value: { network: e.network, rule: e.rules[0] as AnyRuleConfig, training: e.training, data: e.data } };
  } catch (err) {
    if (!(err instanceof EbbflowError)) throw err;
    return { ok: false, issues: err.issues.map((i) => ({ ...i, path: i.path.replace(/^rules\[0\]/, "rule") })) };
  }
}

/**
 * The run config a sweep starts from: the experiment's network, its first rule, its training options (100
 * epochs when it has none) and its data section.
 * @param experiment - A validated experiment (with a data section and at least one rule).
 * @param where - Path prefix for errors (e.g. `base`).
 * @returns The template config.
 * @throws {@link EbbflowError} `invalid_config` when the experiment has no rule or no data section.
 * @category Sweeps
 */
export function runConfigTemplate(experiment: Experiment, where = "base"): RunConfig {
  const problems: Issue[] = [];
  if (experiment.rules.length === 0) problems.push(issueText("invalid_config", `${where}.rules`, "at least one rule (the sweep's runs use the first)", "none"));
  if (experiment.data === undefined) problems.push(issueText("invalid_config", `${where}.data`, "a data section with a source (touch-strip, xor, iris, digits:N or a file)", "none"));
  if (problems.length > 0 || experiment.data === undefined) throw new EbbflowError(problems);
  return { network: experiment.network, rule: experiment.rules[0] as AnyRuleConfig, training: experiment.training ?? parseTraining({ epochs: 100 }), data: experiment.data };
}

/** A dimension of the sweep: a config path with its grid values or its distribution. */
interface Dimension {
  readonly text: string;
  readonly segments: readonly PathSegment[];
  /** Path of this dimension in the sweep file: `grid["rule.rate"]` or `draws.over["rule.rate"]`. */
  readonly where: string;
  readonly values?: readonly unknown[];
  readonly draw?: DrawSpec;
  /** The path's last key is not in the base config (a new optional field): checked by validation. */
  readonly added: boolean;
}

/** Renders a value for a label: numbers to 4 significant digits, other values as compact JSON. */
function shortValue(v: unknown): string {
  if (typeof v === "number") return String(Number(v.toPrecision(4)));
  const s = typeof v === "string" ? v : canonicalJson(v);
  return s.length > 40 ? `${s.slice(0, 37)}...` : s;
}

/** The value of draw `d` at a path: each (draw, path) pair has its own random stream, so adding paths or draws never shifts the others. */
function drawValue(seed: number | string, d: number, path: string, spec: DrawSpec): unknown {
  const u = createRandom(seed).child(`sweep-draw/${d}/${path}`).uniform();
  switch (spec.kind) {
    case "uniform":
      return spec.integer ? spec.low + Math.min(Math.floor(u * (spec.high - spec.low + 1)), spec.high - spec.low) : spec.low + u * (spec.high - spec.low);
    case "log-uniform":
      return Math.exp(Math.log(spec.low) + u * (Math.log(spec.high) - Math.log(spec.low)));
    case "choice":
      return spec.values[Math.min(Math.floor(u * spec.values.length), spec.values.length - 1)];
  }
}

function clone<T>(v: T): T {
  // undefined (a value only code can give, no file) has no JSON text: kept as it is
  return v === undefined ? v : (JSON.parse(JSON.stringify(v)) as T);
}

/**
 * Expands a sweep file into its configurations and runs. Every config path is resolved against the base
 * experiment (with defaults filled in) and every resulting config is validated; all problems are reported
 * at once, each with its place in the sweep file: an unknown path as `grid["rule.rte"]`, a bad value as
 * `grid["rule.rate"][1]`, a repeated seed as `seeds[2]`.
 *
 * Order: grid paths sorted, values as listed (the last path changes fastest), each grid point combined with
 * every draw, each configuration with every seed. Configurations that resolve to the same config are kept
 * once.
 * @param sweepInput - The sweep file (parsed JSON or the output of {@link parseSweepFile}).
 * @param base - The base experiment as data (the inline `base`, or the parsed file it names).
 * @param options - `where`: how to name the base in errors (default `base`); `name`: fallback sweep name;
 *   `registry`: where the rules are looked up (default: the built-ins; load the base's `plugins` first).
 * @returns The plan.
 * @throws {@link EbbflowError} `invalid_config` listing every problem.
 * @category Sweeps
 * @example
 * ```ts
 * const plan = expandSweep({ base: experiment, grid: { "rule.rate": [0.5, 1] }, seeds: [1, 2] }, experiment);
 * plan.runs.length; // 4
 * ```
 */
export function expandSweep(sweepInput: unknown, base: unknown, options: { where?: string | undefined; name?: string | undefined; registry?: Registry | undefined } = {}): SweepPlan {
  const registry = options.registry ?? builtinRegistry;
  const sweep: SweepFile = parseSweepFile(sweepInput);
  const where = options.where ?? "base";
  let experiment: Experiment;
  try {
    experiment = parseExperiment(base, registry);
  } catch (e) {
    if (e instanceof EbbflowError) throw new EbbflowError(e.issues.map((i) => ({ ...i, path: i.path === "" ? where : `${where}.${i.path}` })));
    throw e;
  }
  const template = runConfigTemplate(experiment, where);
  const problems: Issue[] = [];

  // 1. the dimensions: paths parsed and resolved against the base
  const dims: Dimension[] = [];
  const gridPaths = Object.keys(sweep.grid ?? {}).sort();
  const drawPaths = Object.keys(sweep.draws?.over ?? {}).sort();
  const addDimension = (text: string, whereText: string, extra: { values?: readonly unknown[]; draw?: DrawSpec }): void => {
    const parsed = parseConfigPath(text);
    if (!parsed.ok) {
      problems.push(issueText("invalid_config", whereText, `a config path such as rule.rate or network.layers[1].size: ${parsed.problem}`, JSON.stringify(text)));
      return;
    }
    const segs = parsed.segments;
    if (pathContains(["network", "seed"], segs)) {
      problems.push(issueText("invalid_config", whereText, "a config path other than network.seed (the seeds list sets it)", JSON.stringify(text)));
      return;
    }
    const found = lookupPath(template, segs);
    let added = false;
    if (!found.found) {
      const lastStep = found.depth === segs.length - 1 && found.parentKind === "object" && typeof segs[segs.length - 1] === "string";
      if (!lastStep) {
        const parent = formatConfigPath(segs.slice(0, found.depth)) || "the config";
        const at = lookupPath(template, segs.slice(0, found.depth));
        const has = found.parentKind === "other" ? `${parent} is ${describeValue(at.found ? at.value : undefined)}, not an object or array` : `${parent} has ${found.available.join(", ") || "nothing"}`;
        problems.push(issueText("invalid_config", whereText, `a config path of the base experiment (${has})`, JSON.stringify(text)));
        return;
      }
      added = true;
    }
    dims.push({ text: formatConfigPath(segs), segments: segs, where: whereText, added, ...extra });
  };
  for (const p of gridPaths) addDimension(p, `grid[${JSON.stringify(p)}]`, { values: (sweep.grid ?? {})[p] ?? [] });
  for (const p of drawPaths) addDimension(p, `draws.over[${JSON.stringify(p)}]`, { draw: (sweep.draws?.over ?? {})[p] as DrawSpec });

  // 2. no path may contain another (the order of setting them would matter)
  for (let i = 0; i < dims.length; i++) {
    for (let j = 0; j < i; j++) {
      const a = dims[j] as Dimension;
      const b = dims[i] as Dimension;
      if (pathContains(a.segments, b.segments) || pathContains(b.segments, a.segments)) {
        problems.push(issueText("invalid_config", b.where, `a path that does not overlap ${a.where}`, JSON.stringify(b.text)));
      }
    }
  }

  if (experiment.rules.length > 1 && !dims.some((d) => d.segments.length === 1 && d.segments[0] === "rule")) {
    problems.push(issueText("invalid_config", `${where}.rules`, 'one rule (or vary the rule with grid["rule"])', `${experiment.rules.length} rules`));
  }
  if (problems.length > 0) throw new EbbflowError(problems);

  // 4. combinations: grid points (last path fastest) times draws; their number is checked before any is made
  const gridDims = dims.filter((d) => d.values !== undefined);
  const combinations = gridDims.reduce((n, d) => n * (d.values as readonly unknown[]).length, 1) * (sweep.draws?.count ?? 1);
  requireRuns(gridDims.length > 0 ? "grid" : "draws.count", combinations * sweep.seeds.length);
  const drawDims = dims.filter((d) => d.draw !== undefined);
  let points: { assignment: SweepAssignment; dim: Dimension; valueIndex: number | null }[][] = [[]];
  for (const d of gridDims) {
    const next: typeof points = [];
    for (const p of points) (d.values as readonly unknown[]).forEach((value, vi) => next.push([...p, { assignment: { path: d.text, value, from: "grid" }, dim: d, valueIndex: vi }]));
    points = next;
  }
  if (sweep.draws !== undefined) {
    const draws = sweep.draws;
    const next: typeof points = [];
    for (const p of points) {
      for (let k = 0; k < draws.count; k++) {
        next.push([...p, ...drawDims.map((d) => ({ assignment: { path: d.text, value: drawValue(draws.seed, k, d.text, d.draw as DrawSpec), from: "draw" as const }, dim: d, valueIndex: k }))]);
      }
    }
    points = next;
  }

  // 5. resolve and validate every configuration; blame each problem on the path that set the value
  const configurations: SweepConfiguration[] = [];
  const resolved: RunConfig[] = [];
  const seenConfig = new Set<string>();
  const reported = new Set<string>();
  let duplicates = 0;
  const report = (i: Issue): void => {
    const key = `${i.path}\u0000${i.expected}\u0000${i.received}`;
    if (!reported.has(key)) {
      reported.add(key);
      problems.push(i);
    }
  };
  points.forEach((point, pi) => {
    const config = clone(template) as unknown;
    for (const { dim, assignment } of point) setPath(config, dim.segments, clone(assignment.value));
    const r = safeParseRunConfig(config, registry);
    if (!r.ok) {
      for (const i of r.issues) {
        let blamed: (typeof point)[number] | undefined;
        for (const a of point) {
          const p = formatPath(a.dim.segments);
          if (i.path === p || i.path.startsWith(`${p}.`) || i.path.startsWith(`${p}[`)) if (blamed === undefined || a.dim.segments.length > blamed.dim.segments.length) blamed = a;
        }
        // a problem elsewhere (a cross-field check): blame the value that causes it on its own
        blamed ??= point.find((a) => {
          const alone = clone(template) as unknown;
          setPath(alone, a.dim.segments, clone(a.assignment.value));
          const r1 = safeParseRunConfig(alone, registry);
          return !r1.ok && r1.issues.some((j) => j.path === i.path && j.expected === i.expected);
        });
        if (blamed !== undefined && blamed.dim.added && i.path === formatPath(blamed.dim.segments) && i.expected.includes("unknown key")) {
          const parent = lookupPath(template, blamed.dim.segments.slice(0, -1));
          const keys = parent.found && parent.value !== null && typeof parent.value === "object" ? Object.keys(parent.value).join(", ") : "";
          report(issueText("invalid_config", blamed.dim.where, `a config path of the base experiment (${formatConfigPath(blamed.dim.segments.slice(0, -1))} has ${keys})`, JSON.stringify(blamed.dim.text)));
        } else if (blamed !== undefined) {
          const at = blamed.dim.values !== undefined ? `${blamed.dim.where}[${blamed.valueIndex}]` : blamed.dim.where;
          const detail = [i.path !== blamed.assignment.path ? `at ${i.path}` : "", blamed.dim.draw !== undefined ? `draw ${blamed.valueIndex} gave ${describeValue(blamed.assignment.value)}` : "", i.detail ?? ""].filter((s) => s !== "").join("; ");
          report(issueText(i.code, at, i.expected, i.received, detail === "" ? undefined : detail));
        } else {
          const set = point.map((a) => `${a.assignment.path}=${shortValue(a.assignment.value)}`).join(", ");
          report(issueText(i.code, `configurations[${pi}].${i.path}`, i.expected, i.received, set === "" ? undefined : `with ${set}`));
        }
      }
      return;
    }
    const id = configurationIdOf(r.value);
    if (seenConfig.has(id)) {
      duplicates++;
      return;
    }
    seenConfig.add(id);
    const assignments = point.map((a) => a.assignment);
    const label = assignments.length === 0 ? "base" : assignments.map((a) => `${a.path}=${shortValue(a.value)}`).join(", ");
    configurations.push({ index: configurations.length, id, label, assignments });
    resolved.push(r.value);
  });
  if (problems.length > 0) throw new EbbflowError(problems);

  // 6. runs: each configuration with each seed
  const runs: SweepRun[] = [];
  configurations.forEach((c, ci) => {
    const base = resolved[ci] as RunConfig;
    for (const seed of sweep.seeds) {
      const config: RunConfig = { ...base, network: { ...base.network, seed } };
      runs.push({ index: runs.length, id: runIdOf(config, seed), configuration: c.id, label: c.label, seed, config });
    }
  });
  return {
    format: SWEEP_PLAN_FORMAT,
    version: 1,
    name: sweep.name ?? options.name ?? experiment.name ?? "sweep",
    paths: dims.map((d) => d.text),
    seeds: sweep.seeds,
    checkpointEvery: sweep.checkpointEvery,
    configurations,
    runs,
    duplicates,
  };
}
