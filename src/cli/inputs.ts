/**
 * Reading the command line's files and values: experiment or model files, rules, data sources.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { EbbflowError, fail } from "../errors/index.js";
import { parseExperiment, type Experiment } from "../config/experiment.js";
import { modelFromData, MODEL_FORMAT } from "../config/modelFile.js";
import { buildNetwork, type Network } from "../network/network.js";
import { loadPlugins } from "../node/plugins.js";
import { selectBackend, type BackendChoice } from "../kernels/wasm/loader.js";
import { builtinRegistry, type AnyRuleConfig, type Registry } from "../rules/registry.js";

/** Reads and parses a JSON file; errors name the file. */
export async function readJson(file: string): Promise<unknown> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return fail("io_error", file, "a readable file", (e as NodeJS.ErrnoException).code ?? (e as Error).message);
  }
  try {
    return JSON.parse(text) as unknown;
  } catch (e) {
    return fail("parse_error", file, "JSON text", (e as Error).message);
  }
}

/**
 * A model argument: an experiment file, a bare network declaration, or a saved model file (with weights).
 * The rules of the user's own come from `plugins` (command-line paths, relative to the working directory)
 * and the experiment's own `plugins` (relative to its file); the registry returned knows them.
 */
export async function readModelArgument(file: string, kernels: BackendChoice = "typescript", plugins: readonly string[] = []): Promise<{ experiment: Experiment; net: Network; registry: Registry }> {
  const backend = selectBackend(kernels);
  const raw = await readJson(file);
  try {
    const own = raw !== null && typeof raw === "object" && Array.isArray((raw as { plugins?: unknown }).plugins) ? ((raw as { plugins: unknown[] }).plugins as string[]) : [];
    let registry = await loadPlugins(plugins);
    registry = await loadPlugins(own, { baseDir: path.dirname(path.resolve(file)), registry });
    if (raw !== null && typeof raw === "object" && (raw as { format?: unknown }).format === MODEL_FORMAT) {
      const net = modelFromData(raw, { backend, units: registry.units });
      return { experiment: parseExperiment({ network: net.spec }, registry), net, registry };
    }
    const experiment = parseExperiment(raw, registry);
    return { experiment, net: buildNetwork(experiment.network, { backend, units: registry.units }), registry };
  } catch (e) {
    if (e instanceof EbbflowError) throw new EbbflowError(e.issues.map((i) => ({ ...i, path: `${path.basename(file)}: ${i.path}` })));
    throw e;
  }
}

/** Does the schema of the rule named `rule` have a field `key`? */
function hasField(registry: Registry, rule: unknown, key: string): boolean {
  const d = typeof rule === "string" ? registry.rules.get(rule) : undefined;
  const shape = (d?.schema as { shape?: Record<string, unknown> } | undefined)?.shape;
  return shape !== undefined && key in shape;
}

/** A rule argument: inline JSON, a JSON file, or a bare rule name with `--rate`/`--beta`. */
export async function readRuleArgument(text: string, extra: { rate?: number | undefined; beta?: number | undefined }, registry: Registry = builtinRegistry): Promise<AnyRuleConfig> {
  let raw: unknown;
  const t = text.trim();
  if (t.startsWith("{")) {
    try {
      raw = JSON.parse(t);
    } catch (e) {
      return fail("parse_error", "--rule", "a rule name, inline JSON or a JSON file", (e as Error).message);
    }
  } else if (t.endsWith(".json")) raw = await readJson(t);
  else raw = { rule: t };
  if (raw !== null && typeof raw === "object") {
    const o = raw as Record<string, unknown>;
    if (extra.rate !== undefined && o.rate === undefined) o.rate = extra.rate;
    // --beta goes to rules that have a nudging strength (their schema has a `beta` field)
    if (extra.beta !== undefined && o.beta === undefined && hasField(registry, o.rule, "beta")) o.beta = extra.beta;
  }
  return registry.parseRule(raw);
}

export { resolveData } from "../node/sources.js";
