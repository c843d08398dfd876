/**
 * Reading the command line's files and values: experiment or model files, rules, data sources.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { EbbflowError, fail, issueText } from "../errors/index.js";
import { parseExperiment, type Experiment } from "../config/experiment.js";
import { modelFromData, MODEL_FORMAT } from "../config/modelFile.js";
import { buildNetwork, type Network } from "../network/network.js";
import { parseRule, type RuleConfig } from "../rules/config.js";
import type { Dataset } from "../train/data/index.js";
import { parityDataset, xorDataset, trainTestSplit, fitScaler } from "../train/data/index.js";
import { touchStripDataset } from "../demo/touchStrip.js";
import { irisDataset, digitsDataset, loadDataset } from "../node/data.js";

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
export async function readModelArgument(file: string): Promise<{ experiment: Experiment; net: Network }> {
  const raw = await readJson(file);
  try {
    if (raw !== null && typeof raw === "object" && (raw as { format?: unknown }).format === MODEL_FORMAT) {
      const net = modelFromData(raw);
      return { experiment: parseExperiment({ network: net.spec }), net };
    }
    const experiment = parseExperiment(raw);
    return { experiment, net: buildNetwork(experiment.network) };
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

/** Built-in data sources and files; `touch-strip`, `xor`, `parity:N`, `iris`, `digits[:N]`, or a `.csv`/`.json` path. */
export async function resolveData(source: string, options: { testFraction: number; seed: number | string; targetColumns?: readonly (number | string)[] | undefined; oneHot?: boolean | undefined; scale?: boolean | undefined; low?: number | undefined }): Promise<{ train: Dataset; test: Dataset | undefined }> {
  let ds: Dataset;
  const [name, arg] = source.split(":");
  if (name === "xor") ds = xorDataset();
  else if (name === "touch-strip") ds = touchStripDataset(options.low !== undefined ? { low: options.low, high: 1 - options.low } : {});
  else if (name === "parity") ds = parityDataset(Number(arg ?? 3));
  else if (name === "iris") ds = await irisDataset();
  else if (name === "digits" || name === "mnist") ds = await digitsDataset(arg !== undefined ? { count: Number(arg) } : {});
  else if (/\.(csv|json)$/i.test(source)) ds = await loadDataset(source, { ...(options.targetColumns !== undefined ? { targetColumns: options.targetColumns as readonly string[] } : {}), oneHot: options.oneHot });
  else throw new EbbflowError(issueText("unknown_name", "--data", "touch-strip, xor, parity:N, iris, digits (or mnist), digits:N, or a .csv/.json file", JSON.stringify(source)));
  if (options.testFraction <= 0) return { train: options.scale ? fitScaler(ds).apply(ds) : ds, test: undefined };
  const { train, test } = trainTestSplit(ds, options.testFraction, options.seed);
  if (!options.scale) return { train, test };
  const scaler = fitScaler(train);
  return { train: scaler.apply(train), test: scaler.apply(test) };
}
