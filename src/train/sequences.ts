/**
 * Sequence mode of the Trainer: batches of sequences of equal length run in lockstep, pattern by
 * pattern; the free-phase state of every layer, the stateful units (adaptation, synaptic resources) and
 * the rule's traces carry over from one pattern to the next, and reset between sequences (or never).
 * The position within an epoch is part of the trainer's state, so training resumes mid-sequence.
 * @module
 */
import { z } from "zod";
import { fail, formatPath, issueText, type Issue } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { keptSnapshot, Settler, Snapshot } from "../network/settle.js";
import type { LearningRule } from "../rules/base.js";
import type { RandomStream } from "../random/index.js";
import type { Recorder } from "../record/recorder.js";
import type { Batch } from "../rules/base.js";
import { isSequenceDataset, type SequenceDataset } from "./data/sequences.js";
import type { Dataset } from "./data/dataset.js";
import { accumulateMetrics, type MetricSums } from "./metrics.js";

/** When carried state is put back at rest: at the start of every sequence, or never. @category Training */
export type SequenceReset = "sequence" | "never";

/** Schema of `training.sequences`. @category Training */
export const sequenceOptionsSchema = z
  .object({
    // "sequence": state, unit states and traces start at rest with every sequence; "never": they run on
    reset: z.enum(["sequence", "never"], { error: "one of sequence, never" }).default("sequence"),
  })
  .strict();

const finiteArray = z.array(z.number({ error: "a finite number" }).refine(Number.isFinite, { error: "a finite number" }));
const index = z.number({ error: "an integer >= 0" }).int({ error: "an integer >= 0" }).min(0, { error: "an integer >= 0" });

/** Schema of the sequence progress saved in a trainer state (ranges and lengths are checked by `sequenceProgressIssues`). @category Training */
export const sequenceProgressSchema = z
  .object({
    plan: z.array(z.array(index)).nullable(),
    batch: index,
    position: index,
    carried: z
      .object({ batch: index, state: z.array(finiteArray), adaptation: z.array(finiteArray), resources: z.array(finiteArray) })
      .strict()
      .nullable(),
  })
  .strict();

/** Where an epoch of sequence training stands, as plain data (part of a checkpoint). @category Training */
export interface SequenceProgress {
  /** The epoch's batches of sequence indices (null before the epoch's first pattern step). */
  plan: number[][] | null;
  /** The batch under way. */
  batch: number;
  /** The pattern position within that batch's sequences. */
  position: number;
  /** The carried free state (batch size, per layer: state, adaptation, resources), or null at a sequence start. */
  carried: { batch: number; state: number[][]; adaptation: number[][]; resources: number[][] } | null;
}

/** Rules that keep per-pattern traces and can carry them across the patterns of a sequence. @category Training */
export interface CarriesTraces {
  /** When true, the rule's traces run on into the next step instead of starting at that step's first state. */
  carryTraces: boolean;
  /** Starts the traces afresh at the next step (a new sequence). */
  resetTraces(): void;
}

/** Does the rule keep traces that can carry over? @category Training */
export function carriesTraces(rule: LearningRule): rule is LearningRule & CarriesTraces {
  return typeof (rule as Partial<CarriesTraces>).resetTraces === "function" && typeof (rule as Partial<CarriesTraces>).carryTraces === "boolean";
}

/** Sequence lengths of a sequence data set. */
function lengthsOf(ds: SequenceDataset): Int32Array {
  const s = ds.sequenceStarts;
  const out = new Int32Array(s.length - 1);
  for (let k = 0; k < out.length; k++) out[k] = (s[k + 1] as number) - (s[k] as number);
  return out;
}

/**
 * Groups sequences into batches of at most `size` sequences of equal length: in `order`, stably grouped
 * by length (shorter first), each group cut into consecutive batches.
 */
export function sequenceBatches(lengths: Int32Array, order: ArrayLike<number>, size: number): Int32Array[] {
  const byLength = new Map<number, number[]>();
  for (let k = 0; k < order.length; k++) {
    const s = order[k] as number;
    const len = lengths[s] as number;
    let g = byLength.get(len);
    if (g === undefined) byLength.set(len, (g = []));
    g.push(s);
  }
  const out: Int32Array[] = [];
  for (const len of [...byLength.keys()].sort((a, b) => a - b)) {
    const g = byLength.get(len) as number[];
    for (let i = 0; i < g.length; i += size) out.push(Int32Array.from(g.slice(i, i + size)));
  }
  return out;
}

