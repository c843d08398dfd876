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
import { selectBackend, type BackendChoice } from "../kernels/wasm/loader.js";
import { parseRule, type RuleConfig } from "../rules/config.js";

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

/** A model argument: an experiment file, a bare network declaration, or a saved model file (with weights). */
export async function readModelArgument(file: string, kernels: BackendChoice = "typescript"): Promise<{ experiment: Experiment; net: Network }> {
  const backend = selectBackend(kernels);
  const raw = await readJson(file);
  try {
    if (raw !== null && typeof raw === "object" && (raw as { format?: unknown }).format === MODEL_FORMAT) {
      const net = modelFromData(raw, { backend });
      return { experiment: parseExperiment({ network: net.spec }), net };
    }
    const experiment = parseExperiment(raw);
    return { experiment, net: buildNetwork(experiment.network, { backend }) };
  } catch (e) {
    if (e instanceof EbbflowError) throw new EbbflowError(e.issues.map((i) => ({ ...i, path: `${path.basename(file)}: ${i.path}` })));
    throw e;
  }
}

/** A rule argument: inline JSON, a JSON file, or a bare rule name with `--rate`/`--beta`. */
export async function readRuleArgument(text: string, extra: { rate?: number | undefined; beta?: number | undefined }): Promise<RuleConfig> {
  let raw: unknown;
  const t = text.trim();
  if (t.startsWith("{")) {
    try {
      raw = JSON.parse(t);
    } catch (e) {
      return fail("parse_error", "--rule", "a rule name, inline JSON or a JSON file", (e as Error).message);
    }
  } else if (t.endsWith(".json")) raw = await readJson(t);
  else raw = { rule: t, ...(extra.rate !== undefined ? { rate: extra.rate } : {}), ...(extra.beta !== undefined ? { beta: extra.beta } : {}) };
  if (raw !== null && typeof raw === "object") {
    const o = raw as Record<string, unknown>;
    if (extra.rate !== undefined && o.rate === undefined) o.rate = extra.rate;
    if (extra.beta !== undefined && o.beta === undefined && o.rule === "eqprop") o.beta = extra.beta;
  }
  return parseRule(raw);
}

export { resolveData } from "../node/sources.js";
