/**
 * Validation of a saved trainer state (the `trainer` part of a checkpoint) before it is restored: every
 * field's type and range, the shuffle stream's ARC4 state, the history's epochs (1, 2, ..., epoch), and
 * the persistent states' lengths. A damaged state is a typed error naming the field, never a run that
 * hangs, trains forever or trains differently. The rule's own state is an opaque JSON object here; the
 * rule checks it when it loads it.
 * @module
 */
import { z } from "zod";
import { EbbflowError, formatPath, issueText, type Issue } from "../errors/index.js";
import { savedDataIssues } from "../errors/saved.js";
import type { LearningRule, RuleState } from "../rules/base.js";
import { randomStateIssues } from "../random/index.js";

const finite = (what = "a finite number") => z.number({ error: what }).refine(Number.isFinite, { error: what });
const nonNegative = (what = "a finite number >= 0") => z.number({ error: what }).refine((v) => Number.isFinite(v) && v >= 0, { error: what });
const count = (min: number) => z.number({ error: `an integer >= ${min}` }).int({ error: `an integer >= ${min}` }).min(min, { error: `an integer >= ${min}` }).max(Number.MAX_SAFE_INTEGER, { error: "a safe integer" });
/** Slack on the bounds of accuracy and cosine (rounding of the averages). */
const SLACK = 1e-9;

/** Schema of one evaluation's metrics as saved (see `Metrics`). @category Training */
export const metricsSchema = z
  .object({
    sse: nonNegative(),
    loss: nonNegative(),
    binaryCrossEntropy: nonNegative(),
    softmaxCrossEntropy: nonNegative(),
    accuracy: z.number({ error: "a fraction in [0, 1]" }).refine((v) => v >= -SLACK && v <= 1 + SLACK, { error: "a fraction in [0, 1]" }),
    cosine: z.number({ error: "a number in [-1, 1]" }).refine((v) => v >= -1 - SLACK && v <= 1 + SLACK, { error: "a number in [-1, 1]" }),
    ties: count(0),
    examples: count(0),
  })
  .strict();

/** Schema of one epoch's record as saved in a checkpoint's history. @category Training */
export const epochRecordSchema = z
  .object({
    kind: z.literal("epoch", { error: '"epoch"' }),
    epoch: count(1),
    seconds: nonNegative(),
    rate: nonNegative(),
    train: metricsSchema.optional(),
    test: metricsSchema.optional(),
  })
  .strict();

/** Schema of a saved trainer state (field types and ranges; lengths are checked by {@link trainerStateIssues}). @category Training */
export const trainerStateSchema = z
  .object({
    epoch: count(0),
    shuffle: z.unknown(),
    rule: z.record(z.string(), z.unknown(), { error: "the rule's state as a JSON object" }),
    history: z.array(epochRecordSchema, { error: "an array of epoch records" }),
    best: finite().nullable(),
    sinceBest: count(0),
    persistent: z.array(z.array(finite()).nullable(), { error: "an array per layer (null for input layers)" }).nullable(),
    /** Held-out persistent states (`training.persistentTestStates`; sizes checked by the trainer). */
    persistentTest: z.array(z.array(finite()).nullable(), { error: "an array per layer (null for input layers)" }).nullable().optional(),
    /** The optimizer's step count and moments (checked against the network by `Optimizer.loadState`). */
    optimizer: z.object({ steps: count(0), moments: z.array(z.array(finite())) }).strict().nullable().optional(),
    /** Sequence mode's progress and carried state (checked against the data set by the trainer, see `sequenceProgressIssues`). */
    sequence: z.unknown().optional(),
  })
  .strict();

/** What a trainer state must fit: the network's layers, the training set's size, whether persistent states are on. @category Training */
export interface TrainerShape {
  readonly layers: readonly { readonly size: number; readonly role: string }[];
  readonly examples: number;
  readonly persistentStates: boolean;
}

/**
 * Every problem of a saved trainer state, with its path under `prefix`: the schema, the shuffle stream's
 * state, the history (one record per epoch, numbered 1 to `epoch`) and, when persistent states are on, one
 * array of examples × size values per non-input layer (null for input layers); a state saved without
 * persistent states holds null instead of the whole list.
 * @param state - The state as data.
 * @param shape - What it must fit.
 * @param prefix - Path of the state (default `trainer`).
 * @returns The problems (empty when the state can be restored).
 * @category Training
 */
export function trainerStateIssues(state: unknown, shape: TrainerShape, prefix = "trainer"): Issue[] {
  const r = trainerStateSchema.safeParse(state);
  const at = (path: readonly PropertyKey[]) => formatPath([prefix, ...path]);
  if (!r.success) return savedDataIssues(r.error.issues, state, [prefix]);
  const s = r.data;
  const out: Issue[] = [...randomStateIssues(s.shuffle, at(["shuffle"]))];
  if (s.history.length !== s.epoch) out.push(issueText("parse_error", at(["history"]), `${s.epoch} epoch records (one per completed epoch)`, `${s.history.length} records`));
  else {
    const k = s.history.findIndex((h, i) => h.epoch !== i + 1);
    if (k >= 0) out.push(issueText("parse_error", at(["history", k, "epoch"]), `${k + 1} (records numbered 1, 2, ...)`, String(s.history[k]?.epoch)));
  }
  if (s.persistent !== null && shape.persistentStates) {
    if (s.persistent.length !== shape.layers.length) out.push(issueText("parse_error", at(["persistent"]), `${shape.layers.length} entries (one per layer)`, `${s.persistent.length} entries`));
    else
      shape.layers.forEach((l, i) => {
        const p = s.persistent?.[i] ?? null;
        const want = l.role === "input" ? null : shape.examples * l.size;
        if (want === null && p !== null) out.push(issueText("parse_error", at(["persistent", i]), "null (input layers keep no state)", `array of length ${p.length}`));
        else if (want !== null && p === null) out.push(issueText("parse_error", at(["persistent", i]), `${want} values (${shape.examples} examples × ${l.size} units)`, "null"));
        else if (want !== null && p !== null && p.length !== want) out.push(issueText("parse_error", at(["persistent", i]), `${want} values (${shape.examples} examples × ${l.size} units)`, `array of length ${p.length}`));
      });
  }
  return out;
}

/**
 * Restores a rule's state through `LearningRule.loadState`, the one place where a rule refuses a state it
 * cannot take: a rule throws {@link EbbflowError} (its paths are put under `path`); any other error it
 * throws is turned into a `parse_error` at `path`, so a damaged rule state is always a typed error.
 * @param rule - The rule.
 * @param state - Its saved state.
 * @param path - Where the state sits (e.g. `trainer.rule`).
 * @throws {@link EbbflowError} `parse_error`.
 * @category Training
 */
export function loadRuleState(rule: Pick<LearningRule, "loadState" | "config">, state: RuleState, path: string): void {
  try {
    rule.loadState(state);
  } catch (e) {
    if (e instanceof EbbflowError) throw new EbbflowError(e.issues.map((i) => ({ ...i, path: i.path === "" || i.path === "state" ? path : i.path.startsWith("state.") ? `${path}${i.path.slice(5)}` : `${path}.${i.path}` })));
    throw new EbbflowError(issueText("parse_error", path, `a state of rule ${JSON.stringify(rule.config.rule)}`, (e as Error)?.message ?? String(e)));
  }
}