/**
 * Every problem of saved sequence progress against the data set and network it must fit.
 * @category Training
 */
export function sequenceProgressIssues(p: unknown, net: Network, ds: SequenceDataset, batchSize: number, prefix: string): Issue[] {
  const r = sequenceProgressSchema.safeParse(p);
  const at = (...path: PropertyKey[]) => formatPath([prefix, ...path]);
  if (!r.success) return r.error.issues.map((i) => issueText("parse_error", at(...i.path), i.message, "another value"));
  const v = r.data;
  const lengths = lengthsOf(ds);
  const S = lengths.length;
  const out: Issue[] = [];
  if (v.plan !== null) {
    const seen = new Set<number>();
    v.plan.forEach((b, k) => {
      if (b.length === 0 || b.length > batchSize) out.push(issueText("parse_error", at("plan", k), `1 to ${batchSize} sequences`, `${b.length}`));
      b.forEach((s, j) => {
        if (s >= S) out.push(issueText("parse_error", at("plan", k, j), `a sequence index below ${S}`, String(s)));
        else if (lengths[s] !== lengths[b[0] as number]) out.push(issueText("parse_error", at("plan", k, j), "a sequence as long as the batch's first", `length ${lengths[s]}`));
        if (seen.has(s)) out.push(issueText("parse_error", at("plan", k, j), "a sequence not planned before in this epoch", String(s)));
        seen.add(s);
      });
    });
    if (out.length === 0) {
      if (seen.size !== S) out.push(issueText("parse_error", at("plan"), `every one of the ${S} sequences once`, `${seen.size} sequences`));
      else if (v.batch >= v.plan.length) out.push(issueText("parse_error", at("batch"), `a batch index below ${v.plan.length}`, String(v.batch)));
      else if (v.position >= (lengths[v.plan[v.batch]![0] as number] as number)) out.push(issueText("parse_error", at("position"), `a position below the sequence length ${lengths[v.plan[v.batch]![0] as number]}`, String(v.position)));
    }
  } else if (v.batch !== 0 || v.position !== 0) out.push(issueText("parse_error", at("batch"), "0 and position 0 between epochs (no plan)", `${v.batch}, ${v.position}`));
  const c = v.carried;
  if (c !== null) {
    if (c.batch < 1 || c.batch > batchSize) out.push(issueText("parse_error", at("carried", "batch"), `1 to ${batchSize}`, String(c.batch)));
    const check = (arrays: number[][], sizes: number[], key: string) => {
      if (arrays.length !== sizes.length) out.push(issueText("parse_error", at("carried", key), `${sizes.length} arrays`, `${arrays.length}`));
      else arrays.forEach((a, i) => {
        if (a.length !== sizes[i]) out.push(issueText("parse_error", at("carried", key, i), `${sizes[i]} values`, `${a.length} values`));
      });
    };
    check(c.state, net.layers.map((l) => (l.role === "input" ? 0 : c.batch * l.size)), "state");
    check(c.adaptation, net.layers.map((l) => (l.spec.adaptation !== undefined ? c.batch * l.size : 0)), "adaptation");
    check(c.resources, net.connections.map((x) => (x.spec.depression !== undefined ? c.batch * net.layers[x.from]!.size : 0)), "resources");
  }
  return out;
}

/**
 * Runs sequences through a rule (training) or a settler (evaluation), carrying state across patterns.
 * Used by the Trainer in sequence mode (`training.sequences`).
 * @category Training
 */
export class SequenceRunner {
  readonly net: Network;
  readonly reset: SequenceReset;
  readonly batchSize: number;
  private readonly lengths: Int32Array;
  private plan: Int32Array[] | null = null;
  private batchIndex = 0;
  private position = 0;
  /** The carried free state per batch size, and whether it holds a state to carry. */
  private readonly carried = new Map<number, Snapshot>();
  /** Evaluation's snapshot per batch size, reused from call to call (the WebAssembly arena is never given back). */
  private readonly evaluated = new Map<number, Snapshot>();
  private carriedBatch = 0;
  private readonly inBuf: Float64Array;
  private readonly tBuf: Float64Array;

