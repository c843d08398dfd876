/**
 * Equilibrium Propagation on energy dynamics.
 * @module
 */
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { createRandom, RandomStream, type RandomStreamState } from "../random/index.js";
import { ParameterDelta } from "./delta.js";
import { SettlingRule, batchSizeOf, connectionRate, contrast, contrastBias, type Batch, type RuleState } from "./base.js";
import type { RuleConfig } from "./config.js";
import type { Snapshot } from "../network/settle.js";

type Cfg = Extract<RuleConfig, { rule: "eqprop" }>;

/**
 * Equilibrium Propagation: `ΔW = (ε/β)(ρ(u^β)_post ρ(u^β)_preᵀ − ρ(u⁰)_post ρ(u⁰)_preᵀ)`, biases alike,
 * averaged over the batch; the nudged phase starts from the free fixed point u⁰
 * (Scellier & Bengio 2017, Front. Comput. Neurosci. 11:24). Modes: `one-sided` (bias O(β)),
 * `random-sign` (β ← ±β per batch, as in the authors' code), `symmetric` (+β and −β phases,
 * `ΔW = (ε/2β)(ρρ^{+β} − ρρ^{−β})`, bias O(β²); Laborieux et al. 2021, Front. Neurosci. 15:633674).
 * Runs on energy dynamics or on rate dynamics (whose nudged fixed point is a stationary point of the
 * continuous-Hopfield energy plus β·cost); the estimate follows the gradient when feedback is tied with gain 1.
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

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const net = this.net;
    const B = batchSizeOf(net, batch);
    const { settler, snaps } = this.workspace(B, 3);
    const free = settler.settle({ phase: "free", inputs: batch.inputs, start: this.startFor(B) }, snaps[0]);
    this.lastFree = free;
    let beta = this.cfg.beta;
    let a: Snapshot;
    let b: Snapshot;
    let scale: number;
    if (this.cfg.mode === "symmetric") {
      a = settler.settle({ phase: "nudged", beta, inputs: batch.inputs, targets: batch.targets, start: free }, snaps[1]);
      b = settler.settle({ phase: "nudged", beta: -beta, inputs: batch.inputs, targets: batch.targets, start: free }, snaps[2]);
      scale = 1 / (2 * beta);
    } else {
      if (this.cfg.mode === "random-sign") beta *= this.signs.sign();
      a = settler.settle({ phase: "nudged", beta, inputs: batch.inputs, targets: batch.targets, start: free }, snaps[1]);
      b = free;
      scale = 1 / beta;
    }
    out.clear();
    const scratch = this.diffScratch(B);
    for (const c of net.connections) {
      if (c.spec.frozen) continue;
      const n = net.layers[c.to]!.size;
      const m = net.layers[c.from]!.size;
      const clampedPre = net.layers[c.from]!.role === "input";
      contrast(net.kernels, out.weights[c.index] as FloatArray, (connectionRate(this.cfg, c) * scale) / B, a.activity[c.to] as FloatArray, a.activity[c.from] as FloatArray, b.activity[c.to] as FloatArray, b.activity[c.from] as FloatArray, B, n, m, clampedPre, scratch);
    }
    for (const l of net.layers) {
      if (l.role === "input") continue;
      contrastBias(out.biases[l.index] as FloatArray, (this.cfg.rate * scale) / B, a.activity[l.index] as FloatArray, b.activity[l.index] as FloatArray, B, l.size);
    }
    return out;
  }
}
