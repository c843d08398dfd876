/**
 * The training loop: epochs of seeded mini-batches, a learning rule chosen by config, evaluation on
 * held-out data, early stopping, learning-rate schedules, callbacks, persistent free-phase states,
 * and a complete state for checkpoints (resuming gives bit-identical results).
 * @module
 */
import { refuseUnknownOptions } from "../errors/options.js";
import { z } from "zod";
import { EbbflowError, fail, issueText, type Issue } from "../errors/index.js";
import { allocate, type FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { keptSnapshot, Settler, Snapshot } from "../network/settle.js";
import { issuesFromZod } from "../network/spec.js";
import { createRandom, RandomStream, type RandomStreamState } from "../random/index.js";
import { builtinRegistry, type AnyRuleDescriptor, type LearningRule, type Registry, type RuleConfigInput, type RuleState } from "../rules/index.js";
import { createForwardPass, forwardOrder, runForward, type ForwardPass } from "../rules/feedforward.js";
import type { Dataset } from "./data/dataset.js";
import { accumulateMetrics, MetricSums, type Metrics } from "./metrics.js";
import { lossNameSchema } from "./loss.js";
import { Optimizer, optimizerSchema, type OptimizerState } from "./optimizer.js";
import { configWithLoss, ruleObjective } from "../rules/loss-config.js";
import { scheduleFactor, scheduleSchema } from "./schedule.js";
import { loadRuleState, trainerStateIssues } from "./state.js";
import { requireBytes } from "../limits/index.js";
import { carriesTraces, requireSequences, sequenceOptionsSchema, sequenceProgressIssues, SequenceRunner, type SequenceProgress } from "./sequences.js";
import { isSequenceDataset } from "./data/sequences.js";
import type { Recorder } from "../record/recorder.js";

const METRIC_NAMES = ["sse", "loss", "binaryCrossEntropy", "softmaxCrossEntropy", "accuracy", "cosine"] as const;
const metricName = z.enum(METRIC_NAMES, { error: `one of ${METRIC_NAMES.join(", ")}` });

/** Schema of the training options. @category Training */
export const trainingSchema = z
  .object({
    epochs: z.number({ error: "an integer >= 1" }).int({ error: "an integer >= 1" }).min(1, { error: "an integer >= 1" }),
    batchSize: z.number().int({ error: "an integer >= 1" }).min(1, { error: "an integer >= 1" }).default(16),
    // the loss of the output layers: the `loss` metric, and the loss of rules that follow one (EqProp, backprop, ...)
    loss: lossNameSchema.default("squared-error"),
    shuffle: z.boolean().default(true),
    schedule: scheduleSchema.default({ kind: "constant" }),
    earlyStopping: z
      .object({
        metric: metricName.default("sse"),
        split: z.enum(["train", "test"]).default("test"),
        patience: z.number().int().min(1, { error: "an integer >= 1" }).default(10),
        minDelta: z.number().min(0, { error: "a number >= 0" }).default(0),
      })
      .strict()
      .optional(),
    stopWhen: z
      .object({ metric: metricName, split: z.enum(["train", "test"]).default("train"), atLeast: z.number().optional(), atMost: z.number().optional() })
      .strict()
      .optional(),
    persistentStates: z.boolean().default(false),
    // held-out free phases start from each held-out example's last held-out free state (zero at first), as the
    // authors' validation did (Scellier & Bengio 2017, their code's persistent particles); needs a held-out set.
    // No default filled in: configs that leave it out resolve as before (run ids and checkpoint hashes unchanged)
    persistentTestStates: z.boolean().optional(),
    readout: z.enum(["auto", "settle", "forward"], { error: "one of auto, settle, forward" }).default("auto"),
    evaluateTrain: z.boolean().default(true),
    // how the arg-max read-out scores an example whose largest output is tied (see TiePolicy)
    ties: z.enum(["wrong", "first", "random"], { error: "one of wrong, first, random" }).default("wrong"),
    // stop with a named reason when the loss is not finite or every example's outputs tie
    guard: z.boolean().default(true),
    // an optimizer applied to the rule's change (momentum, Adam, weight decay, bias rates per layer); none by default
    optimizer: optimizerSchema.optional(),
    // sequence mode: the data set's sequences run pattern by pattern, state and traces carried over (see SequenceRunner)
    sequences: sequenceOptionsSchema.optional(),
  })
  .strict();

/** Training options as written. @category Training */
export type TrainingOptionsInput = z.input<typeof trainingSchema>;
/** Training options with defaults filled in. @category Training */
export type TrainingOptions = z.output<typeof trainingSchema>;

/** Validates training options; problems are reported with paths under `training`. @category Training */
export function parseTraining(input: unknown, prefix = "training"): TrainingOptions {
  const r = trainingSchema.safeParse(input);
  if (!r.success) throw new EbbflowError(issuesFromZod(r.error, input, [prefix]));
  return r.data;
}

/** One epoch's results (a line of the results file). @category Training */
export interface EpochRecord {
  readonly kind: "epoch";
  readonly epoch: number;
  readonly seconds: number;
  /** The rule's base learning rate times the schedule's factor in this epoch. */
  readonly rate: number;
  readonly train?: Metrics | undefined;
  readonly test?: Metrics | undefined;
}

/** Why training ended. @category Training */
export type StopReason = "max-epochs" | "early-stopping" | "target-reached" | "callback" | "non-finite-loss" | "outputs-tied";

/** Everything needed to resume training bit for bit (weights are saved separately in the model file). @category Training */
export interface TrainerState {
  readonly epoch: number;
  readonly shuffle: RandomStreamState;
  readonly rule: RuleState;
  readonly history: readonly EpochRecord[];
  readonly best: number | null;
  readonly sinceBest: number;
  /** Persistent free-phase states per non-input layer, n×size, when enabled. */
  readonly persistent: (number[] | null)[] | null;
  /** Persistent held-out free-phase states per non-input layer, n_test×size, with `training.persistentTestStates`. */
  readonly persistentTest?: (number[] | null)[] | null | undefined;
  /** The optimizer's step count and moments, when `training.optimizer` is set. */
  readonly optimizer?: OptimizerState | null | undefined;
  /** Sequence mode: where the epoch stands (its plan and position) and the carried state. */
  readonly sequence?: SequenceProgress | null | undefined;
}

/** Callbacks of a {@link Trainer}. @category Training */
export interface TrainerHooks {
  /** After every epoch; return `"stop"` to end training. */
  readonly onEpoch?: ((record: EpochRecord, trainer: Trainer) => void | "stop") | undefined;
  /** After every mini-batch. */
  readonly onBatch?: ((info: { epoch: number; batch: number; batches: number; size: number }) => void) | undefined;
}

/** Where one network layer's values sit in a data set's rows. */
interface Slot {
  readonly name: string;
  readonly index: number;
  readonly size: number;
  /** Offset of the layer's block in a row. */
  readonly offset: number;
}

/** How a data set's rows map to the network's input and output layers. */
interface DataLayout {
  readonly inputs: readonly Slot[];
  readonly outputs: readonly Slot[];
}

/**
 * Maps a data set's blocks (or its whole rows, for a network with one input and one output layer) to the
 * network's layers by name; problems are added to `problems` with paths under `data.<what>`.
 */
function dataLayout(net: Network, ds: Dataset, what: string, problems: Issue[]): DataLayout | null {
  const side = (role: "input" | "output"): Slot[] | null => {
    const layers = role === "input" ? net.inputLayers : net.outputLayers;
    const key = role === "input" ? "inputs" : "targets";
    const width = role === "input" ? ds.inputSize : ds.targetSize;
    const given = role === "input" ? ds.inputLayers : ds.targetLayers;
    const names = layers.map((l) => JSON.stringify(l.name)).join(", ");
    if (given === undefined) {
      const only = layers[0];
      if (layers.length !== 1 || only === undefined) {
        problems.push(issueText("shape_mismatch", `data.${what}.${key}`, `values for each of the network's ${layers.length} ${role} layers (${names}): a data set with ${role === "input" ? "inputLayers" : "targetLayers"} (see createLayeredDataset)`, `one block of ${width} values per example`));
        return null;
      }
      if (width !== only.size) {
        problems.push(issueText("shape_mismatch", `data.${what}.${key}`, `${only.size} values per example (layer ${JSON.stringify(only.name)})`, `${width}`));
        return null;
      }
      return [{ name: only.name, index: only.index, size: only.size, offset: 0 }];
    }
    const slots: Slot[] = [];
    let offset = 0;
    let ok = true;
    for (const b of given) {
      const l = layers.find((x) => x.name === b.layer);
      if (l === undefined) {
        problems.push(issueText("unknown_name", `data.${what}.${key}.${b.layer}`, `one of the network's ${role} layers (${names})`, JSON.stringify(b.layer)));
        ok = false;
      } else if (l.size !== b.size) {
        problems.push(issueText("shape_mismatch", `data.${what}.${key}.${b.layer}`, `${l.size} values per example (the layer's size)`, `${b.size}`));
        ok = false;
      } else slots.push({ name: l.name, index: l.index, size: l.size, offset });
      offset += b.size;
    }
    for (const l of layers) {
      if (!given.some((b) => b.layer === l.name)) {
        problems.push(issueText("shape_mismatch", `data.${what}.${key}.${l.name}`, `values for the ${role} layer ${JSON.stringify(l.name)}`, "missing"));
        ok = false;
      }
    }
    return ok ? slots : null;
  };
  const inputs = side("input");
  const outputs = side("output");
  return inputs === null || outputs === null ? null : { inputs, outputs };
}

/**
 * The first `count` examples of a data set as a batch by layer name: each input and output layer's
 * block of the rows (the whole rows for a network with one input and one output layer). Targets not
 * observed stay NaN rows.
 * @throws {@link EbbflowError} `shape_mismatch` / `unknown_name` (paths under `data.<what>`) when the data set's layers do not match the network's.
 * @category Training
 */
export function datasetBatch(net: Network, ds: Dataset, count = ds.size, what = "train"): { inputs: Record<string, Float64Array>; targets: Record<string, Float64Array> } {
  const problems: Issue[] = [];
  const layout = dataLayout(net, ds, what, problems);
  if (layout === null) throw new EbbflowError(problems);
  const n = Math.max(0, Math.min(count, ds.size));
  const inputs: Record<string, Float64Array> = {};
  const targets: Record<string, Float64Array> = {};
  for (const s of layout.inputs) gatherBlock(ds.inputs, ds.inputSize, s, null, 0, n, (inputs[s.name] = new Float64Array(n * s.size)));
  for (const s of layout.outputs) gatherBlock(ds.targets, ds.targetSize, s, null, 0, n, (targets[s.name] = new Float64Array(n * s.size)));
  return { inputs, targets };
}

/**
 * Copies between a batch's rows (`batch`, B×width) and the rows `idx[from ..]` of a per-example store:
 * into the batch, or back to the store with `toStore`; one copy per run of consecutive example indices
 * (the whole batch at once when the order is fixed).
 */
function copyRuns(batch: FloatArray, store: FloatArray, idx: Int32Array, from: number, B: number, width: number, toStore: boolean): void {
  for (let p = 0; p < B; ) {
    const e = idx[from + p] as number;
    let q = p + 1;
    while (q < B && idx[from + q] === e + (q - p)) q++;
    if (toStore) store.set(batch.subarray(p * width, q * width), e * width);
    else batch.set(store.subarray(e * width, (e + q - p) * width), p * width);
    p = q;
  }
}

/** Copies one layer's block of rows `from .. from+B` (or of the rows `idx[from ..]`) into `out` (B×size). */
function gatherBlock(all: Float64Array, width: number, slot: Slot, idx: Int32Array | null, from: number, B: number, out: Float64Array): void {
  for (let p = 0; p < B; p++) {
    const e = idx === null ? from + p : (idx[from + p] as number);
    out.set(all.subarray(e * width + slot.offset, e * width + slot.offset + slot.size), p * slot.size);
  }
}

/** Is `x` a rule instance (rather than a config)? */
function isRuleInstance(x: unknown): x is LearningRule {
  return typeof x === "object" && x !== null && typeof (x as LearningRule).computeDelta === "function" && typeof (x as LearningRule).step === "function";
}

/** Extras of a {@link Trainer}. @category Training */
export interface TrainerExtras {
  /** Held-out data, evaluated after every epoch. */
  readonly test?: Dataset | undefined;
  /** Seed of the shuffling stream (default: the network's seed). */
  readonly seed?: number | string | undefined;
  readonly hooks?: TrainerHooks | undefined;
  /** Where rules are looked up by name (default: the built-in rules); add your own with `Registry.with`. */
  readonly registry?: Registry | undefined;
}

/**
 * Trains a network with a rule on a data set.
 * @category Training
 * @example
 * ```ts
 * const trainer = new Trainer(net, { rule: "generec", rate: 0.2 }, xorDataset(), { epochs: 500, batchSize: 4 }, { seed: 1 });
 * const { reason } = trainer.run();
 * ```
 */
export class Trainer {
  readonly net: Network;
  readonly rule: LearningRule;
  readonly options: TrainingOptions;
  readonly train: Dataset;
  readonly test: Dataset | undefined;
  readonly hooks: TrainerHooks;
  /** Where rules are looked up by name. */
  readonly registry: Registry;
  /** The rule's descriptor (null for an instance of a rule that is not registered). */
  readonly descriptor: AnyRuleDescriptor | null;
  /** Completed epochs. */
  epoch = 0;
  readonly history: EpochRecord[] = [];
  private shuffleStream: RandomStream;
  /** The seed of the training streams (shuffling, random tie-breaking). */
  private readonly seed: number | string;
  private best: number | null = null;
  private sinceBest = 0;
  /** Where each input and output layer's values sit in the training set's rows. */
  private readonly layout: DataLayout;
  /** Layouts of the data sets evaluated. */
  private readonly layouts = new WeakMap<Dataset, DataLayout>();
  private readonly order: number[];
  private readonly persistent: (FloatArray | null)[] | null;
  /** Held-out examples' last free states (`training.persistentTestStates`), per non-input layer. */
  private readonly persistentTest: (FloatArray | null)[] | null;
  private readonly forward: boolean;
  /** The optimizer applied to the rule's change (null: the rule's own step). */
  readonly optimizer: Optimizer | null;
  private evalSettlers = new Map<number, Settler>();
  /** The snapshot each evaluation settler settles into (one per batch size, reused: no memory taken per chunk). */
  private evalSnaps = new Map<number, Snapshot>();
  private evalPasses = new Map<number, ForwardPass>();
  private starts = new Map<number, Snapshot>();
  private testStarts = new Map<number, Snapshot>();
  /** Sequence mode's runner (null unless `training.sequences`). */
  private readonly sequenceRunner: SequenceRunner | null;
  /** Start time of the epoch under way (sequence mode steps through it pattern by pattern). */
  private epochStart = 0;

  constructor(net: Network, rule: RuleConfigInput | Readonly<Record<string, unknown>> | LearningRule, train: Dataset, options: TrainingOptionsInput, extras: TrainerExtras = {}) {
    this.net = net;
    refuseUnknownOptions(extras, ["test", "seed", "hooks", "registry"], "extras");
    this.options = parseTraining(options);
    this.registry = extras.registry ?? builtinRegistry;
    if (isRuleInstance(rule)) {
      if (rule.net !== net) fail("invalid_config", "rule", "a rule bound to the network being trained", "a rule bound to another network");
      this.rule = rule;
    } else this.rule = this.registry.createRule(net, configWithLoss(this.registry, rule, this.options.loss));
    this.descriptor = this.registry.rules.get(this.rule.config.rule) ?? null;
    if (this.descriptor?.objective !== undefined) {
      const followed = ruleObjective(this.registry, this.rule.config, this.options.loss).loss;
      if (followed !== this.options.loss) fail("invalid_config", "rule.loss", `the loss of the training config, ${JSON.stringify(this.options.loss)}`, followed);
    }
    this.train = train;
    this.test = extras.test;
    this.hooks = extras.hooks ?? {};
    // data by layer name: each input and output layer's block of the rows (the whole rows for one of each)
    const problems: Issue[] = [];
    let layout: DataLayout | null = null;
    for (const [ds, what] of [[train, "train"], [extras.test, "test"]] as const) {
      if (ds === undefined) continue;
      if (ds.size === 0) problems.push(issueText("shape_mismatch", `data.${what}`, "at least one example", "an empty data set"));
      const l = dataLayout(net, ds, what, problems);
      if (l !== null) this.layouts.set(ds, l);
      if (what === "train") layout = l;
    }
    if (problems.length > 0 || layout === null) throw new EbbflowError(problems);
    this.layout = layout;
    if (this.options.earlyStopping?.split === "test" && this.test === undefined) fail("invalid_config", "training.earlyStopping.split", '"train" (no test set was given)', "test");
    this.seed = extras.seed ?? net.spec.seed;
    this.shuffleStream = createRandom(this.seed).child("train/shuffle");
    this.forward = this.options.readout === "forward" || (this.options.readout === "auto" && this.descriptor?.readout === "forward");
    this.order = this.forward ? forwardOrder(net) : [];
    this.optimizer = this.options.optimizer === undefined ? null : new Optimizer(net, this.rule, this.options.optimizer);
    // per non-input layer, one state row per example of a data set of `count` examples
    const stateBytes = (count: number) => count * net.layers.reduce((n, l) => n + (l.role === "input" ? 0 : l.size), 0) * (net.dtype === "float32" ? 4 : 8);
    const states = (count: number) => net.layers.map((l) => (l.role === "input" ? null : allocate(net.dtype, count * l.size)));
    if (this.options.persistentStates) requireBytes("training.persistentStates", `persistent states of ${train.size} examples`, stateBytes(train.size));
    this.persistent = this.options.persistentStates ? states(train.size) : null;
    const heldOut = this.test;
    if (this.options.persistentTestStates) {
      if (heldOut === undefined) fail("invalid_config", "training.persistentTestStates", "false (no held-out set was given)", true);
      if (this.forward) fail("unsupported", "training.persistentTestStates", "a rule whose read-out settles (a feedforward pass keeps no state)", this.rule.config.rule);
      requireBytes("training.persistentTestStates", `persistent states of ${heldOut.size} held-out examples`, stateBytes(heldOut.size));
    }
    this.persistentTest = this.options.persistentTestStates === true && heldOut !== undefined ? states(heldOut.size) : null;
    const seq = this.options.sequences;
    if (seq !== undefined) {
      if (this.options.persistentStates) fail("invalid_config", "training.persistentStates", "false with training.sequences (the carried state is the free phase's start)", true);
      if (this.options.persistentTestStates) fail("invalid_config", "training.persistentTestStates", "false with training.sequences (the carried state is the free phase's start)", true);
      if (this.forward) fail("unsupported", "training.sequences", "a rule that settles (a feedforward pass keeps no state to carry)", this.rule.config.rule);
      if (layout.inputs.length !== 1 || layout.outputs.length !== 1) fail("unsupported", "training.sequences", "one input and one output layer in sequence mode", `${layout.inputs.length} input and ${layout.outputs.length} output layers`);
      this.sequenceRunner = new SequenceRunner(net, requireSequences(train, "data.train"), seq.reset, this.options.batchSize, layout.inputs[0]!.name, layout.outputs[0]!.name);
      if (carriesTraces(this.rule)) this.rule.carryTraces = true;
    } else this.sequenceRunner = null;
  }

  /** The rule's name as reports and results show it (its descriptor's label). */
  get ruleLabel(): string {
    return this.descriptor?.label(this.rule.config) ?? this.rule.config.rule;
  }

  /** The layout of a data set evaluated (checked once per set). */
  private layoutOf(ds: Dataset): DataLayout {
    let l = this.layouts.get(ds);
    if (l === undefined) {
      const problems: Issue[] = [];
      l = dataLayout(this.net, ds, "evaluated", problems) ?? undefined;
      if (l === undefined) throw new EbbflowError(problems);
      this.layouts.set(ds, l);
    }
    return l;
  }

  /**
   * Evaluates the network (free phase, or the feedforward pass) on a data set: the metrics over every
   * observed read-out, and per output layer when the network has several (`layers`).
   */
  evaluate(ds: Dataset, recorder?: Recorder): Metrics {
    // random tie-breaking draws from a stream fixed by the seed, the data set's name and the epoch (no state to save)
    const ties = this.options.ties === "random" ? createRandom(this.seed).child(`train/ties/${ds.name}/${this.epoch}`) : null;
    const layout = this.layoutOf(ds);
    const perLayer = layout.outputs.map(() => new MetricSums(this.options.loss, this.options.ties, ties === null ? null : () => ties.uniform()));
    if (this.sequenceRunner !== null && isSequenceDataset(ds)) {
      // sequence mode: free phases pattern by pattern with the state carried over (recorded if asked)
      this.sequenceRunner.evaluate(ds, (B) => this.evalSettler(B), layout.outputs[0]!.index, perLayer[0]!, recorder);
      return perLayer[0]!.result();
    }
    if (recorder !== undefined) fail("invalid_parameter", "recorder", "no recorder (recording is for sequence-mode evaluation; pass onStep to a Settler otherwise)", "a recorder");
    const chunk = Math.min(256, ds.size);
    const kept = this.persistentTest !== null && ds === this.test ? this.persistentTest : null;
    // one block per layer is a view of the rows; several are copied out per chunk
    const whole = (slots: readonly Slot[], width: number) => slots.length === 1 && slots[0]!.size === width;
    const inBufs = whole(layout.inputs, ds.inputSize) ? null : layout.inputs.map((s) => new Float64Array(chunk * s.size));
    const tBufs = whole(layout.outputs, ds.targetSize) ? null : layout.outputs.map((s) => new Float64Array(chunk * s.size));
    for (let start = 0; start < ds.size; start += chunk) {
      const B = Math.min(chunk, ds.size - start);
      const inputs: Record<string, Float64Array> = {};
      layout.inputs.forEach((s, i) => {
        if (inBufs === null) inputs[s.name] = ds.inputs.subarray(start * ds.inputSize, (start + B) * ds.inputSize);
        else {
          gatherBlock(ds.inputs, ds.inputSize, s, null, start, B, inBufs[i]!);
          inputs[s.name] = inBufs[i]!.subarray(0, B * s.size);
        }
      });
      let activity: readonly FloatArray[];
      if (this.forward) {
        let pass = this.evalPasses.get(B);
        if (pass === undefined) {
          pass = createForwardPass(this.net, B);
          this.evalPasses.set(B, pass);
        }
        runForward(this.net, this.order, { inputs, targets: {} }, pass);
        activity = pass.activity;
      } else if (kept !== null) {
        // held-out persistent states: each example's free phase starts where its last one ended
        const snap = this.evalSettler(B).settle({ phase: "free", inputs, start: this.heldOutStart(kept, start, B) }, this.evalSnapshot(B));
        for (const l of this.net.layers) kept[l.index]?.set(snap.state[l.index] as FloatArray, start * l.size);
        activity = snap.activity;
      } else {
        activity = this.evalSettler(B).settle({ phase: "free", inputs }, this.evalSnapshot(B)).activity;
      }
      layout.outputs.forEach((s, i) => {
        let t: Float64Array;
        if (tBufs === null) t = ds.targets.subarray(start * ds.targetSize, (start + B) * ds.targetSize);
        else {
          gatherBlock(ds.targets, ds.targetSize, s, null, start, B, tBufs[i]!);
          t = tBufs[i]!.subarray(0, B * s.size);
        }
        accumulateMetrics(perLayer[i]!, activity[s.index] as FloatArray, t, B, s.size);
      });
    }
    if (perLayer.length === 1) return perLayer[0]!.result();
    const overall = new MetricSums(this.options.loss, this.options.ties, null);
    const layers: Record<string, Metrics> = {};
    layout.outputs.forEach((s, i) => {
      overall.add(perLayer[i]!);
      layers[s.name] = perLayer[i]!.result();
    });
    return { ...overall.result(), layers };
  }

  /** The snapshot the evaluation settler of batch size B settles into (made once). */
  private evalSnapshot(B: number): Snapshot {
    return keptSnapshot(this.evalSnaps, this.net, B);
  }

  /** The evaluation settler of batch size B (made once). */
  private evalSettler(B: number): Settler {
    let s = this.evalSettlers.get(B);
    if (s === undefined) {
      s = new Settler(this.net, B);
      this.evalSettlers.set(B, s);
    }
    return s;
  }

  /** The rule's step on one batch, through the optimizer when there is one. */
  private applyStep(batch: import("../rules/base.js").Batch, factor: number): void {
    if (this.optimizer === null) this.rule.step(batch, factor);
    else {
      this.optimizer.before();
      this.rule.step(batch, factor);
      this.optimizer.after(factor);
    }
  }

  /**
   * Sequence mode: trains on one pattern position of the current batch of sequences (starting an epoch
   * when none is under way) and returns the epoch's record when that was the epoch's last pattern, else
   * null. The trainer's state may be saved between any two calls (resuming mid-sequence).
   * @throws {@link EbbflowError} `invalid_config` when `training.sequences` is not set.
   */
  sequenceStep(): EpochRecord | null {
    const runner = this.sequenceRunner;
    if (runner === null) return fail("invalid_config", "training.sequences", "sequence mode (training.sequences set) for sequenceStep", "not set");
    const epoch = this.epoch + 1;
    if (!runner.midEpoch) this.epochStart = performance.now();
    const factor = scheduleFactor(this.options.schedule, epoch);
    const done = runner.step(this.rule, this.options.shuffle ? this.shuffleStream : null, (batch) => this.applyStep(batch, factor));
    this.hooks.onBatch?.({ epoch, batch: 0, batches: 0, size: 0 });
    return done ? this.finishEpoch(this.epochStart, factor) : null;
  }

  /** The record of the epoch just trained (evaluations included), kept in the history. */
  private finishEpoch(t0: number, factor: number): EpochRecord {
    const epoch = this.epoch + 1;
    const ds = this.train;
    const record: EpochRecord = {
      kind: "epoch",
      epoch,
      seconds: (performance.now() - t0) / 1000,
      rate: this.rule.config.rate * factor,
      ...(this.options.evaluateTrain ? { train: this.evaluate(ds) } : {}),
      ...(this.test !== undefined ? { test: this.evaluate(this.test) } : {}),
    };
    this.epoch = epoch;
    this.history.push(record);
    return record;
  }

  /** Gathers a mini-batch's examples (rows `idx`) into one flat array per layer. */
  private gather(idx: Int32Array, from: number, B: number, inBufs: readonly Float64Array[], tBufs: readonly Float64Array[]): void {
    const ds = this.train;
    this.layout.inputs.forEach((s, i) => gatherBlock(ds.inputs, ds.inputSize, s, idx, from, B, inBufs[i]!));
    this.layout.outputs.forEach((s, i) => gatherBlock(ds.targets, ds.targetSize, s, idx, from, B, tBufs[i]!));
  }

  private persistentStart(idx: Int32Array, from: number, B: number): Snapshot {
    const snap = keptSnapshot(this.starts, this.net, B);
    for (const l of this.net.layers) {
      const store = this.persistent?.[l.index];
      if (!store) continue;
      copyRuns(snap.state[l.index] as FloatArray, store, idx, from, B, l.size, false);
    }
    return snap;
  }

  /** The start of a held-out chunk's free phase: rows `from`..`from + B` of the held-out persistent states. */
  private heldOutStart(kept: readonly (FloatArray | null)[], from: number, B: number): Snapshot {
    const snap = keptSnapshot(this.testStarts, this.net, B);
    for (const l of this.net.layers) {
      const store = kept[l.index];
      if (store) (snap.state[l.index] as FloatArray).set(store.subarray(from * l.size, (from + B) * l.size));
    }
    return snap;
  }

  private keepPersistent(idx: Int32Array, from: number, B: number): void {
    const free = this.rule.lastFree;
    if (free === null) return;
    for (const l of this.net.layers) {
      const store = this.persistent?.[l.index];
      if (!store) continue;
      copyRuns(free.state[l.index] as FloatArray, store, idx, from, B, l.size, true);
    }
  }

  /** Runs one epoch and returns its record. */
  runEpoch(): EpochRecord {
    if (this.sequenceRunner !== null) {
      for (;;) {
        const r = this.sequenceStep();
        if (r !== null) return r;
      }
    }
    const t0 = performance.now();
    const epoch = this.epoch + 1;
    const ds = this.train;
    const n = ds.size;
    const idx = this.options.shuffle ? this.shuffleStream.permutation(n) : Int32Array.from({ length: n }, (_, i) => i);
    const factor = scheduleFactor(this.options.schedule, epoch);
    const bs = Math.min(this.options.batchSize, n);
    const batches = Math.ceil(n / bs);
    const inBufs = this.layout.inputs.map((s) => new Float64Array(bs * s.size));
    const tBufs = this.layout.outputs.map((s) => new Float64Array(bs * s.size));
    for (let b = 0; b < batches; b++) {
      const from = b * bs;
      const B = Math.min(bs, n - from);
      this.gather(idx, from, B, inBufs, tBufs);
      const inputs: Record<string, Float64Array> = {};
      const targets: Record<string, Float64Array> = {};
      this.layout.inputs.forEach((s, i) => (inputs[s.name] = inBufs[i]!.subarray(0, B * s.size)));
      this.layout.outputs.forEach((s, i) => (targets[s.name] = tBufs[i]!.subarray(0, B * s.size)));
      const batch = { inputs, targets };
      this.rule.freeStart = this.persistent ? this.persistentStart(idx, from, B) : null;
      this.applyStep(batch, factor);
      if (this.persistent) this.keepPersistent(idx, from, B);
      this.hooks.onBatch?.({ epoch, batch: b + 1, batches, size: B });
    }
    this.rule.freeStart = null;
    return this.finishEpoch(t0, factor);
  }

  /**
   * Checks the stop conditions after an epoch (the guard, target reached, early stopping, epoch limit) and updates
   * the early-stopping state; returns the reason to stop, or null to go on. Call once per epoch.
   */
  stopAfter(record: EpochRecord): StopReason | null {
    const o = this.options;
    if (o.guard) {
      // the guard: training that has broken down stops with a name, never "successfully"
      const m = record.train ?? record.test;
      if (m !== undefined) {
        if (!Number.isFinite(m.loss) || !Number.isFinite(m.sse)) return "non-finite-loss";
        if (m.examples > 0 && m.ties === m.examples) return "outputs-tied";
      }
    }
    if (o.stopWhen !== undefined) {
      const m = record[o.stopWhen.split];
      if (m !== undefined) {
        const v = m[o.stopWhen.metric];
        if ((o.stopWhen.atLeast === undefined || v >= o.stopWhen.atLeast) && (o.stopWhen.atMost === undefined || v <= o.stopWhen.atMost)) return "target-reached";
      }
    }
    if (o.earlyStopping !== undefined) {
      const m = record[o.earlyStopping.split];
      if (m !== undefined) {
        const higherBetter = o.earlyStopping.metric === "accuracy" || o.earlyStopping.metric === "cosine";
        const v = higherBetter ? -m[o.earlyStopping.metric] : m[o.earlyStopping.metric];
        if (this.best === null || v < this.best - o.earlyStopping.minDelta) {
          this.best = v;
          this.sinceBest = 0;
        } else if (++this.sinceBest >= o.earlyStopping.patience) return "early-stopping";
      }
    }
    return this.epoch >= o.epochs ? "max-epochs" : null;
  }

  /** Trains until the epoch limit or a stop condition. */
  run(): { reason: StopReason; epochs: number } {
    while (this.epoch < this.options.epochs) {
      const record = this.runEpoch();
      const reason = this.stopAfter(record);
      if (this.hooks.onEpoch?.(record, this) === "stop") return { reason: "callback", epochs: this.epoch };
      if (reason !== null) return { reason, epochs: this.epoch };
    }
    return { reason: "max-epochs", epochs: this.epoch };
  }

  /** The state to save beside the weights for bit-identical resumption. */
  saveState(): TrainerState {
    return {
      epoch: this.epoch,
      shuffle: this.shuffleStream.saveState(),
      rule: this.rule.saveState(),
      history: this.history.slice(),
      best: this.best,
      sinceBest: this.sinceBest,
      persistent: this.persistent ? this.persistent.map((p) => (p ? Array.from(p) : null)) : null,
      ...(this.persistentTest !== null ? { persistentTest: this.persistentTest.map((p) => (p ? Array.from(p) : null)) } : {}),
      ...(this.optimizer !== null ? { optimizer: this.optimizer.saveState() } : {}),
      ...(this.sequenceRunner !== null ? { sequence: this.sequenceRunner.save() } : {}),
    };
  }

  /**
   * Restores a state saved by {@link Trainer.saveState} (the network must hold the matching weights). The
   * state is checked in full first (see `trainerStateIssues`); the rule's own state is checked by the rule.
   * @throws {@link EbbflowError} `parse_error` naming the field (paths under `trainer`), nothing restored.
   */
  loadState(state: TrainerState): void {
    const problems = trainerStateIssues(state, { layers: this.net.layers, examples: this.train.size, persistentStates: this.options.persistentStates });
    const runner = this.sequenceRunner;
    if (problems.length === 0 && runner !== null) {
      if (state.sequence === undefined || state.sequence === null) problems.push(issueText("parse_error", "trainer.sequence", "the sequence progress of a run with training.sequences", "none"));
      else problems.push(...sequenceProgressIssues(state.sequence, this.net, runner.train, runner.batchSize, "trainer.sequence"));
    }
    const kept = this.persistentTest;
    if (problems.length === 0 && kept !== null) {
      // held-out persistent states: one array of held-out examples × size per non-input layer
      const saved = state.persistentTest;
      if (!Array.isArray(saved) || saved.length !== kept.length) problems.push(issueText("parse_error", "trainer.persistentTest", `${kept.length} entries (one per layer; training.persistentTestStates is on)`, Array.isArray(saved) ? `${saved.length} entries` : String(saved)));
      else
        kept.forEach((k, i) => {
          const p = saved[i] ?? null;
          if ((k === null) !== (p === null) || (k !== null && p !== null && p.length !== k.length)) problems.push(issueText("parse_error", `trainer.persistentTest[${i}]`, k === null ? "null (input layers keep no state)" : `${k.length} values`, p === null ? "null" : `array of length ${p.length}`));
        });
    }
    if (problems.length > 0) throw new EbbflowError(problems);
    const shuffle = RandomStream.fromState(state.shuffle, "trainer.shuffle");
    // a damaged rule state is a typed error naming the field (checked against the rule's state schema, then by the rule)
    loadRuleState(this.rule, this.descriptor === null ? state.rule : this.registry.checkState(this.rule.config, state.rule, "trainer.rule"), "trainer.rule");
    this.epoch = state.epoch;
    this.shuffleStream = shuffle;
    this.history.length = 0;
    this.history.push(...state.history);
    this.best = state.best;
    this.sinceBest = state.sinceBest;
    if (this.optimizer !== null) {
      if (state.optimizer === undefined || state.optimizer === null) fail("invalid_config", "trainer.optimizer", "the optimizer state of a run with training.optimizer", "none");
      this.optimizer.loadState(state.optimizer);
    }
    if (runner !== null && state.sequence) runner.load(state.sequence);
    if (kept !== null && state.persistentTest) state.persistentTest.forEach((p, i) => (p ? kept[i]?.set(p) : undefined));
    if (this.persistent && state.persistent) {
      state.persistent.forEach((p, i) => {
        const store = this.persistent?.[i];
        if (p && store) store.set(p);
      });
    }
  }
}
