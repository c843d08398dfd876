/**
 * Equilibrium Propagation on energy dynamics.
 * @module
 */
import { z } from "zod";
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { createRandom, RandomStream, randomStreamStateSchema, type RandomStreamState } from "../random/index.js";
import { ParameterDelta, addBiases, applyDelta } from "./delta.js";
import { SettlingRule, addContrastInPlace, batchSizeOf, connectionRate, contrast, contrastBias, type Batch, type ContrastTerm, type RuleState } from "./base.js";
import { commonRuleFields, defineRule } from "./descriptor.js";
import type { ContrastForm, PhaseStep } from "./contrast-form.js";
import { phaseContrast } from "./contrastive.js";
import type { Snapshot } from "../network/settle.js";

const steps = z.number().int({ error: "an integer >= 1" }).min(1, { error: "an integer >= 1" });
const eqpropSchema = z
  .object({
    rule: z.literal("eqprop"),
    beta: z.number({ error: "a non-zero nudging strength beta" }).refine((v) => Number.isFinite(v) && v !== 0, { error: "a non-zero nudging strength beta" }),
    mode: z.enum(["one-sided", "random-sign", "symmetric"], { error: "one of one-sided, random-sign, symmetric" }).default("one-sided"),
    // settling steps of the free and nudged phases (default: the network's dynamics.maxSteps); the
    // authors settle fewer nudged than free steps, e.g. 20 and 4 (Scellier & Bengio 2017, from memory)
    freeSteps: steps.optional(),
    nudgedSteps: steps.optional(),
    ...commonRuleFields,
  })
  .strict();

type Cfg = z.output<typeof eqpropSchema>;

/** Saved state of the rule: the random stream of the nudging signs. */
const eqpropState = z.object({ signs: randomStreamStateSchema }).strict();

/**
 * Equilibrium Propagation: `ΔW = (ε/β)(ρ(u^β)_post ρ(u^β)_preᵀ − ρ(u⁰)_post ρ(u⁰)_preᵀ)`, biases alike,
 * averaged over the batch; the nudged phase starts from the free fixed point u⁰
 * (Scellier & Bengio 2017, Front. Comput. Neurosci. 11:24). Modes: `one-sided` (bias O(β)),
 * `random-sign` (β ← ±β per batch, as in the authors' code), `symmetric` (+β and −β phases,
 * `ΔW = (ε/2β)(ρρ^{+β} − ρρ^{−β})`, bias O(β²); Laborieux et al. 2021, Front. Neurosci. 15:633674).
 * Runs on energy dynamics or on rate dynamics (whose nudged fixed point is a stationary point of the
 * continuous-Hopfield energy plus β·cost); the estimate follows the gradient when feedback is tied with gain 1.
 * `freeSteps` and `nudgedSteps` cap the two phases' settling (default: the network's `dynamics.maxSteps`).
 * @category Rules
 */
export class EquilibriumPropagation extends SettlingRule {
  readonly phases: readonly string[];
  private readonly cfg: Cfg;
  private signs: RandomStream;

  constructor(net: Network, config: Cfg) {
    super(net, config);
    if (config.beta === 0) fail("invalid_parameter", "rule.beta", "a non-zero nudging strength beta", 0);
    this.cfg = config;
    this.phases = config.mode === "symmetric" ? ["free", "nudged +β", "nudged −β"] : ["free", "nudged"];
    this.signs = createRandom(net.spec.seed).child("eqprop/sign");
  }

  override saveState(): RuleState {
    return { signs: this.signs.saveState() };
  }

  override loadState(state: RuleState): void {
    if (state.signs !== undefined) this.signs = RandomStream.fromState(state.signs as RandomStreamState);
  }

  /** Settles the free and nudged phases; returns the two states to contrast and the 1/β factor. */
  private settlePhases(batch: Batch): { a: Snapshot; b: Snapshot; scale: number; B: number } {
    const B = batchSizeOf(this.net, batch);
    const { settler, snaps } = this.workspace(B, this.cfg.mode === "symmetric" ? 3 : 2);
    const free = settler.settle({ phase: "free", inputs: batch.inputs, start: this.startFor(B), maxSteps: this.cfg.freeSteps }, snaps[0]);
    this.lastFree = free;
    let beta = this.cfg.beta;
    if (this.cfg.mode === "symmetric") {
      const a = settler.settle({ phase: "nudged", beta, reuseDrive: true, maxSteps: this.cfg.nudgedSteps, inputs: batch.inputs, targets: batch.targets, start: free }, snaps[1]);
      const b = settler.settle({ phase: "nudged", beta: -beta, reuseDrive: true, maxSteps: this.cfg.nudgedSteps, inputs: batch.inputs, targets: batch.targets, start: free }, snaps[2]);
      return { a, b, scale: 1 / (2 * beta), B };
    }
    if (this.cfg.mode === "random-sign") beta *= this.signs.sign();
    const a = settler.settle({ phase: "nudged", beta, reuseDrive: true, maxSteps: this.cfg.nudgedSteps, inputs: batch.inputs, targets: batch.targets, start: free }, snaps[1]);
    return { a, b: free, scale: 1 / beta, B };
  }

