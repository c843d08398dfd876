/**
 * Sequences: a worked example (run by test/examples-sequences.test.ts; the data and network are our own).
 *
 * 1. Texture memory: a fingertip's four touch sensors feel one texture at a time, smooth or ridged, and
 *    must report whether the texture two patterns ago was ridged. The Trainer runs in sequence mode, so
 *    the slow memory layers' state carries over from one pattern to the next within a sequence. Learned
 *    with GeneRec, and with the calcium rule's continuous traces carried across each sequence on a
 *    network whose hidden layer is a fixed random expansion (only the read-out learns); both compared
 *    with a control that resets the state (and traces) at every pattern, where no memory can help.
 * 2. Adaptation: a touch layer with spike-frequency adaptation meets the same stimulus five times in a
 *    row; its response falls from presentation to presentation, while an identical layer without
 *    adaptation (gain 0) answers every presentation alike.
 */
import {
  buildNetwork, carriesTraces, Recorder, Settler, textureMemoryDataset, textureMemoryNetwork, Trainer, withSequences,
  type RuleConfigInput, type Snapshot, type TextureMemoryNetworkOptions,
} from "../src/index.js";

/** Test accuracies on held-out sequences: with state carried, and the reset-every-pattern control. */
export interface TextureMemoryResult {
  readonly rule: string;
  readonly carried: number;
  readonly control: number;
  /** Share of "no" answers in the held-out targets (what always answering "no" scores). */
  readonly majority: number;
  /** Training-set accuracies (with `evaluateTrain`): carried, control, and the share of "no" answers. */
  readonly train?: { readonly carried: number; readonly control: number; readonly majority: number } | undefined;
}

/** Options of {@link runTextureMemory} beyond the rule, epochs and the "no" target. */
export interface TextureMemoryRunOptions {
  /** The network's hidden layer (see `textureMemoryNetwork`); default learned. */
  readonly network?: TextureMemoryNetworkOptions | undefined;
  /** Seed s: network seed s, training sequences drawn with seed 2s − 1, held-out ones with 2s (default 1). */
  readonly seed?: number | undefined;
  /** Training sequences (default 64; 32 held out). */
  readonly sequences?: number | undefined;
  /** Also evaluate on the training sequences (default false). */
  readonly evaluateTrain?: boolean | undefined;
  /**
   * false: the rule's traces start afresh at every pattern while the network state still carries over
   * (an ablation of the traces alone; default true, as the Trainer's sequence mode does).
   */
  readonly carryTraces?: boolean | undefined;
}

/** Share of targets below one half in a data set. */
function noShare(targets: ArrayLike<number>): number {
  let no = 0;
  for (let i = 0; i < targets.length; i++) if ((targets[i] as number) < 0.5) no++;
  return no / targets.length;
}

/** Trains the texture-memory task with `rule` (sequence mode) and the control (every pattern its own sequence). */
export function runTextureMemory(rule: RuleConfigInput, epochs = 60, low = 0, options: TextureMemoryRunOptions = {}): TextureMemoryResult {
  const seed = options.seed ?? 1;
  const train = textureMemoryDataset({ sequences: options.sequences ?? 64, length: 8, seed: 2 * seed - 1, low });
  const test = textureMemoryDataset({ sequences: 32, length: 8, seed: 2 * seed, low });
  const evaluateTrain = options.evaluateTrain ?? false;
  const trainOptions = { epochs, batchSize: 4, sequences: {}, evaluateTrain };
  const network = () => buildNetwork(textureMemoryNetwork(seed, undefined, undefined, options.network));
  const carried = new Trainer(network(), rule, train, trainOptions, { test });
  if (options.carryTraces === false && carriesTraces(carried.rule)) carried.rule.carryTraces = false;
  carried.run();
  // the control: each pattern a sequence of its own, so every pattern starts from rest (state and traces)
  const single = (ds: typeof train) => withSequences(ds, Array.from({ length: ds.size + 1 }, (_, i) => i));
  const control = new Trainer(network(), rule, single(train), trainOptions, { test: single(test) });
  control.run();
  const last = (t: Trainer) => t.history.at(-1)!;
  return {
    rule: String(rule.rule),
    carried: last(carried).test!.accuracy,
    control: last(control).test!.accuracy,
    majority: noShare(test.targets),
    train: evaluateTrain ? { carried: last(carried).train!.accuracy, control: last(control).train!.accuracy, majority: noShare(train.targets) } : undefined,
  };
}

/**
 * The calcium rule's settings that learn the texture-memory task with its continuous traces carried
 * across each sequence (on the network with a fixed hidden expansion, "no" as 0.05): a fast trace of
 * 0.3 steps and a slow one of 2 steps, so that at the end of a pattern's 2 clamped steps the fast trace
 * holds the target-driven state and the slow one the free state just before it.
 */
export const CALCIUM_SEQUENCE_RULE = { rule: "calcium", rate: 0.2, trough: 0.02, timing: "continuous", fastTau: 0.3, slowTau: 2, freeSteps: 30, clampedSteps: 2 } as const satisfies RuleConfigInput;

/** Responses of the touch layer to five presentations of one stimulus, with and without adaptation. */
export interface AdaptationResult {
  readonly adapted: number[];
  readonly control: number[];
  /** 1 − (fifth response / first response), with adaptation. */
  readonly reduction: number;
  /** The same without adaptation. */
  readonly controlReduction: number;
  /** 1 − (fifth response with adaptation / fifth response without): the reduction against the control. */
  readonly versusControl: number;
  /** The recorder's per-step trace of the adaptation variable (unit 0, all presentations). */
  readonly trace: number[];
}

/** Presents one stimulus five times in a row (state carried), 40 settling steps each, and reads the mean response. */
export function runAdaptation(): AdaptationResult {
  const spec = (gain: number) => ({
    seed: 2,
    layers: [
      { name: "sensors", size: 4, role: "input" as const },
      { name: "touch", size: 3, role: "output" as const, unit: { kind: "logistic" as const }, bias: -1, adaptation: { tau: 20, gain } },
    ],
    connections: [{ from: "sensors", to: "touch", weights: [2, 2, 0, 0, 0, 2, 2, 0, 1, 1, 1, 1] }],
    dynamics: { dt: 0.5, maxSteps: 40, tolerance: 1e-12 },
  });
  const present = (gain: number, recorder?: Recorder) => {
    const net = buildNetwork(spec(gain));
    const settler = new Settler(net, 1);
    const responses: number[] = [];
    let last: Snapshot | undefined;
    for (let k = 0; k < 5; k++) {
      last = settler.settle({ phase: "free", inputs: { sensors: [1, 1, 0, 0] }, start: last, ...(recorder !== undefined ? { onStep: recorder.onStep } : {}) }, last);
      recorder?.endPattern({ sequence: 0, position: k, phase: "free" });
      const a = last.activity[1]!;
      responses.push((a[0]! + a[1]! + a[2]!) / 3);
    }
    return responses;
  };
  const recorder = new Recorder(buildNetwork(spec(1.5)), { batch: 1, steps: 40, patterns: 5, layers: ["touch"], adaptation: ["touch"] });
  const adapted = present(1.5, recorder);
  const control = present(0);
  const trace: number[] = [];
  for (let p = 0; p < 5; p++) for (let s = 1; s <= recorder.stepCounts[p]!; s++) trace.push(recorder.value("touch.adaptation", p, s, 0, 0));
  return { adapted, control, reduction: 1 - adapted[4]! / adapted[0]!, controlReduction: 1 - control[4]! / control[0]!, versusControl: 1 - adapted[4]! / control[4]!, trace };
}