  constructor(net: Network, readonly train: SequenceDataset, reset: SequenceReset, batchSize: number, private readonly inputName: string, private readonly outputName: string) {
    this.net = net;
    this.reset = reset;
    this.lengths = lengthsOf(train);
    const S = this.lengths.length;
    this.batchSize = Math.min(batchSize, S);
    if (reset === "never") {
      // state runs on from one batch to the next row by row: every batch must have the same rows and length
      const len = this.lengths[0] as number;
      if (this.lengths.some((l) => l !== len)) fail("invalid_config", "training.sequences.reset", '"sequence" (reset "never" needs sequences of one length)', "never");
      if (S % this.batchSize !== 0) fail("invalid_config", "training.sequences.reset", `"sequence", or a batch size dividing the ${S} sequences (reset "never" keeps every batch the same size)`, "never");
    }
    this.inBuf = new Float64Array(this.batchSize * train.inputSize);
    this.tBuf = new Float64Array(this.batchSize * train.targetSize);
  }

  /** Is an epoch under way (some of its batches done)? */
  get midEpoch(): boolean {
    return this.plan !== null;
  }

  private snapshotFor(B: number): Snapshot {
    return keptSnapshot(this.carried, this.net, B);
  }

  /** Copies pattern `position` of the sequences `seqs` into the flat buffers. */
  private gather(ds: SequenceDataset, seqs: Int32Array, position: number, inBuf: Float64Array, tBuf: Float64Array): Batch {
    const B = seqs.length;
    for (let p = 0; p < B; p++) {
      const e = (ds.sequenceStarts[seqs[p] as number] as number) + position;
      inBuf.set(ds.inputs.subarray(e * ds.inputSize, (e + 1) * ds.inputSize), p * ds.inputSize);
      tBuf.set(ds.targets.subarray(e * ds.targetSize, (e + 1) * ds.targetSize), p * ds.targetSize);
    }
    return { inputs: { [this.inputName]: inBuf.subarray(0, B * ds.inputSize) }, targets: { [this.outputName]: tBuf.subarray(0, B * ds.targetSize) } };
  }

  /**
   * Trains on one pattern position of the current batch of sequences with `apply` (the rule's step),
   * starting the free phase from the carried state; draws the epoch's order from `shuffle` (null: file
   * order) when an epoch begins. Returns true when the epoch's last pattern is done.
   */
  step(rule: LearningRule, shuffle: RandomStream | null, apply: (batch: Batch) => void): boolean {
    if (this.plan === null) {
      const S = this.lengths.length;
      const order = shuffle !== null ? shuffle.permutation(S) : Int32Array.from({ length: S }, (_, i) => i);
      this.plan = sequenceBatches(this.lengths, order, this.batchSize);
      this.batchIndex = 0;
      this.position = 0;
    }
    const seqs = this.plan[this.batchIndex] as Int32Array;
    const B = seqs.length;
    const batch = this.gather(this.train, seqs, this.position, this.inBuf, this.tBuf);
    const carry = this.carriedBatch === B && (this.position > 0 || this.reset === "never");
    if (!carry && carriesTraces(rule)) rule.resetTraces();
    rule.freeStart = carry ? this.snapshotFor(B) : null;
    apply(batch);
    rule.freeStart = null;
    const free = rule.lastFree;
    if (free !== null && free.batch === B) {
      this.snapshotFor(B).copyFrom(free);
      this.carriedBatch = B;
    } else this.carriedBatch = 0;
    this.position++;
    if (this.position === (this.lengths[seqs[0] as number] as number)) {
      this.position = 0;
      this.batchIndex++;
      if (this.reset === "sequence") this.carriedBatch = 0;
      if (this.batchIndex === this.plan.length) {
        this.plan = null;
        this.batchIndex = 0;
        return true;
      }
    }
    return false;
  }

