/**
 * `ebbflow train`: trains a model file on a data set, writing results, weights and checkpoints.
 * @module
 */
import path from "node:path";
import { fail } from "../errors/index.js";
import { parseTraining, Trainer, type TrainingOptionsInput } from "../train/loop.js";
import { claimRunFolder } from "../node/run/folder.js";
import { driveRun, findRunStart, restoreTrainer } from "../node/run/driver.js";
import { readModelArgument, readRuleArgument, resolveData } from "./inputs.js";
import { Progress } from "./output.js";
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
  readonly overwrite?: boolean;
  readonly acceptChanges?: boolean;
  readonly json?: boolean;
  readonly scale?: boolean;
  readonly persistent?: boolean;
  /** `training.persistentTestStates`: held-out free phases start from their last settled states. */
  readonly persistentTest?: boolean;
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
    ...(o.persistentTest ? { persistentTestStates: true } : {}),
  };
  const training = parseTraining(trainingInput);
  const split = fixedSplitOption(o) ?? experiment.data?.split;
  const testFraction = o.testFraction ?? (split !== undefined ? 0 : (experiment.data?.testFraction ?? 0));
  const layerColumns = { ...(experiment.data?.targetLayers !== undefined ? { targetLayers: experiment.data.targetLayers } : {}), ...(experiment.data?.inputLayers !== undefined ? { inputLayers: experiment.data.inputLayers } : {}) };
  const { train, test } = await resolveData(source, { testFraction, seed, targetColumns: experiment.data?.targetColumns, oneHot: experiment.data?.oneHot, scale: o.scale ?? experiment.data?.scale ?? false, split, ...layerColumns });
  const out = o.out ?? path.join("runs", `${experiment.name ?? path.basename(modelFile, ".json")}-${rule.rule}-${seed}`);
  if (o.resume && o.overwrite) fail("invalid_parameter", "--overwrite", "either --resume or --overwrite", "both");
  if (o.acceptChanges && !o.resume) fail("invalid_parameter", "--accept-changes", "--resume (it accepts a changed experiment when resuming)", "no --resume");
  // the resolved config: everything that decides the run's results (its hash is the run's identity)
  const data = { source, testFraction, scale: o.scale ?? experiment.data?.scale ?? false, ...(experiment.data?.targetColumns !== undefined ? { targetColumns: experiment.data.targetColumns } : {}), ...(experiment.data?.oneHot !== undefined ? { oneHot: experiment.data.oneHot } : {}), ...layerColumns, ...(experiment.data?.sequenceColumn !== undefined ? { sequenceColumn: experiment.data.sequenceColumn } : {}), ...(split !== undefined ? { split } : {}) };
  const config: Record<string, unknown> = { network: experiment.network, rule, training, data, seed, ...(registry.plugins.length > 0 ? { plugins: registry.plugins } : {}) };
  const every = o.checkpointEvery ?? 10;
  const { files, lock } = await claimRunFolder(out, o.resume ? "resume" : o.overwrite ? "overwrite" : "new", "--out");
  try {
    const start = o.resume ? await findRunStart(files, { config, acceptChanges: o.acceptChanges, build: { backend: built.kernels, units: registry.units }, what: "--resume" }) : { checkpoint: null, change: null };
    if (start.change !== null && !o.json) process.stderr.write(`accepting changed ${start.change.paths.join(", ")} from epoch ${start.change.epoch} (recorded in results.jsonl)\n`);
    const trainer = new Trainer(start.checkpoint?.net ?? built, rule, train, training, { test, seed, registry });
    restoreTrainer(trainer, start);
    const progress = new Progress(training.epochs, "training", o.json === true);
    const result = await driveRun({
      trainer,
      files,
      config,
      seed,
      checkpointEvery: every,
      start,
      onEpoch: (record) => {
        const status = `sse ${record.train?.sse.toFixed(4) ?? "-"} acc ${record.train ? (record.train.accuracy * 100).toFixed(1) + "%" : "-"}${record.test ? ` test ${(record.test.accuracy * 100).toFixed(1)}%` : ""}`;
        progress.update(record.epoch, status);
      },
    });
    progress.stop();
    if (result.repairedTornLine && !o.json) process.stderr.write("results.jsonl: a torn last line (a crash during a write) was repaired from the checkpoint\n");
    const last = trainer.history.at(-1);
    const summary = { out, epochs: result.epochs, stopped: result.reason, alreadyFinished: result.alreadyFinished, resumedFrom: result.resumedFrom, train: last?.train, test: last?.test, files: { results: files.results, model: files.model, checkpoint: files.checkpoint } };
    if (o.json) process.stdout.write(JSON.stringify(summary) + "\n");
    else {
      process.stdout.write(result.alreadyFinished ? `already finished: ${result.epochs} epochs (${result.reason}); results in ${out}\n` : `trained ${result.epochs} epochs (${result.reason})${result.resumedFrom > 0 ? `, resumed from epoch ${result.resumedFrom}` : ""}; results in ${out}\n`);
      for (const [split, m] of [["train: ", last?.train], ["test:  ", last?.test]] as const) {
        if (m === undefined) continue;
        process.stdout.write(`${split}sse ${m.sse.toFixed(5)}, accuracy ${(m.accuracy * 100).toFixed(2)}%\n`);
        // each output layer's own metrics, over the examples where it was observed
        for (const [layer, lm] of Object.entries(m.layers ?? {})) process.stdout.write(`  ${layer}: sse ${lm.sse.toFixed(5)}, accuracy ${(lm.accuracy * 100).toFixed(2)}% (${lm.examples} observed)\n`);
      }
    }
  } finally {
    await lock.release();
  }
}
