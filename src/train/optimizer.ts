/**
 * Optimizers applied to any rule's change: momentum, Adam, weight decay (L2 and decoupled), and learning
 * rates per layer for biases. The rule takes its step as usual; the optimizer reads the change it made,
 * puts the parameters back and applies its own step instead, so it works the same for every rule
 * (including rules that do work after their update, and rules shared out over worker threads: the
 * optimizer runs on the main thread on the reduced change).
 * @module
 */
import { z } from "zod";
import { EbbflowError, fail, issueText, type Issue } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { ParameterDelta, applyDelta } from "../rules/delta.js";
import { connectionRate } from "../rules/base.js";
import type { RuleConfigBase } from "../rules/descriptor.js";

const fraction = (what: string) => z.number({ error: what }).refine((v) => v >= 0 && v < 1, { error: what });
const positive = (what: string) => z.number({ error: what }).refine((v) => Number.isFinite(v) && v > 0, { error: what });

/** Schema of `training.optimizer`. @category Training */
export const optimizerSchema = z
  .object({
    kind: z.enum(["sgd", "momentum", "adam"], { error: "one of sgd, momentum, adam" }).default("sgd"),
    /** Momentum coefficient μ (kind momentum). */
    momentum: fraction("a momentum in [0, 1)").default(0.9),
    /** Adam's decay rates of the first and second moments and its ϵ. */
    beta1: fraction("a decay rate in [0, 1)").default(0.9),
    beta2: fraction("a decay rate in [0, 1)").default(0.999),
    epsilon: positive("a number > 0").default(1e-8),
    /** Weight decay λ (0: none), as an L2 term added to the change, or decoupled from it. */
    weightDecay: z.number({ error: "a number >= 0" }).min(0, { error: "a number >= 0" }).default(0),
    decay: z.enum(["l2", "decoupled"], { error: "one of l2, decoupled" }).default("l2"),
    /** Learning rates of biases by layer name, replacing the rule's rate for that layer's biases. */
    biasRates: z.record(z.string(), positive("a learning rate > 0")).optional(),
  })
  .strict();

/** Optimizer settings as written. @category Training */
export type OptimizerInput = z.input<typeof optimizerSchema>;
/** Optimizer settings with defaults filled in. @category Training */
export type OptimizerConfig = z.output<typeof optimizerSchema>;

/** An optimizer's saved state: the step count and one array per parameter array and moment. @category Training */
export interface OptimizerState {
  readonly steps: number;
  readonly moments: number[][];
}

/** One parameter array the optimizer steps, with the rule's rate for it. */
interface Slot {
  readonly param: FloatArray;
  readonly delta: FloatArray;
  readonly before: Float64Array;
  /** The rule's rate for this array (its change is divided by it to get the direction per unit rate). */
  readonly ruleRate: number;
  /** The rate of the optimizer's step for this array. */
  readonly rate: number;
  /** The optimizer's step is the rule's own (plain SGD at the rule's rate, no decay): the array is left as the rule changed it. */
  readonly asRule: boolean;
  readonly first: Float64Array | null;
  readonly second: Float64Array | null;
}

/**
 * The optimizer of a Trainer: call {@link Optimizer.before} before the rule's step and
 * {@link Optimizer.after} after it. With d the rule's change divided by its learning rate ε (per
 * connection; per layer for biases, `biasRates` replacing ε there) and w the parameter:
 * - `l2` decay: d ← d − λw;
 * - `sgd`: step ε d; `momentum`: v ← μv + d, step ε v (Polyak 1964, USSR Comput. Math. Math. Phys. 4:1;
 *   the form of Sutskever et al. 2013, ICML); `adam`: m ← β₁m + (1−β₁)d, s ← β₂s + (1−β₂)d²,
 *   step ε m̂ / (√ŝ + ϵ) with m̂ = m/(1−β₁ᵗ), ŝ = s/(1−β₂ᵗ) (Kingma & Ba 2015, ICLR);
 * - `decoupled` decay: the step also takes −ελw (Loshchilov & Hutter 2019, ICLR);
 * the step is applied under the connections' constraints (applyDelta). Frozen connections are left alone.
 * An array whose step is the rule's own (`sgd` without weight decay, at the rule's rate: every weight
 * matrix when only `biasRates` are set) is left exactly as the rule changed it, without a copy.
 * @category Training
 */
export class Optimizer {
  readonly config: OptimizerConfig;
  private readonly net: Network;
  private readonly slots: Slot[];
  private readonly delta: ParameterDelta;
  private steps = 0;

