/**
 * The input kinds of the fuzz suite. Each kind draws cases with fast-check (mostly bad input: hostile values
 * at random places of valid documents, bit flips of valid files) and runs one through the code a user's
 * input reaches. A case ends in one of five verdicts:
 *
 * - `refused`: a typed `EbbflowError` (the wanted answer to bad input);
 * - `accepted`: no error, and the independent checks of the result hold;
 * - `untyped`: any other error (a TypeError, a RangeError, a stack overflow);
 * - `wrong`: accepted, but the result breaks an independent check (a damaged file loaded as different
 *   weights, a value outside its range accepted, a reserved key dropped silently);
 * - `hang`: the case did not finish within its time limit (decided by the runner, see `bench/fuzz.ts`).
 *
 * The independent checks do not reuse the code under test: they restate the rules (an ARC4 state is a
 * permutation of 0..255, an epoch count is an integer, a weight of an excitatory connection is >= 0, ...).
 * @module
 */
import fc from "fast-check";
import { mkdtempSync, mkdirSync, writeFileSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import {
  buildNetwork,
  createRule,
  EbbflowError,
  expandSweep,
  modelFromData,
  modelToJson,
  parseExperiment,
  parseJsonDataset,
  parseCsvDataset,
  parseSweepFile,
  parseTraining,
  Settler,
  Trainer,
  xorDataset,
  summarizeRuns,
  type Network,
  type RuleConfigInput,
  type SweepPlan,
} from "../../src/index.js";
import { checkpointFromData, readResults, readSweepPlan, readSubmissions, claimRunFolder, driveRun } from "../../src/node/index.js";
import { strictNumber } from "../../src/cli/numbers.js";
import { applyMutations, bitFlips, editText, flipBits, fromJsonText, holdsReservedKey, jsonMutations, nested, textEdits, toJsonText, copy } from "./mutate.js";

/** The verdict of one case (`hang` is given by the runner). */
export type Verdict = { readonly kind: "refused" | "accepted" } | { readonly kind: "untyped" | "wrong"; readonly detail: string };

/** One input kind. */
export interface FuzzKind<C = unknown> {
  readonly name: string;
  /** What its cases are, in a few words (for the report). */
  readonly about: string;
  readonly cases: fc.Arbitrary<C>;
  /** Runs one case. */
  run(c: C): Promise<Verdict> | Verdict;
  /** Per-case time limit in milliseconds (default 20 s). */
  readonly timeoutMs?: number;
}

const refused: Verdict = { kind: "refused" };
const accepted: Verdict = { kind: "accepted" };
const wrong = (detail: string): Verdict => ({ kind: "wrong", detail });

/** Runs `f`: a typed error is `refused`; another error is `untyped`; a result is checked by `check` (null = fine, else why it is wrong). */
export async function classify<T>(f: () => T | Promise<T>, check: (v: T) => string | null = () => null): Promise<Verdict> {
  let v: T;
  try {
    v = await f();
  } catch (e) {
    if (e instanceof EbbflowError) return refused;
    const err = e as Error;
    // where it was thrown: the first frame of the stack (file and line)
    const frame = /\n\s+at (.*)/.exec(String(err?.stack ?? ""))?.[1] ?? "";
    return { kind: "untyped", detail: `${err?.name ?? typeof e}: ${String(err?.message ?? e).slice(0, 200)}${frame !== "" ? ` (at ${frame.replace(/^.*\/(src|bench)\//, "$1/")})` : ""}` };
  }
  let why: string | null;
  try {
    why = check(v);
  } catch (e) {
    why = `the check itself failed: ${(e as Error).message}`;
  }
  return why === null ? accepted : wrong(why);
}

// ---------------------------------------------------------------- shared bases

const smallNetwork = (dtype: "float32" | "float64" = "float64") => ({
  dtype,
  seed: 5,
  layers: [
    { name: "in", size: 3, role: "input" },
    { name: "hid", size: 4, role: "hidden", bias: [0.1, -0.1, 0, 0.2] },
    { name: "out", size: 2, role: "output", unit: { kind: "logistic", gain: 1 }, inhibition: { kind: "kwta", k: 1 } },
  ],
  connections: [
    { from: "in", to: "hid", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "separate", learned: true }, sign: "excitatory" },
    { from: "hid", to: "out", init: { kind: "normal", mean: 0, std: 0.5 }, feedback: { kind: "tied", gain: 1 }, bounds: "soft" },
    { from: "hid", to: "hid", weights: new Array(16).fill(0).map((_, i) => -((i % 5) / 10)), sign: "inhibitory" },
  ],
  dynamics: { dt: 0.5, maxSteps: 40, tolerance: 1e-5 },
});

const xorNetwork = {
  seed: 1,
  layers: [
    { name: "in", size: 2, role: "input" },
    { name: "hid", size: 3, role: "hidden" },
    { name: "out", size: 1, role: "output" },
  ],
  connections: [
    { from: "in", to: "hid", feedback: { kind: "tied", gain: 1 } },
    { from: "hid", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.5, maxSteps: 40, tolerance: 1e-5 },
};

const largest = (dtype: string) => (dtype === "float32" ? 3.4028234663852886e38 : Number.MAX_VALUE);

/** Independent checks of a built network against its declaration (finite parameters, sign and bound constraints). */
function networkProblem(net: Network): string | null {
  for (const l of net.layers) {
    if (l.bias.length !== l.size) return `layer ${l.name}: ${l.bias.length} biases for ${l.size} units`;
    for (const b of l.bias) if (!Number.isFinite(b)) return `layer ${l.name}: a non-finite bias`;
  }
  for (const c of net.connections) {
    const n = net.layers[c.to]!.size * net.layers[c.from]!.size;
    if (c.weights.length !== n) return `${c.label}: ${c.weights.length} weights for ${n}`;
    for (const w of c.weights) {
      if (!Number.isFinite(w) || Math.abs(w) > largest(net.dtype)) return `${c.label}: a non-finite weight`;
      if (c.spec.sign === "excitatory" && w < 0) return `${c.label}: excitatory with a negative weight ${w}`;
      if (c.spec.sign === "inhibitory" && w > 0) return `${c.label}: inhibitory with a positive weight ${w}`;
      if (c.spec.bounds === "soft" && Math.abs(w) > 1) return `${c.label}: soft-bounded with |w| = ${Math.abs(w)} > 1`;
    }
    if (c.feedback.kind === "separate") for (const w of c.feedback.weights) if (!Number.isFinite(w)) return `${c.label}: a non-finite feedback weight`;
  }
  return null;
}

// ---------------------------------------------------------------- 1. network declarations

const networkKind: FuzzKind<{ base: number; m: Parameters<typeof applyMutations>[1] }> = {
  name: "network",
  about: "network declarations with hostile values (sizes, init parameters overflowing the dtype, explicit weights against sign/bound constraints, reserved keys, deep nesting)",
  cases: fc.record({ base: fc.integer({ min: 0, max: 1 }), m: jsonMutations }),
  run: ({ base, m }) => {
    const { value, mustRefuse } = applyMutations(smallNetwork(base === 0 ? "float64" : "float32"), m);
    return classify(
      () => buildNetwork(value as never),
      (net) => (mustRefuse ? "a reserved key was accepted" : networkProblem(net)),
    );
  },
};

// ---------------------------------------------------------------- 2. model files (bit flips)

let modelTexts: { text: string; net: Network }[] | null = null;
function models(): { text: string; net: Network }[] {
  modelTexts ??= ["float64", "float32"].map((d) => {
    const text = modelToJson(buildNetwork(smallNetwork(d as "float32" | "float64") as never));
    // the reference is the file read back undamaged (a model file stores no explicit weights in its declaration)
    return { text, net: modelFromData(text) };
  });
  return modelTexts;
}

function sameParameters(a: Network, b: Network): string | null {
  if (JSON.stringify(a.spec) !== JSON.stringify(b.spec)) return "a different declaration";
  for (let i = 0; i < a.connections.length; i++) {
    const x = a.connections[i]!;
    const y = b.connections[i]!;
    if (!Buffer.from(x.weights.buffer, x.weights.byteOffset, x.weights.byteLength).equals(Buffer.from(y.weights.buffer, y.weights.byteOffset, y.weights.byteLength))) return `different weights in ${x.label}`;
    if (x.feedback.kind === "separate" && y.feedback.kind === "separate" && x.feedback.weights.some((v, k) => !Object.is(v, (y.feedback as { weights: Float64Array }).weights[k]))) return `different feedback weights in ${x.label}`;
  }
  for (let i = 0; i < a.layers.length; i++) if (a.layers[i]!.bias.some((v, k) => !Object.is(v, b.layers[i]!.bias[k]))) return `different biases in ${a.layers[i]!.name}`;
  return null;
}

const modelFileKind: FuzzKind<{ base: number; flips: { at: number; bit: number }[] }> = {
  name: "model-file",
  about: "saved model files with 1-3 flipped bits",
  cases: fc.record({ base: fc.integer({ min: 0, max: 1 }), flips: bitFlips }),
  run: ({ base, flips }) => {
    const m = models()[base]!;
    const text = flipBits(m.text, flips);
    return classify(
      () => modelFromData(text),
      (net) => sameParameters(net, m.net),
    );
  },
};

// ---------------------------------------------------------------- 3/4. checkpoints

interface CheckpointBase {
  readonly text: string;
  readonly results: string;
  readonly data: Record<string, unknown>;
  readonly rule: RuleConfigInput;
  readonly persistent: boolean;
}

const checkpointRules: { rule: RuleConfigInput; persistent: boolean }[] = [
  { rule: { rule: "generec", rate: 0.3 }, persistent: false },
  { rule: { rule: "eqprop", beta: 0.2, rate: 0.3, mode: "random-sign" }, persistent: true },
];
let checkpointBases: CheckpointBase[] | null = null;
const trainData = () => xorDataset();

async function checkpoints(): Promise<CheckpointBase[]> {
  if (checkpointBases !== null) return checkpointBases;
  const out: CheckpointBase[] = [];
  for (const { rule, persistent } of checkpointRules) {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-fuzz-ckpt-"));
    const { files, lock } = await claimRunFolder(dir, "new");
    const config = { network: xorNetwork, rule, training: { epochs: 4, batchSize: 2, persistentStates: persistent, earlyStopping: { split: "train", patience: 50 } }, data: { source: "xor" }, seed: 1 };
    const trainer = new Trainer(buildNetwork(xorNetwork as never), rule, trainData(), config.training as never, { seed: 1 });
    await driveRun({ trainer, files, config, seed: 1, checkpointEvery: 2 });
    await lock.release();
    const text = readFileSync(files.checkpoint, "utf8");
    out.push({ text, results: readFileSync(files.results, "utf8"), data: JSON.parse(text) as Record<string, unknown>, rule, persistent });
  }
  checkpointBases = out;
  return out;
}

/** Loads a checkpoint and restores a trainer from it, then trains one epoch (a damaged state must never hang or diverge silently). */
function restore(base: CheckpointBase, data: unknown, results: string) {
  const loaded = checkpointFromData(data, "checkpoint.json", {}, results);
  const training = { epochs: 6, batchSize: 2, persistentStates: base.persistent, earlyStopping: { split: "train" as const, patience: 50 } };
  const trainer = new Trainer(loaded.net, base.rule, trainData(), training, { seed: 1 });
  trainer.loadState(loaded.state);
  const record = trainer.runEpoch();
  trainer.stopAfter(record);
  return { loaded, trainer, record };
}

const checkpointBytesKind: FuzzKind<{ base: number; inResults: boolean; flips: { at: number; bit: number }[] }> = {
  name: "checkpoint-bytes",
  about: "checkpoints (and the results lines they refer to) with 1-3 flipped bits",
  cases: fc.record({ base: fc.integer({ min: 0, max: 1 }), inResults: fc.boolean(), flips: bitFlips }),
  run: async ({ base, inResults, flips }) => {
    const b = (await checkpoints())[base]!;
    const text = inResults ? b.text : flipBits(b.text, flips);
    const results = inResults ? flipBits(b.results, flips) : b.results;
    const original = restore(b, b.data, b.results);
    return classify(
      () => {
        let data: unknown;
        try {
          data = JSON.parse(text);
        } catch {
          throw new EbbflowError({ code: "parse_error", path: "checkpoint.json", expected: "JSON", received: "not JSON" });
        }
        return restore(b, data, results);
      },
      (r) => {
        if (JSON.stringify(r.loaded.state) !== JSON.stringify(original.loaded.state)) return "a damaged checkpoint loaded as a different trainer state";
        return sameParameters(r.loaded.net, original.loaded.net) ?? (JSON.stringify(r.record.train) !== JSON.stringify(original.record.train) ? "a different next epoch" : null);
      },
    );
  },
};

/** Independent check of a trainer state's invariants (restated, not the schema under test). */
function stateProblem(s: Record<string, unknown>, persistent: boolean, layers: readonly { size: number; role: string }[], examples: number): string | null {
  const int = (v: unknown, min: number) => typeof v === "number" && Number.isInteger(v) && v >= min && v <= Number.MAX_SAFE_INTEGER;
  const fin = (v: unknown) => typeof v === "number" && Number.isFinite(v);
  if (!int(s.epoch, 0)) return `epoch ${String(s.epoch)}`;
  const h = s.history as unknown[];
  if (!Array.isArray(h) || h.length !== s.epoch) return "history length differs from epoch";
  for (let i = 0; i < h.length; i++) {
    const r = h[i] as Record<string, unknown>;
    if (r?.kind !== "epoch" || r.epoch !== i + 1 || !fin(r.seconds) || (r.seconds as number) < 0 || !fin(r.rate) || (r.rate as number) < 0) return `history[${i}] invalid`;
  }
  if (!(s.best === null || fin(s.best))) return "best not finite";
  if (!int(s.sinceBest, 0)) return "sinceBest";
  const streamProblem = (st: unknown, where: string): string | null => {
    const x = st as { name?: unknown; spare?: unknown; prng?: { i?: unknown; j?: unknown; S?: unknown } } | null;
    if (x === null || typeof x !== "object" || typeof x.name !== "string") return `${where}.name`;
    if (!(x.spare === null || fin(x.spare))) return `${where}.spare`;
    const p = x.prng;
    const byte = (v: unknown) => int(v, 0) && (v as number) <= 255;
    if (p === null || typeof p !== "object" || !byte(p.i) || !byte(p.j) || !Array.isArray(p.S) || p.S.length !== 256) return `${where}.prng`;
    const sorted = [...(p.S as number[])].sort((a, c) => a - c);
    if (!sorted.every((v, k) => v === k)) return `${where}.prng.S is not a permutation`;
    return null;
  };
  const sp = streamProblem(s.shuffle, "shuffle");
  if (sp !== null) return sp;
  const rule = s.rule as Record<string, unknown> | null;
  if (rule === null || typeof rule !== "object" || Array.isArray(rule)) return "rule state not an object";
  if (rule.signs !== undefined) {
    const rp = streamProblem(rule.signs, "rule.signs");
    if (rp !== null) return rp;
  }
  if (persistent && s.persistent !== null) {
    const p = s.persistent as unknown[];
    if (!Array.isArray(p) || p.length !== layers.length) return "persistent: wrong number of layers";
    for (let i = 0; i < layers.length; i++) {
      const want = layers[i]!.role === "input" ? null : examples * layers[i]!.size;
      const got = p[i] as unknown[] | null;
      if (want === null ? got !== null : !Array.isArray(got) || got.length !== want || !got.every(fin)) return `persistent[${i}] invalid`;
    }
  }
  return null;
}

const checkpointFieldsKind: FuzzKind<{ base: number; m: Parameters<typeof applyMutations>[1] }> = {
  name: "checkpoint-fields",
  about: "checkpoints with hostile values in the trainer state (epoch, random-stream entries, history, best, persistent states), the rule's stream state and the top level, checksum recomputed so the schema must catch them",
  cases: fc.record({ base: fc.integer({ min: 0, max: 1 }), m: jsonMutations }),
  run: async ({ base, m }) => {
    const b = (await checkpoints())[base]!;
    const { contentChecksum } = await import("../../src/config/modelFile.js");
    const target = { trainer: b.data.trainer, stopped: b.data.stopped, started: b.data.started, history: b.data.history };
    const { value } = applyMutations(target, m);
    const v = (value ?? {}) as Record<string, unknown>;
    const data = copy(b.data);
    if (value !== null && typeof value === "object" && !Array.isArray(value)) for (const k of Object.keys(target)) (data as Record<string, unknown>)[k] = v[k];
    else data.trainer = value;
    // what a file can hold (JSON has no NaN or undefined), with a checksum that matches (when one can be computed)
    const asFile = fromJsonText(toJsonText(data)) as Record<string, unknown>;
    try {
      asFile.checksum = contentChecksum(asFile);
    } catch {
      asFile.checksum = "0".repeat(64);
    }
    const mustRefuse = holdsReservedKey(asFile);
    return classify(
      () => restore(b, asFile, b.results),
      (r) => {
        if (mustRefuse) return "a reserved key was accepted";
        const why = stateProblem(r.loaded.state as unknown as Record<string, unknown>, b.persistent, r.loaded.net.layers, trainData().size);
        if (why !== null) return `an invalid state was accepted: ${why}`;
        return r.record.train !== undefined && Number.isFinite(r.record.train.sse) ? null : "the next epoch gave no finite error";
      },
    );
  },
  timeoutMs: 15_000,
};

// ---------------------------------------------------------------- 5. rule configs

const ruleBases: RuleConfigInput[] = [
  { rule: "chl", rate: 0.1 },
  { rule: "generec", rate: 0.1, variant: "symmetric" },
  { rule: "xie-seung", rate: 0.1, gamma: 0.5 },
  { rule: "eqprop", rate: 0.1, beta: 0.1, mode: "symmetric", freeSteps: 20, nudgedSteps: 4 },
  { rule: "calcium", rate: 0.1, freeSteps: 10, clampedSteps: 5 },
  { rule: "bcm", rate: 0.1, thresholdTau: 5 },
  { rule: "backprop", rate: 0.1, rates: { "in->hid": 0.5 } },
  { rule: "feedback-alignment", rate: 0.1 },
  { rule: "direct-feedback-alignment", rate: 0.1, scale: 1 },
  { rule: "predictive-coding", rate: 0.1, maxSteps: 50 },
];

let xorNet: Network | null = null;
const batch = { inputs: { in: new Float64Array([0, 0, 0, 1, 1, 0, 1, 1]) }, targets: { out: new Float64Array([0, 1, 1, 0]) } };

const ruleKind: FuzzKind<{ base: number; m: Parameters<typeof applyMutations>[1] }> = {
  name: "rule-config",
  about: "rule configs of all ten rules with hostile values, then one training step",
  cases: fc.record({ base: fc.nat({ max: ruleBases.length - 1 }), m: jsonMutations }),
  run: ({ base, m }) => {
    const { value, mustRefuse } = applyMutations(ruleBases[base], m);
    xorNet ??= buildNetwork({ ...xorNetwork, connections: xorNetwork.connections.map((c) => ({ ...c, feedback: { kind: "separate" as const, learned: true } })) } as never);
    const net = xorNet.clone();
    return classify(
      () => {
        const rule = createRule(net, value as RuleConfigInput);
        rule.step(batch);
        return rule;
      },
      (rule) => (mustRefuse ? "a reserved key was accepted" : !(rule.config.rate > 0 && Number.isFinite(rule.config.rate)) ? `rate ${rule.config.rate} accepted` : networkProblem(net)),
    );
  },
};

// ---------------------------------------------------------------- 6. training options

const trainingBase = { epochs: 2, batchSize: 2, shuffle: true, schedule: { kind: "constant" }, earlyStopping: { metric: "sse", split: "train", patience: 3, minDelta: 0 }, stopWhen: { metric: "accuracy", split: "train", atLeast: 1 }, persistentStates: false, readout: "auto", evaluateTrain: true };

const trainingKind: FuzzKind<Parameters<typeof applyMutations>[1]> = {
  name: "training-options",
  about: "training options with hostile values (epochs, batch size, schedules, early stopping), then one epoch",
  cases: jsonMutations,
  run: (m) => {
    const { value, mustRefuse } = applyMutations(trainingBase, m);
    return classify(
      () => {
        const options = parseTraining(value);
        const t = new Trainer(buildNetwork(xorNetwork as never), { rule: "generec", rate: 0.2 }, trainData(), value as never, { seed: 1 });
        t.runEpoch();
        return options;
      },
      (o) => (mustRefuse ? "a reserved key was accepted" : !Number.isInteger(o.epochs) || o.epochs < 1 ? `epochs ${o.epochs}` : !Number.isInteger(o.batchSize) || o.batchSize < 1 ? `batchSize ${o.batchSize}` : null),
    );
  },
};

// ---------------------------------------------------------------- 7. experiments

const experimentBase = { name: "fuzz", network: xorNetwork, rules: [{ rule: "generec", rate: 0.2 }], training: { epochs: 3, batchSize: 2 }, data: { source: "xor", testFraction: 0, scale: false, targetColumns: [2], oneHot: false } };

const experimentKind: FuzzKind<Parameters<typeof applyMutations>[1]> = {
  name: "experiment",
  about: "experiment files with hostile values anywhere (network, rules, training, data options)",
  cases: jsonMutations,
  run: (m) => {
    const { value, mustRefuse } = applyMutations(experimentBase, m);
    return classify(
      () => parseExperiment(value),
      (e) => (mustRefuse ? "a reserved key was accepted" : e.data !== undefined && !(e.data.testFraction >= 0 && e.data.testFraction <= 0.9) ? `testFraction ${e.data.testFraction}` : null),
    );
  },
};

// ---------------------------------------------------------------- 8. sweep files

const sweepBase = {
  name: "fuzz",
  base: experimentBase,
  grid: { "rule.rate": [0.1, 0.2], "network.layers[1].size": [2, 3] },
  draws: { count: 2, seed: 7, over: { "training.batchSize": { kind: "choice", values: [1, 2] }, "network.dynamics.dt": { kind: "uniform", low: 0.2, high: 0.6 } } },
  seeds: [1, 2],
  checkpointEvery: 5,
};

const sweepKind: FuzzKind<{ m: Parameters<typeof applyMutations>[1]; special: number; size: number }> = {
  name: "sweep-file",
  about: "sweep files with hostile values, deeply nested grid values, 2e5 invalid entries, huge draw counts, reserved keys and path segments",
  cases: fc.record({ m: jsonMutations, special: fc.nat({ max: 19 }), size: fc.integer({ min: 65, max: 200_000 }) }),
  run: ({ m, special, size }) => {
    const { value, mustRefuse } = applyMutations(sweepBase, m);
    const s = copy(sweepBase) as Record<string, unknown> & typeof sweepBase;
    let input: unknown = value;
    let refuse = mustRefuse;
    // a few fixed shapes of trouble, each at a drawn size
    if (special === 0) (s.grid as Record<string, unknown[]>)["rule.rate"] = [nested(size)];
    else if (special === 1) (s as Record<string, unknown>).seeds = new Array(size).fill(null);
    else if (special === 2) (s.grid as Record<string, unknown[]>)["rule.rate"] = new Array(size).fill(-1).map((v, i) => v * (i + 1));
    else if (special === 3) s.draws.count = size * 10_000;
    else if (special === 4) (s.grid as Record<string, unknown[]>)[["rule.__proto__", "constructor", "rule.prototype.x"][size % 3]!] = [1];
    if (special <= 4) {
      input = s;
      refuse = true;
    }
    return classify(
      () => expandSweep(parseSweepFile(input), (input as { base?: unknown })?.base),
      (plan) => {
        if (refuse) return `accepted a sweep that must be refused (case shape ${special})`;
        if (holdsReservedKey(input)) return "a reserved key was accepted";
        if (new Set(plan.runs.map((r) => r.id)).size !== plan.runs.length) return "repeated run ids";
        return plan.runs.every((r) => /^[0-9a-f]{16}$/.test(r.id)) ? null : "a run id that is not 16 hexadecimal digits";
      },
    );
  },
  timeoutMs: 30_000,
};

// ---------------------------------------------------------------- 9. sweep folders (runs.json, submissions.json)

let planBase: SweepPlan | null = null;
let sweepDir: string | null = null;

const sweepFolderKind: FuzzKind<{ which: number; m: Parameters<typeof applyMutations>[1]; flips: { at: number; bit: number }[]; bytes: boolean }> = {
  name: "sweep-folder",
  about: "runs.json and slurm/submissions.json of a sweep folder, with hostile values or flipped bits",
  cases: fc.record({ which: fc.integer({ min: 0, max: 1 }), m: jsonMutations, flips: bitFlips, bytes: fc.boolean() }),
  run: async ({ which, m, flips, bytes }) => {
    planBase ??= expandSweep(sweepBase, experimentBase);
    sweepDir ??= mkdtempSync(path.join(tmpdir(), "ebbflow-fuzz-sweep-"));
    mkdirSync(path.join(sweepDir, "slurm"), { recursive: true });
    const submissions = { format: "ebbflow-sweep-submissions", submissions: [{ job: "1234", indices: [0, 1, 2], array: "0-2%2", submitted: "2025-01-01T00:00:00.000Z" }] };
    const base = which === 0 ? planBase : submissions;
    const { value, mustRefuse } = applyMutations(base, m);
    const text = bytes ? flipBits(JSON.stringify(base, null, 1), flips) : toJsonText(value);
    writeFileSync(path.join(sweepDir, which === 0 ? "runs.json" : "slurm/submissions.json"), text);
    if (which === 1) writeFileSync(path.join(sweepDir, "runs.json"), JSON.stringify(planBase));
    return classify(
      (): Promise<unknown> => (which === 0 ? readSweepPlan(sweepDir!) : readSubmissions(sweepDir!)),
      (r) => {
        if (!bytes && mustRefuse) return "a reserved key was accepted";
        if (which === 0) {
          const plan = r as SweepPlan;
          return plan.runs.every((x, i) => x.index === i && /^[0-9a-f]{16}$/.test(x.id)) ? null : "a plan with bad run ids or indices";
        }
        const subs = r as { job: unknown; indices: unknown }[];
        if (!Array.isArray(subs) || !subs.every((x) => typeof x.job === "string" && Array.isArray(x.indices))) return "bad submissions accepted";
        return null;
      },
    );
  },
};

// ---------------------------------------------------------------- 10. data files

const jsonDataBase = { name: "fuzz", inputs: [[0, 0], [0, 1], [1, 0], [1, 1]], labels: [0, 1, 1, 0], classNames: ["even", "odd"], inputNames: ["a", "b"] };
const csvBase = "a,b,label\n0,0,even\n0,1,odd\n1,0,odd\n1,1,even\n";

const dataKind: FuzzKind<{ json: boolean; m: Parameters<typeof applyMutations>[1]; edit: Parameters<typeof editText>[1]; label: number }> = {
  name: "data-file",
  about: "JSON and CSV data sets with hostile values (labels up to 2^31 and beyond, ragged rows, non-numbers), edited text",
  cases: fc.record({ json: fc.boolean(), m: jsonMutations, edit: textEdits, label: fc.oneof(fc.constantFrom(2147483647, 2 ** 31, 1e9, 1e15, -1, 0.5), fc.nat()) }),
  run: ({ json, m, edit, label }) => {
    // (very long arrays are checked at their first and last million values)
    const finite = (a: Float64Array) => a.length <= 2e6 ? a.every(Number.isFinite) : a.subarray(0, 1e6).every(Number.isFinite) && a.subarray(a.length - 1e6).every(Number.isFinite);
    const check = (ds: { size: number; inputSize: number; targetSize: number; inputs: Float64Array; targets: Float64Array }) =>
      ds.inputs.length !== ds.size * ds.inputSize || ds.targets.length !== ds.size * ds.targetSize ? "sizes disagree" : !finite(ds.inputs) || !finite(ds.targets) ? "non-finite values accepted" : null;
    if (json) {
      const { value, mustRefuse } = applyMutations({ ...jsonDataBase, labels: [0, 1, label % 7 === 0 ? label : 1, 0], classNames: label % 7 === 0 ? undefined : jsonDataBase.classNames }, m);
      const text = toJsonText(value);
      return classify(
        () => parseJsonDataset(text, "data.json"),
        (ds) => (mustRefuse ? "a reserved key was accepted" : check(ds)),
      );
    }
    return classify(
      () => parseCsvDataset(editText(csvBase, edit), { source: "data.csv", targetColumns: ["label"], oneHot: true }),
      check,
    );
  },
};

// ---------------------------------------------------------------- 11. results files and summaries

const resultsBase = [
  JSON.stringify({ kind: "header", ebbflow: "0.1.0", seed: 1, config: { rule: { rule: "generec" } }, started: "2025-01-31T12:00:00.000Z" }),
  JSON.stringify({ kind: "epoch", epoch: 1, seconds: 0.1, rate: 0.2, train: { sse: 0.5, accuracy: 0.5 } }),
  JSON.stringify({ kind: "epoch", epoch: 2, seconds: 0.1, rate: 0.2, train: { sse: 0.4, accuracy: 0.75 } }),
  JSON.stringify({ kind: "end", epochs: 2, stopped: "max-epochs", seconds: 0.3 }),
].join("\n") + "\n";

const resultsKind: FuzzKind<{ edit: Parameters<typeof editText>[1]; flips: { at: number; bit: number }[]; useFlips: boolean; metric: string }> = {
  name: "results-file",
  about: "results files cut, torn, edited or bit-flipped; sweep summaries with metric names such as constructor or __proto__",
  cases: fc.record({ edit: textEdits, flips: bitFlips, useFlips: fc.boolean(), metric: fc.oneof(fc.constantFrom("constructor", "__proto__", "toString", "valueOf", "hasOwnProperty", "sse", "accuracy", "", "prototype"), fc.string({ maxLength: 6 })) }),
  run: async ({ edit, flips, useFlips, metric }) => {
    const text = useFlips ? flipBits(resultsBase, flips) : editText(resultsBase, edit);
    const r1 = await classify(
      () => readResults(text, "results.jsonl"),
      (r) => (r.epochs.some((e, i) => i > 0 && e.epoch <= r.epochs[i - 1]!.epoch) ? "epochs not increasing" : r.epochs.some((e) => !Number.isFinite(e.rate) || e.rate < 0) ? "a bad rate accepted" : null),
    );
    if (r1.kind === "untyped" || r1.kind === "wrong") return r1;
    planBase ??= expandSweep(sweepBase, experimentBase);
    const finals = new Map(planBase.runs.slice(0, 4).map((r) => [r.id, { epochs: 2, train: { sse: 0.4, accuracy: 0.75 } }]));
    return classify(
      () => summarizeRuns(planBase!, finals as never, { metric, split: "train" }),
      (s) => (metric !== "sse" && metric !== "accuracy" ? `metric ${JSON.stringify(metric)} that no run reports was accepted` : s.configurations.some((c) => c.value !== null && !Number.isFinite(c.value.mean)) ? "a non-finite summary" : null),
    );
  },
};

// ---------------------------------------------------------------- 12. settling and rule inputs

const settleKind: FuzzKind<{ which: number; m: Parameters<typeof applyMutations>[1] }> = {
  name: "settle-inputs",
  about: "settle() options and rule.step() batches with hostile values (null, wrong lengths, NaN, strings, missing layers)",
  cases: fc.record({ which: fc.nat({ max: 3 }), m: jsonMutations }),
  run: ({ which, m }) => {
    xorNet ??= buildNetwork({ ...xorNetwork, connections: xorNetwork.connections.map((c) => ({ ...c, feedback: { kind: "separate" as const, learned: true } })) } as never);
    const net = xorNet.clone();
    const plain = { phase: "clamped", inputs: { in: [0, 1, 1, 0] }, targets: { out: [1, 0] }, maxSteps: 30 };
    const { value } = applyMutations(which === 0 ? plain : { inputs: { in: [0, 1, 1, 0] }, targets: { out: [1, 0] } }, m);
    const toTyped = (v: unknown): unknown => {
      // arrays of layer values as the API takes them (typed arrays), other values as they are
      if (v === null || typeof v !== "object") return v;
      const o = v as Record<string, unknown>;
      for (const side of ["inputs", "targets"]) {
        const layerValues = o[side] as Record<string, unknown> | undefined;
        if (layerValues !== null && typeof layerValues === "object") {
          for (const k of Object.keys(layerValues)) {
            const a = layerValues[k];
            if (Array.isArray(a) && which % 2 === 1 && a.every((x) => typeof x === "number")) layerValues[k] = Float64Array.from(a as number[]);
          }
        }
      }
      return v;
    };
    const input = toTyped(value);
    return classify(
      () => {
        if (which <= 1) {
          const s = new Settler(net, 2);
          const snap = s.settle(input as never);
          return snap.activity.every((a) => a.every(Number.isFinite)) ? null : "non-finite activity";
        }
        const rule = createRule(net, which === 2 ? { rule: "generec", rate: 0.2 } : { rule: "backprop", rate: 0.2 });
        rule.step(input as never);
        return networkProblem(net);
      },
      (why) => why,
    );
  },
};

// ---------------------------------------------------------------- 13. command-line values

/** Independent reading of a decimal integer: an optional sign, then digits only, within the safe range. */
function decimalInteger(text: string): number | null {
  let i = 0;
  if (text[0] === "+" || text[0] === "-") i = 1;
  if (i === text.length) return null;
  for (let k = i; k < text.length; k++) if (text.charCodeAt(k) < 48 || text.charCodeAt(k) > 57) return null;
  const big = BigInt(text);
  return big >= BigInt(Number.MIN_SAFE_INTEGER) && big <= BigInt(Number.MAX_SAFE_INTEGER) ? Number(big) : null;
}

const numberText = fc.oneof(
  fc.constantFrom("0x3", "0b1", "0o7", "1_000", "", " ", " 3", "3 ", "3abc", "Infinity", "-Infinity", "NaN", "1e3", "-0.5", ".5", "5.", "+2", "-0", "1e400", "9007199254740993", "0.9", "0.91", "1", "\u0663", "١٢"),
  fc.integer().map(String),
  fc.double({ noNaN: true }).map(String),
  fc.string({ maxLength: 6 }),
);

const cliNumbersKind: FuzzKind<{ text: string; option: number }> = {
  name: "cli-numbers",
  about: "command-line number values (--epochs, --batch-size, --checkpoint-every, --test-fraction, --rate, --level) through the strict parsers",
  cases: fc.record({ text: numberText, option: fc.nat({ max: 2 }) }),
  run: async ({ text, option }) => {
    const { intOption, numberOption } = await import("../../src/cli/numbers.js");
    const parse = [intOption("--epochs", 1), numberOption("--test-fraction", { min: 0, max: 0.9 }), numberOption("--level", { min: 0, max: 1, openMin: true, openMax: true })][option]!;
    try {
      const n = parse(text);
      if (option === 0) {
        const want = decimalInteger(text);
        return want === n && n >= 1 ? accepted : wrong(`${JSON.stringify(text)} read as ${n}`);
      }
      const want = strictNumber(text);
      const independent = /^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$/.test(text) ? Number(text) : null;
      if (independent === null || want !== n) return wrong(`${JSON.stringify(text)} read as ${n}`);
      return (option === 1 ? n >= 0 && n <= 0.9 : n > 0 && n < 1) ? accepted : wrong(`${n} out of range accepted`);
    } catch (e) {
      return (e as Error).name === "CommanderError" || (e as { code?: string }).code === "commander.invalidArgument" ? refused : { kind: "untyped", detail: String(e) };
    }
  },
};

/** Runs the real `ebbflow` command in this process (a fresh instance of its main module per case). */
export async function runCommand(mainUrl: string, args: readonly string[], n: number): Promise<{ code: number; out: string; err: string }> {
  const argv = process.argv;
  const exit = process.exit;
  const out = process.stdout.write;
  const err = process.stderr.write;
  let o = "";
  let e = "";
  let code: number | undefined;
  const savedCode = process.exitCode;
  process.exitCode = undefined;
  process.argv = [argv[0]!, "ebbflow", ...args];
  process.exit = ((c?: number) => {
    code = c ?? 0;
    throw new Error(`__exit__${code}`);
  }) as typeof process.exit;
  process.stdout.write = ((s: string | Uint8Array) => ((o += String(s)), true)) as typeof process.stdout.write;
  process.stderr.write = ((s: string | Uint8Array) => ((e += String(s)), true)) as typeof process.stderr.write;
  try {
    await import(`${mainUrl}?case=${n}`);
  } catch (x) {
    if (!String((x as Error)?.message).startsWith("__exit__")) e += `\n[uncaught] ${(x as Error)?.stack ?? String(x)}`;
  } finally {
    process.argv = argv;
    process.exit = exit;
    process.stdout.write = out;
    process.stderr.write = err;
  }
  const result = { code: code ?? (typeof process.exitCode === "number" ? process.exitCode : 0), out: o, err: e };
  process.exitCode = savedCode;
  return result;
}

let cliDir: string | null = null;
let cliCase = 0;

/** `ebbflow train` in this process with drawn option values and output folders. */
export function cliKind(mainUrl: string): FuzzKind<{ epochs: string; fraction: string; batch: string; every: string; out: number; json: boolean; name: string }> {
  return {
    name: "cli-train",
    about: "the real `ebbflow train` command (in-process) with drawn --epochs, --test-fraction, --batch-size, --checkpoint-every values and --out on a file, under /proc, with very long names, nested, existing and new; with and without --json",
    cases: fc.record({
      // a valid epoch count is kept small (a valid request for a billion epochs is not bad input, only slow)
      epochs: fc.oneof(numberText, fc.constantFrom("1", "2", "3")).map((t) => (decimalInteger(t) !== null && decimalInteger(t)! > 3 ? String((decimalInteger(t)! % 3) + 1) : t)),
      fraction: fc.oneof(numberText, fc.constantFrom("0", "0.25")),
      batch: fc.oneof(numberText, fc.constantFrom("2", "4")),
      every: fc.oneof(numberText, fc.constantFrom("1", "5")),
      out: fc.nat({ max: 7 }),
      json: fc.boolean(),
      name: fc.string({ minLength: 1, maxLength: 300 }),
    }),
    run: async (c) => {
      if (cliDir === null) {
        cliDir = mkdtempSync(path.join(tmpdir(), "ebbflow-fuzz-cli-"));
        writeFileSync(path.join(cliDir, "xor.json"), JSON.stringify({ network: xorNetwork, rules: [{ rule: "generec", rate: 0.5 }], training: { epochs: 2, batchSize: 2 }, data: { source: "xor" } }));
        writeFileSync(path.join(cliDir, "a-file"), "x");
      }
      const n = ++cliCase;
      const outs = [path.join(cliDir, `run-${process.pid}-${n}`), path.join(cliDir, "a-file"), path.join(cliDir, "a-file", "below"), `/proc/ebbflow-fuzz-${process.pid}-${n}`, path.join(cliDir, "x".repeat(300)), path.join(cliDir, `n${process.pid}-${n}`, "deep", "er"), path.join(cliDir, c.name.replace(/\0/g, "")), path.join(cliDir, "shared")];
      const out = outs[c.out]!;
      const args = ["train", path.join(cliDir, "xor.json"), "--epochs", c.epochs, "--test-fraction", c.fraction, "--batch-size", c.batch, "--checkpoint-every", c.every, "--out", out, ...(c.json ? ["--json"] : [])];
      const r = await runCommand(mainUrl, args, n);
      if (r.err.includes("[uncaught]") || /\n\s+at /.test(r.err)) return { kind: "untyped", detail: r.err.slice(0, 300) };
      if (r.code !== 0) {
        if (c.json) {
          try {
            const j = JSON.parse(r.err.trim().split("\n").pop() ?? "") as { error?: { code?: string } };
            if (j.error?.code === "error" || j.error?.code === undefined) return { kind: "untyped", detail: r.err.slice(0, 300) };
          } catch {
            return { kind: "untyped", detail: `--json error not JSON: ${r.err.slice(0, 200)}` };
          }
        } else if (!r.err.startsWith("ebbflow: ") && !r.err.startsWith("error: ")) return { kind: "untyped", detail: r.err.slice(0, 300) };
        return refused;
      }
      const epochs = decimalInteger(c.epochs);
      const fraction = /^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$/.test(c.fraction) ? Number(c.fraction) : NaN;
      if (epochs === null || epochs < 1) return wrong(`--epochs ${JSON.stringify(c.epochs)} accepted`);
      if (!(fraction >= 0 && fraction <= 0.9)) return wrong(`--test-fraction ${JSON.stringify(c.fraction)} accepted`);
      if (decimalInteger(c.batch) === null || decimalInteger(c.every) === null) return wrong("a malformed integer accepted");
      try {
        const results = readResults(readFileSync(path.join(out, "results.jsonl"), "utf8"), "results.jsonl");
        if (results.epochs.length !== epochs || results.end?.epochs !== epochs) return wrong(`asked for ${epochs} epochs, results hold ${results.epochs.length}`);
      } catch (e) {
        return wrong(`a successful run left unreadable results: ${(e as Error).message.slice(0, 100)}`);
      }
      return accepted;
    },
    timeoutMs: 20_000,
  };
}

/** Every kind that runs without the command's compiled main module. */
export const kinds: readonly FuzzKind[] = [networkKind, modelFileKind, checkpointBytesKind, checkpointFieldsKind, ruleKind, trainingKind, experimentKind, sweepKind, sweepFolderKind, dataKind, resultsKind, settleKind, cliNumbersKind] as FuzzKind[];
