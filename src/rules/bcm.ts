/**
 * The BCM rule on the free phase.
 * @module
 */
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { bcmPhi } from "../curves/index.js";
import { vectorTrace, type VectorTrace } from "../traces/index.js";
import { ParameterDelta } from "./delta.js";
import { SettlingRule, batchSizeOf, connectionRate, type Batch, type RuleState } from "./base.js";
import { commonRuleFields, defineRule } from "./descriptor.js";
import { layerArraysSchema, layerArraysState } from "./state.js";

const bcmSchema = z
  .object({
    rule: z.literal("bcm"),
    thresholdTau: z.number({ error: "a time constant > 0 (batches)" }).refine((v) => Number.isFinite(v) && v > 0, { error: "a time constant > 0 (batches)" }).default(10),
    ...commonRuleFields,
  })
  .strict();

type Cfg = z.output<typeof bcmSchema>;

/**
 * BCM: `ΔW_ij = ε φ(y_i, θ_i) x_j`, `φ(y, θ) = y (y − θ)`, with the sliding threshold θ_i a slow
 * average of y_i² (time constant `thresholdTau` in batches; Bienenstock, Cooper & Munro 1982,
 * J. Neurosci. 2:32; θ = E[y²] as in Intrator & Cooper 1992, Neural Networks 5:3). Unsupervised:
 * targets are not used. Biases are not changed.
 * @category Rules
 */
export class BcmRule extends SettlingRule {
  readonly phases = ["free"] as const;
  /** The sliding thresholds: per layer, a trace of the batch mean of y² (time constant `thresholdTau` in batches). */
  readonly thresholdTraces: VectorTrace[];
  private started = false;
  private phi = new Map<number, FloatArray[]>();
  private readonly squares: Float64Array[];
  private readonly cfg: Cfg;

  constructor(net: Network, config: Cfg) {
    super(net, config);
    this.cfg = config;
    this.thresholdTraces = net.layers.map((l) => vectorTrace({ tau: config.thresholdTau, n: l.size, dtype: net.dtype }));
    this.squares = net.layers.map((l) => new Float64Array(l.size));
  }

  /** Sliding threshold per layer and unit (live views of {@link BcmRule.thresholdTraces}). */
  get thresholds(): FloatArray[] {
    return this.thresholdTraces.map((t) => t.value);
  }

  override saveState(): RuleState {
    return { started: this.started, thresholds: this.thresholdTraces.map((t) => Array.from(t.value)) };
  }

  override loadState(state: RuleState): void {
    const s = layerArraysState(this.net, state, "thresholds", "sliding thresholds");
    s.values.forEach((t, i) => (this.thresholdTraces[i] as VectorTrace).value.set(t));
    this.started = s.started;
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const net = this.net;
    const B = batchSizeOf(net, batch);
    const { settler, snaps } = this.workspace(B, 1);
    const free = settler.settle({ phase: "free", inputs: batch.inputs, start: this.startFor(B) }, snaps[0]);
    this.lastFree = free;
    for (const l of net.layers) {
      const y = free.activity[l.index] as FloatArray;
      const sq = this.squares[l.index] as Float64Array;
      for (let j = 0; j < l.size; j++) {
        let s = 0;
        for (let p = 0; p < B; p++) s += (y[p * l.size + j] as number) ** 2;
        sq[j] = s / B;
      }
      // θ ← θ + a (E_batch[y²] − θ); the first batch sets θ to its own E[y²]
      const trace = this.thresholdTraces[l.index] as VectorTrace;
      if (this.started) trace.update(sq);
      else trace.value.set(sq);
    }
    this.started = true;
    let phi = this.phi.get(B);
    if (phi === undefined) {
      phi = net.layers.map((l) => net.allocate(B * l.size));
      this.phi.set(B, phi);
    }
    out.clear();
    for (const c of net.connections) {
      if (c.spec.frozen) continue;
      const post = net.layers[c.to]!;
      const n = post.size;
      const m = net.layers[c.from]!.size;
      const y = free.activity[c.to] as FloatArray;
      const x = free.activity[c.from] as FloatArray;
      const th = (this.thresholdTraces[c.to] as VectorTrace).value;
      const f = phi[c.to] as FloatArray;
      for (let p = 0; p < B; p++) for (let i = 0; i < n; i++) f[p * n + i] = bcmPhi(y[p * n + i] as number, th[i] as number);
      const w = out.weights[c.index] as FloatArray;
      const alpha = connectionRate(this.cfg, c) / B;
      for (let p = 0; p < B; p++)
        for (let i = 0; i < n; i++) {
          const fi = alpha * (f[p * n + i] as number);
          for (let j = 0; j < m; j++) w[i * m + j] = (w[i * m + j] as number) + fi * (x[p * m + j] as number);
        }
    }
    return out;
  }
}

/** The BCM rule. @category Rules */
export const bcmRule = defineRule({
  name: "bcm",
  summary: "BCM, ε φ(y, θ) x with φ = y(y − θ) and θ a running average of y² (Bienenstock, Cooper & Munro 1982)",
  schema: bcmSchema,
  phases: () => ["free"],
  label: (c) => c.rule,
  readout: "settle",
  // the sliding thresholds change from batch to batch
  split: () => "none",
  state: layerArraysSchema("thresholds"),
  create: (net, c) => new BcmRule(net, c),
});
