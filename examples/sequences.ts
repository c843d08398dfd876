/**
 * Sequences: a worked example (run by test/examples-sequences.test.ts; the data and network are our own).
 *
 * 1. Texture memory: a fingertip's four touch sensors feel one texture at a time, smooth or ridged, and
 *    must report whether the texture two patterns ago was ridged. The Trainer runs in sequence mode, so
 *    the slow memory layers' state carries over from one pattern to the next within a sequence. Learned
 *    with GeneRec and with the calcium rule's continuous traces carried across each sequence, and
 *    compared with a control that resets the state at every pattern (no memory can help it).
 * 2. Adaptation: a touch layer with spike-frequency adaptation meets the same stimulus five times in a
 *    row; its response falls from presentation to presentation, while an identical layer without
 *    adaptation (gain 0) answers every presentation alike.
 */
import {
  buildNetwork, Recorder, Settler, textureMemoryDataset, textureMemoryNetwork, Trainer, withSequences,
  type RuleConfigInput, type Snapshot,
} from "../src/index.js";

/** Test accuracies on held-out sequences: with state carried, and the reset-every-pattern control. */
export interface TextureMemoryResult {
  readonly rule: string;
  readonly carried: number;
  readonly control: number;
  /** Share of "no" answers in the held-out targets (what always answering "no" scores). */
  readonly majority: number;
}

/** Trains the texture-memory task with `rule` (sequence mode) and the control (every pattern its own sequence). */
export function runTextureMemory(rule: RuleConfigInput, epochs = 60, low = 0): TextureMemoryResult {
  const train = textureMemoryDataset({ sequences: 64, length: 8, seed: 1, low });
  const test = textureMemoryDataset({ sequences: 32, length: 8, seed: 2, low });
  const options = { epochs, batchSize: 4, sequences: {}, evaluateTrain: false };
  const carried = new Trainer(buildNetwork(textureMemoryNetwork(1)), rule, train, options, { test });
  carried.run();
  // the control: each pattern a sequence of its own, so every pattern starts from rest
  const single = (ds: typeof train) => withSequences(ds, Array.from({ length: ds.size + 1 }, (_, i) => i));
  const control = new Trainer(buildNetwork(textureMemoryNetwork(1)), rule, single(train), options, { test: single(test) });
  control.run();
  let no = 0;
  for (const t of test.targets) if (t < 0.5) no++;
  return { rule: String(rule.rule), carried: carried.history.at(-1)!.test!.accuracy, control: control.history.at(-1)!.test!.accuracy, majority: no / test.size };
}

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