  /** `rule`: the rule whose change it steps (a `LearningRule`, or a `ParallelRule` sharing it out over workers). */
  constructor(net: Network, rule: { readonly config: RuleConfigBase }, config: OptimizerConfig, prefix = "training.optimizer") {
    this.net = net;
    this.config = config;
    const problems: Issue[] = [];
    for (const name of Object.keys(config.biasRates ?? {})) {
      const l = net.layers.find((x) => x.name === name);
      if (l === undefined || l.role === "input") problems.push(issueText("unknown_name", `${prefix}.biasRates.${name}`, `a hidden or output layer name (${net.layers.filter((x) => x.role !== "input").map((x) => x.name).join(", ")})`, JSON.stringify(name)));
    }
    if (problems.length > 0) throw new EbbflowError(problems);
    this.delta = new ParameterDelta(net);
    const moments = config.kind === "sgd" ? 0 : config.kind === "momentum" ? 1 : 2;
    const plain = config.kind === "sgd" && config.weightDecay === 0;
    const slot = (param: FloatArray, delta: FloatArray, ruleRate: number, rate: number): Slot => ({
      param,
      delta,
      // an array the optimizer leaves to the rule needs no copy (SGD with only bias rates set copies only the biases)
      before: new Float64Array(plain && rate === ruleRate ? 0 : param.length),
      ruleRate,
      rate,
      asRule: plain && rate === ruleRate,
      first: moments >= 1 ? new Float64Array(param.length) : null,
      second: moments >= 2 ? new Float64Array(param.length) : null,
    });
    this.slots = [];
    // arrays left to the rule get an empty change array, which applyDelta skips
    const none = net.allocate(0);
    for (const c of net.connections) {
      if (c.spec.frozen) continue;
      const r = connectionRate(rule.config, c);
      if (plain) this.delta.weights[c.index] = none;
      this.slots.push(slot(c.weights, this.delta.weights[c.index] as FloatArray, r, r));
      const fb = this.delta.feedback[c.index];
      if (fb && c.feedback.kind === "separate") this.slots.push(slot(c.feedback.weights, fb, r, r));
    }
    for (const l of net.layers) {
      if (l.role === "input") continue;
      const rate = config.biasRates?.[l.name] ?? rule.config.rate;
      if (plain && rate === rule.config.rate) this.delta.biases[l.index] = none;
      this.slots.push(slot(l.bias, this.delta.biases[l.index] as FloatArray, rule.config.rate, rate));
    }
  }

  /** Keeps the parameters before the rule's step. */
  before(): void {
    for (const s of this.slots) if (!s.asRule) s.before.set(s.param);
  }

  /**
   * Reads the rule's change (parameters now minus before), puts the parameters back, and applies the
   * optimizer's step instead; `factor` is the learning-rate schedule's factor of this epoch.
   */
  after(factor: number): void {
    const o = this.config;
    this.steps++;
    this.delta.clear();
    const c1 = 1 - o.beta1 ** this.steps;
    const c2 = 1 - o.beta2 ** this.steps;
    for (const s of this.slots) {
      const { param, before, delta, first, second } = s;
      // plain SGD at the rule's own rate: the rule's step stands (delta stays 0)
      if (s.asRule) continue;
      const eps = s.rate * factor;
      const per = 1 / (s.ruleRate * factor);
      for (let k = 0; k < param.length; k++) {
        const w = before[k] as number;
        let d = ((param[k] as number) - w) * per;
        param[k] = w;
        if (o.weightDecay > 0 && o.decay === "l2") d -= o.weightDecay * w;
        let step: number;
        if (o.kind === "sgd") step = eps * d;
        else if (o.kind === "momentum") {
          const v = o.momentum * (first![k] as number) + d;
          first![k] = v;
          step = eps * v;
        } else {
          const m = o.beta1 * (first![k] as number) + (1 - o.beta1) * d;
          const v = o.beta2 * (second![k] as number) + (1 - o.beta2) * d * d;
          first![k] = m;
          second![k] = v;
          step = (eps * (m / c1)) / (Math.sqrt(v / c2) + o.epsilon);
        }
        if (o.weightDecay > 0 && o.decay === "decoupled") step -= eps * o.weightDecay * w;
        delta[k] = step;
      }
    }
    // the rule's change was already projected onto the patterns (a shared parameter's positions hold its summed change): keep it tied
    applyDelta(this.net, this.delta, "mean");
  }

  /** The step count and moments, as plain numbers (bit-exact through JSON). */
  saveState(): OptimizerState {
    const moments: number[][] = [];
    for (const s of this.slots) {
      if (s.first) moments.push(Array.from(s.first));
      if (s.second) moments.push(Array.from(s.second));
    }
    return { steps: this.steps, moments };
  }

  /** Restores a state saved by {@link Optimizer.saveState} for the same network and settings. */
  loadState(state: OptimizerState, prefix = "trainer.optimizer"): void {
    if (state === null || typeof state !== "object" || !Number.isInteger(state.steps) || state.steps < 0) fail("invalid_config", `${prefix}.steps`, "an integer >= 0", (state as { steps?: unknown } | null)?.steps);
    const arrays = this.slots.flatMap((s) => [s.first, s.second].filter((a): a is Float64Array => a !== null));
    if (!Array.isArray(state.moments) || state.moments.length !== arrays.length) fail("invalid_config", `${prefix}.moments`, `${arrays.length} arrays (this optimizer's moments)`, Array.isArray(state.moments) ? `${state.moments.length} arrays` : state.moments);
    arrays.forEach((a, i) => {
      const m = state.moments[i];
      if (!Array.isArray(m) || m.length !== a.length || !m.every((v) => typeof v === "number" && Number.isFinite(v))) fail("invalid_config", `${prefix}.moments[${i}]`, `${a.length} finite numbers`, Array.isArray(m) ? `${m.length} values` : m);
    });
    arrays.forEach((a, i) => a.set(state.moments[i] as number[]));
    this.steps = state.steps;
  }
}
