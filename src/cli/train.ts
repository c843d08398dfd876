/**
 * `ebbflow train`: trains a model file on a data set, writing results, weights and checkpoints.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { fail } from "../errors/index.js";
import { parseTraining, Trainer, type StopReason, type TrainingOptionsInput } from "../train/loop.js";
import { loadCheckpoint, ResultsWriter, saveCheckpoint } from "../node/checkpoint.js";
import { saveModel } from "../node/files.js";
import { readModelArgument, readRuleArgument, resolveData } from "./inputs.js";
import { Progress } from "./output.js";
import { VERSION } from "./version.js";
import type { FixedSplit } from "../config/split-schema.js";

/** Options of `ebbflow train`. */
export interface TrainCommandOptions {
  readonly data?: string;
  readonly rule?: string;
  readonly rate?: number;
  readonly beta?: number;
  readonly epochs?: number;
  readonly batchSize?: number;
  readonly seed?: string;
  readonly testFraction?: number;
  /** A fixed split: the CSV column that says train or test. */
  readonly splitColumn?: string;
  /** A fixed split: index files of the training and test rows. */
  readonly trainIndex?: string;
  readonly testIndex?: string;
  readonly out?: string;
  readonly checkpointEvery?: number;
  readonly resume?: boolean;
  readonly json?: boolean;
  readonly scale?: boolean;
  readonly persistent?: boolean;
  readonly kernels?: "auto" | "typescript" | "wasm";
  /** Modules defining rules of the user's own. */
  readonly plugin?: string[];
}

const seedOf = (s: string | undefined, fallback: number | string): number | string => (s === undefined ? fallback : /^-?\d+$/.test(s) ? Number(s) : s);

/** The fixed split the command line asks for (`--split-column`, or `--train-index` with `--test-index`). */
function fixedSplitOption(o: TrainCommandOptions): FixedSplit | undefined {
  if (o.splitColumn !== undefined) {
    if (o.trainIndex !== undefined || o.testIndex !== undefined) fail("invalid_config", "--split-column", "either a split column or index files, not both", "both");
    return { column: /^\d+$/.test(o.splitColumn) ? Number(o.splitColumn) : o.splitColumn };
  }
  if (o.trainIndex === undefined && o.testIndex === undefined) return undefined;
  if (o.trainIndex === undefined || o.testIndex === undefined) fail("invalid_config", o.trainIndex === undefined ? "--train-index" : "--test-index", "both --train-index and --test-index", "only one");
  return { train: o.trainIndex, test: o.testIndex };
}

/** Runs `ebbflow train MODEL.json ...`. */
export async function trainCommand(modelFile: string, o: TrainCommandOptions): Promise<void> {
  const { experiment, net: built, registry } = await readModelArgument(modelFile, o.kernels ?? "auto", o.plugin ?? []);
  const seed = seedOf(o.seed, experiment.network.seed);
  const rule = o.rule !== undefined ? await readRuleArgument(o.rule, { rate: o.rate, beta: o.beta }, registry) : experiment.rules[0];
  if (rule === undefined) fail("invalid_config", "--rule", "a rule (on the command line or in the experiment's rules)", "none");
  const source = o.data ?? experiment.data?.source;
  if (source === undefined) fail("invalid_config", "--data", "a data source (on the command line or in the experiment's data)", "none");
  const trainingInput: TrainingOptionsInput = {
    ...(experiment.training ?? { epochs: 100 }),
    ...(o.epochs !== undefined ? { epochs: o.epochs } : {}),
    ...(o.batchSize !== undefined ? { batchSize: o.batchSize } : {}),
    ...(o.persistent ? { persistentStates: true } : {}),
  };
  const training = parseTraining(trainingInput);
  const split = fixedSplitOption(o) ?? experiment.data?.split;
  const testFraction = o.testFraction ?? (split !== undefined ? 0 : (experiment.data?.testFraction ?? 0));
  const { train, test } = await resolveData(source, { testFraction, seed, targetColumns: experiment.data?.targetColumns, oneHot: experiment.data?.oneHot, scale: o.scale ?? experiment.data?.scale ?? false, split });
  const out = o.out ?? path.join("runs", `${experiment.name ?? path.basename(modelFile, ".json")}-${rule.rule}-${seed}`);
  await fs.mkdir(out, { recursive: true });
  const files = { results: path.join(out, "results.jsonl"), model: path.join(out, "model.json"), checkpoint: path.join(out, "checkpoint.json") };
  const config: Record<string, unknown> = { network: experiment.network, rule, training, data: { source, testFraction, ...(split !== undefined ? { split } : {}) }, seed, ...(registry.plugins.length > 0 ? { plugins: registry.plugins } : {}) };

  let net = built;
  let resumed = null;
  if (o.resume) {
    const exists = await fs.access(files.checkpoint).then(
      () => true,
      () => false,
    );
    // no checkpoint yet: start from the beginning; a damaged one is an error, never silently ignored
    if (exists) {
      resumed = await loadCheckpoint(files.checkpoint, { backend: built.kernels, units: registry.units });
      net = resumed.net;
    }
  }
  const progress = new Progress(training.epochs, "training", o.json === true);
  const trainer = new Trainer(net, rule, train, training, { test, seed, registry });
  if (resumed !== null) trainer.loadState(resumed.state);
  const writer = new ResultsWriter(files.results, { kind: "header", ebbflow: VERSION, seed, config, started: new Date().toISOString() }, trainer.history);
  const every = o.checkpointEvery ?? 10;
  const t0 = Date.now();
  let reason: StopReason | null = trainer.epoch >= training.epochs ? "max-epochs" : null;
  // one epoch at a time, so that results and checkpoints on disk always match a finished epoch
  while (reason === null) {
    const record = trainer.runEpoch();
    reason = trainer.stopAfter(record);
    await writer.epoch(record);
    if (record.epoch % every === 0) await saveCheckpoint(files.checkpoint, trainer, config);
    const status = `sse ${record.train?.sse.toFixed(4) ?? "-"} acc ${record.train ? (record.train.accuracy * 100).toFixed(1) + "%" : "-"}${record.test ? ` test ${(record.test.accuracy * 100).toFixed(1)}%` : ""}`;
    progress.update(record.epoch, status);
  }
  const result = { reason, epochs: trainer.epoch };
  progress.stop();
  await writer.end(result.reason, result.epochs, (Date.now() - t0) / 1000);
  await saveModel(files.model, trainer.net);
  await saveCheckpoint(files.checkpoint, trainer, config);
  const last = trainer.history.at(-1);
  const summary = { out, epochs: result.epochs, stopped: result.reason, train: last?.train, test: last?.test, files };
  if (o.json) process.stdout.write(JSON.stringify(summary) + "\n");
  else {
    process.stdout.write(`trained ${result.epochs} epochs (${result.reason}); results in ${out}\n`);
    if (last?.train) process.stdout.write(`train: sse ${last.train.sse.toFixed(5)}, accuracy ${(last.train.accuracy * 100).toFixed(2)}%\n`);
    if (last?.test) process.stdout.write(`test:  sse ${last.test.sse.toFixed(5)}, accuracy ${(last.test.accuracy * 100).toFixed(2)}%\n`);
  }
}
