/**
 * The BCM rule on the free phase.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { bcmPhi } from "../curves/index.js";
import { ParameterDelta } from "./delta.js";
import { SettlingRule, batchSizeOf, connectionRate, type Batch, type RuleState } from "./base.js";
import type { RuleConfig } from "./config.js";

type Cfg = Extract<RuleConfig, { rule: "bcm" }>;

/**
 * BCM: `ΔW_ij = ε φ(y_i, θ_i) x_j`, `φ(y, θ) = y (y − θ)`, with the sliding threshold θ_i a slow
 * average of y_i² (time constant `thresholdTau` in batches; Bienenstock, Cooper & Munro 1982,
 * J. Neurosci. 2:32; θ = E[y²] as in Intrator & Cooper 1992, Neural Networks 5:3). Unsupervised:
 * targets are not used. Biases are not changed.
 * @category Rules
 */
export class BcmRule extends SettlingRule {
  readonly phases = ["free"] as const;
  /** Sliding threshold per layer and unit. */
  readonly thresholds: FloatArray[];
  private started = false;
  private phi = new Map<number, FloatArray[]>();
  private readonly cfg: Cfg;

  constructor(net: Network, config: Cfg) {
    super(net, config);
    this.cfg = config;
    this.thresholds = net.layers.map((l) => net.allocate(l.size));
  }

  override saveState(): RuleState {
    return { started: this.started, thresholds: this.thresholds.map((t) => Array.from(t)) };
  }

  override loadState(state: RuleState): void {
    const th = state.thresholds as number[][] | undefined;
    if (th === undefined) return;
    th.forEach((t, i) => (this.thresholds[i] as FloatArray).set(t));
    this.started = state.started === true;
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const net = this.net;
    const B = batchSizeOf(net, batch);
    const { settler, snaps } = this.workspace(B, 1);
    const free = settler.settle({ phase: "free", inputs: batch.inputs, start: this.startFor(B) }, snaps[0]);
    this.lastFree = free;
    const a = this.started ? 1 - Math.exp(-1 / this.cfg.thresholdTau) : 1;
    this.started = true;
    for (const l of net.layers) {
      const y = free.activity[l.index] as FloatArray;
      const th = this.thresholds[l.index] as FloatArray;
      for (let j = 0; j < l.size; j++) {
        let s = 0;
        for (let p = 0; p < B; p++) s += (y[p * l.size + j] as number) ** 2;
        th[j] = (th[j] as number) + a * (s / B - (th[j] as number));
      }
    }
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
      const th = this.thresholds[c.to] as FloatArray;
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