  /** The weight changes as contrast terms (frozen connections left out). */
  private terms(ph: { a: Snapshot; b: Snapshot; scale: number; B: number }, factor: number): ContrastTerm[] {
    const net = this.net;
    return net.connections
      .filter((c) => !c.spec.frozen)
      .map((c) => ({
        connection: c,
        alpha: (factor * connectionRate(this.cfg, c) * ph.scale) / ph.B,
        postA: ph.a.activity[c.to] as FloatArray,
        preA: ph.a.activity[c.from] as FloatArray,
        postB: ph.b.activity[c.to] as FloatArray,
        preB: ph.b.activity[c.from] as FloatArray,
        samePre: net.layers[c.from]!.role === "input",
      }));
  }

  private fill(ph: { a: Snapshot; b: Snapshot; scale: number; B: number }, out: ParameterDelta): ParameterDelta {
    const net = this.net;
    out.clear();
    for (const t of this.terms(ph, 1)) {
      const c = t.connection;
      contrast(net.kernels, out.weights[c.index] as FloatArray, t.alpha, t.postA, t.preA, t.postB, t.preB, ph.B, net.layers[c.to]!.size, net.layers[c.from]!.size, t.samePre, this.phaseScratch(ph.B, c.to));
    }
    for (const l of net.layers) {
      if (l.role === "input") continue;
      contrastBias(out.biases[l.index] as FloatArray, (this.cfg.rate * ph.scale) / ph.B, ph.a.activity[l.index] as FloatArray, ph.b.activity[l.index] as FloatArray, ph.B, l.size);
    }
    return out;
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    return this.fill(this.settlePhases(batch), out);
  }

  /** Settles the phases and adds the change straight into the weights when that is provably safe. */
  override step(batch: Batch, scale = 1): void {
    const ph = this.settlePhases(batch);
    const biases = this.biasChanges(ph, scale);
    if (biases !== null && addContrastInPlace(this.net, this.terms(ph, scale), ph.B, (layer) => this.phaseScratch(ph.B, layer))) {
      addBiases(this.net, biases);
      return;
    }
    const d = this.fill(ph, (this.fallback ??= new ParameterDelta(this.net)));
    if (scale !== 1) d.scale(scale);
    applyDelta(this.net, d);
  }

  private fallback: ParameterDelta | null = null;
  private biasBuffers: FloatArray[] | null = null;

  /** Bias changes into small reusable arrays; null if any is not finite (the checked path then reports it). */
  private biasChanges(ph: { a: Snapshot; b: Snapshot; scale: number; B: number }, factor: number): FloatArray[] | null {
    const net = this.net;
    this.biasBuffers ??= net.layers.map((l) => net.allocate(l.role === "input" ? 0 : l.size));
    for (const l of net.layers) {
      if (l.role === "input") continue;
      const d = this.biasBuffers[l.index] as FloatArray;
      contrastBias(d, (factor * this.cfg.rate * ph.scale) / ph.B, ph.a.activity[l.index] as FloatArray, ph.b.activity[l.index] as FloatArray, ph.B, l.size);
      for (let j = 0; j < d.length; j++) if (!Number.isFinite((l.bias[j] as number) + (d[j] as number))) return null;
    }
    return this.biasBuffers;
  }
}

/** The phases Equilibrium Propagation settles, with the settling options it passes (shared with the row split). */
function eqpropPhases(c: Cfg): PhaseStep[] {
  const free: PhaseStep = { phase: "free", maxSteps: c.freeSteps };
  const nudged = (b: number): PhaseStep => ({ phase: "nudged", beta: b, maxSteps: c.nudgedSteps, reuseDrive: true });
  return c.mode === "symmetric" ? [free, nudged(c.beta), nudged(-c.beta)] : [free, nudged(c.beta)];
}

/** Equilibrium Propagation. @category Rules */
export const eqpropRule = defineRule({
  name: "eqprop",
  summary: "Equilibrium Propagation, (ε/β)(ρρᵀ nudged − ρρᵀ free), one-sided, random-sign or symmetric (Scellier & Bengio 2017; Laborieux et al. 2021)",
  schema: eqpropSchema,
  phases: (c) => (c.mode === "symmetric" ? ["free", "nudged +β", "nudged −β"] : ["free", "nudged"]),
  label: (c) => `${c.rule} (${c.mode})`,
  readout: "settle",
  // random-sign draws the sign of β from a stream that advances every batch
  split: (c) => (c.mode === "random-sign" ? "none" : "rows"),
  contrast: (c): ContrastForm | null => {
    if (c.mode === "random-sign") return null;
    const symmetric = c.mode === "symmetric";
    // symmetric: (ε/2β)(ρρ^{+β} − ρρ^{−β}) from phases 1 and 2; one-sided: (ε/β)(ρρ^{β} − ρρ^{0}) from phases 1 and 0
    const subtract = symmetric ? 2 : 0;
    return { phases: eqpropPhases(c), products: phaseContrast(1, subtract), scale: symmetric ? 1 / (2 * c.beta) : 1 / c.beta, bias: { add: 1, subtract } };
  },
  state: eqpropState,
  create: (net, c) => new EquilibriumPropagation(net, c),
});