  /** The epoch's progress and the carried state, as plain data. */
  save(): SequenceProgress {
    const B = this.carriedBatch;
    const snap = B > 0 ? this.snapshotFor(B) : null;
    return {
      plan: this.plan === null ? null : this.plan.map((b) => Array.from(b)),
      batch: this.batchIndex,
      position: this.position,
      carried:
        snap === null
          ? null
          : {
              batch: B,
              state: this.net.layers.map((l) => (l.role === "input" ? [] : Array.from(snap.state[l.index] as FloatArray))),
              adaptation: snap.adaptation.map((a) => Array.from(a)),
              resources: snap.resources.map((r) => Array.from(r)),
            },
    };
  }

  /** Restores progress saved by {@link SequenceRunner.save} (checked first with `sequenceProgressIssues`). */
  load(p: SequenceProgress): void {
    this.plan = p.plan === null ? null : p.plan.map((b) => Int32Array.from(b));
    this.batchIndex = p.batch;
    this.position = p.position;
    this.carriedBatch = 0;
    const c = p.carried;
    if (c !== null) {
      const snap = this.snapshotFor(c.batch);
      this.net.layers.forEach((l) => {
        if (l.role === "input") return;
        (snap.state[l.index] as FloatArray).set(c.state[l.index] as number[]);
        if (snap.state !== snap.activity) l.unit.fill(snap.activity[l.index] as FloatArray, snap.state[l.index] as FloatArray);
      });
      c.adaptation.forEach((a, i) => (snap.adaptation[i] as FloatArray).set(a));
      c.resources.forEach((r, i) => (snap.resources[i] as FloatArray).set(r));
      this.carriedBatch = c.batch;
    }
  }

  /**
   * Evaluates free phases over a sequence data set, carrying state across each sequence's patterns
   * (and across sequences too with reset "never", one sequence at a time in file order). With a
   * recorder (batch 1), sequences run one at a time and every pattern is recorded, labelled with its
   * sequence and position. Used by {@link Trainer.evaluate}; not part of the documented API.
   * @hidden
   */
  evaluate(ds: SequenceDataset, settlerFor: (B: number) => Settler, outputIndex: number, sums: MetricSums, recorder?: Recorder): void {
    const lengths = lengthsOf(ds);
    const S = lengths.length;
    const order = Int32Array.from({ length: S }, (_, i) => i);
    const one = this.reset === "never" || recorder !== undefined;
    if (recorder !== undefined && recorder.batch !== 1) fail("invalid_parameter", "recorder.batch", "1 (sequences are evaluated one at a time when recorded)", recorder.batch);
    const batches = one ? Array.from(order, (s) => Int32Array.of(s)) : sequenceBatches(lengths, order, 64);
    const maxB = one ? 1 : Math.min(64, S);
    const inBuf = new Float64Array(maxB * ds.inputSize);
    const tBuf = new Float64Array(maxB * ds.targetSize);
    const k = ds.targetSize;
    let carried: Snapshot | null = null;
    for (const seqs of batches) {
      const B = seqs.length;
      const settler = settlerFor(B);
      // one snapshot per batch size: a sequence starts from rest or, with reset "never", from the last state,
      // which is this snapshot's (start === out, as within a sequence)
      const snap = keptSnapshot(this.evaluated, this.net, B);
      for (let t = 0; t < (lengths[seqs[0] as number] as number); t++) {
        const batch = this.gather(ds, seqs, t, inBuf, tBuf);
        const start = t > 0 ? snap : this.reset === "never" && carried !== null ? carried : undefined;
        settler.settle({ phase: "free", inputs: batch.inputs, start, ...(recorder !== undefined ? { onStep: recorder.onStep } : {}) }, snap);
        recorder?.endPattern({ sequence: seqs[0] as number, position: t, phase: "free" });
        accumulateMetrics(sums, snap.activity[outputIndex] as FloatArray, tBuf.subarray(0, B * k), B, k);
      }
      carried = snap;
    }
  }
}

/** Is `ds` a sequence data set? (Re-exported for the trainer.) */
export function requireSequences(ds: Dataset, path: string): SequenceDataset {
  if (!isSequenceDataset(ds)) fail("invalid_config", path, "a data set of sequences (sequenceStarts; see createSequenceDataset) for training.sequences", "a data set of independent examples");
  return ds;
}
