/**
 * Predictive coding (Whittington & Bogacz 2017) on the layered structure of a network.
 * @module
 */
import { z } from "zod";
import { fail, EbbflowError, issueText } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import type { Snapshot } from "../network/settle.js";
import { ParameterDelta } from "./delta.js";
import { batchSizeOf, checkedLayerValues, checkRates, computeAndApply, connectionRate, type Batch, type LearningRule, type RuleState } from "./base.js";
import { createForwardPass, forwardOrder, runForward, type ForwardPass } from "./feedforward.js";
import { commonRuleFields, defineRule } from "./descriptor.js";
import type { BatchInput } from "../interop/ndarray.js";

const positive = (what: string) => z.number({ error: what }).refine((v) => Number.isFinite(v) && v > 0, { error: what });
const predictiveSchema = z
  .object({
    rule: z.literal("predictive-coding"),
    outputVariance: positive("an output variance > 0").default(1),
    dt: positive("an inference step > 0").default(0.1),
    maxSteps: z.number().int().min(1, { error: "an integer >= 1" }).default(2000),
    tolerance: positive("a tolerance > 0").default(1e-10),
    ...commonRuleFields,
  })
  .strict();

type Cfg = z.output<typeof predictiveSchema>;

/**
 * Predictive coding: value nodes v_l hold each non-input layer's net input, predictions
 * `μ_l = Σ W f(v_pre) + b_l` (the unit function on the presynaptic value; inputs enter as they are),
 * errors `ε_l = (v_l − μ_l)/Σ_l` (Σ = 1 for hidden layers, `outputVariance` for outputs, whose
 * values are clamped to the targets). Inference `dv_l/dt = −ε_l + f'(v_l) ⊙ Σ Wᵀ ε_post` starts at
 * the feedforward pass and runs to equilibrium; then `ΔW = ε · Σ_out · ε_post f(v_pre)ᵀ`
 * (Whittington & Bogacz 2017, Neural Computation 29:1229). The factor Σ_out expresses the rate in
 * backprop units, so as Σ_out grows the change tends to backprop's with error O(1/Σ_out).
 * Needs linear output units (the output is the prediction itself). An output whose targets are not
 * observed for a pattern (a target row of NaN) is a hidden node in that pattern (variance 1, settled
 * with the hidden nodes); when no layer receives from it, that node sits at its prediction (ε = 0), the
 * equilibrium of its own equation, so it neither drives the hidden nodes nor changes its weights.
 * @category Rules
 */
export class PredictiveCoding implements LearningRule {
  readonly phases = ["inference"] as const;
  readonly config: Cfg;
  readonly net: Network;
  readonly lastFree: Snapshot | null = null;
  freeStart: Snapshot | null = null;

  saveState(): RuleState {
    return {};
  }

  loadState(_state: RuleState): void {
    // no internal state: the fixed feedback matrices are drawn from the network's seed
  }
  /** Steps the last inference took. */
  lastSteps = 0;
  private readonly order: number[];
  private ws = new Map<number, { pass: ForwardPass; value: FloatArray[]; err: FloatArray[]; fv: FloatArray[]; slope: FloatArray[]; next: FloatArray[]; free: (Uint8Array | null)[] }>();
  /** Per layer index: whether another layer receives from it. */
  private readonly sends: readonly boolean[];
  private delta: ParameterDelta | null = null;

  constructor(net: Network, config: Cfg) {
    this.net = net;
    this.config = config;
    checkRates(net, config);
    this.order = forwardOrder(net);
    this.sends = net.layers.map((l) => net.connections.some((c) => c.from === l.index));
    for (const l of net.outputLayers) {
      if (l.unit.spec.kind !== "linear") fail("invalid_config", `layers[${l.index}].unit.kind`, '"linear" output units for predictive coding (the output is the prediction)', l.unit.spec.kind);
    }
  }

  private workspace(B: number) {
    let w = this.ws.get(B);
    if (w === undefined) {
      const a = () => this.net.layers.map((l) => this.net.allocate(B * l.size));
      w = { pass: createForwardPass(this.net, B), value: a(), err: a(), fv: a(), slope: a(), next: a(), free: this.net.layers.map((l) => (l.role === "output" ? new Uint8Array(B) : null)) };
      this.ws.set(B, w);
    }
    return w;
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const net = this.net;
    const cfg = this.config;
    const B = batchSizeOf(net, batch);
    const w = this.workspace(B);
    const gemm = net.kernels.gemm;
    runForward(net, this.order, batch, w.pass);
    // per output layer: the patterns whose targets are not observed (null when every pattern is observed)
    const free: (Uint8Array | null)[] = net.layers.map(() => null);
    for (const l of net.layers) {
      const v = w.value[l.index] as FloatArray;
      if (l.role === "input") v.set(w.pass.activity[l.index] as FloatArray);
      else if (l.role === "output") {
        const t = checkedLayerValues(batch.targets, l.name, v.length, "targets", l.size);
        const rows = w.free[l.index] as Uint8Array;
        let any = false;
        for (let p = 0; p < B; p++) {
          // a row of NaN (checked whole above): a free value node, starting at its prediction
          rows[p] = Number.isNaN(t[p * l.size] as number) ? 1 : 0;
          if (rows[p] === 1) any = true;
        }
        const netInput = w.pass.netInput[l.index] as FloatArray;
        for (let k = 0; k < v.length; k++) v[k] = rows[Math.floor(k / l.size)] === 1 ? (netInput[k] as number) : (t[k] as number);
        if (any) free[l.index] = rows;
      } else v.set(w.pass.netInput[l.index] as FloatArray);
    }
    const variance = (i: number) => (net.layers[i]!.role === "output" ? cfg.outputVariance : 1);
    const computeErrors = () => {
      for (const l of net.layers) {
        const fv = w.fv[l.index] as FloatArray;
        if (l.role === "input") fv.set(w.value[l.index] as FloatArray);
        else {
          l.unit.fill(fv, w.value[l.index] as FloatArray);
          l.unit.fillSlope(w.slope[l.index] as FloatArray, w.value[l.index] as FloatArray);
        }
      }
      for (const l of net.layers) {
        if (l.role === "input") continue;
        const e = w.err[l.index] as FloatArray;
        // e = −μ = −b − Σ W f(v_pre), over every incoming connection
        for (let p = 0; p < B; p++) for (let j = 0; j < l.size; j++) e[p * l.size + j] = -(l.bias[j] as number);
        for (const c of net.incoming[l.index] ?? []) gemm(e, w.fv[c.from] as FloatArray, c.weights, B, l.size, net.layers[c.from]!.size, false, true, -1, 1);
        // e now holds −μ; ε = (v − μ)/Σ
        const v = w.value[l.index] as FloatArray;
        const s = 1 / variance(l.index);
        const rows = free[l.index];
        if (rows !== null && rows !== undefined && !this.sends[l.index]) {
          // a free output node that drives nothing is at its equilibrium v = μ (ε = 0) whatever the others do
          for (let k = 0; k < e.length; k++) {
            if (rows[Math.floor(k / l.size)] === 1) {
              v[k] = -(e[k] as number);
              e[k] = 0;
            } else e[k] = ((v[k] as number) + (e[k] as number)) * s;
          }
        } else if (rows !== null && rows !== undefined) {
          // a free output node that drives another layer is a hidden node for that pattern (variance 1)
          for (let k = 0; k < e.length; k++) e[k] = ((v[k] as number) + (e[k] as number)) * (rows[Math.floor(k / l.size)] === 1 ? 1 : s);
        } else for (let k = 0; k < e.length; k++) e[k] = ((v[k] as number) + (e[k] as number)) * s;
      }
    };
    let step = 0;
    let converged = false;
    for (; step < cfg.maxSteps && !converged; step++) {
      computeErrors();
      let change = 0;
      for (const l of net.layers) {
        // hidden nodes, and the free rows of an output layer that drives another layer
        const rows = l.role === "output" && this.sends[l.index] ? free[l.index] : null;
        if (l.role !== "hidden" && (rows === null || rows === undefined)) continue;
        const g = w.next[l.index] as FloatArray;
        g.fill(0);
        for (const c of net.connections) if (c.from === l.index) gemm(g, w.err[c.to] as FloatArray, c.weights, B, l.size, net.layers[c.to]!.size, false, false, 1, 1);
        const v = w.value[l.index] as FloatArray;
        const e = w.err[l.index] as FloatArray;
        const sl = w.slope[l.index] as FloatArray;
        for (let k = 0; k < v.length; k++) {
          if (rows !== null && rows !== undefined && rows[Math.floor(k / l.size)] !== 1) continue;
          const dv = cfg.dt * (-(e[k] as number) + (sl[k] as number) * (g[k] as number));
          v[k] = (v[k] as number) + dv;
          if (Math.abs(dv) > change) change = Math.abs(dv);
        }
        for (let k = 0; k < v.length; k++) if (!Number.isFinite(v[k] as number)) throw new EbbflowError(issueText("divergence", `layers[${l.index}]`, "finite value nodes during inference", "a non-finite value", `step ${step + 1}`));
      }
      converged = change < cfg.tolerance;
    }
    computeErrors();
    this.lastSteps = step;
    out.clear();
    for (const c of net.connections) {
      if (c.spec.frozen) continue;
      const alpha = (connectionRate(cfg, c) * cfg.outputVariance) / B;
      gemm(out.weights[c.index] as FloatArray, w.err[c.to] as FloatArray, w.fv[c.from] as FloatArray, net.layers[c.to]!.size, net.layers[c.from]!.size, B, true, false, alpha, 0);
    }
    for (const l of net.layers) {
      if (l.role === "input") continue;
      net.kernels.sumRows(out.biases[l.index] as FloatArray, w.err[l.index] as FloatArray, B, l.size, (cfg.rate * cfg.outputVariance) / B, 0);
    }
    return out;
  }

  step(batch: BatchInput, scale = 1): void {
    this.delta ??= new ParameterDelta(this.net);
    computeAndApply(this, this.delta, batch, scale);
  }
}

/** Predictive coding. @category Rules */
export const predictiveCodingRule = defineRule({
  name: "predictive-coding",
  summary: "predictive coding: inference on prediction errors, then ε Σ_out ε_post f(v_pre)ᵀ (Whittington & Bogacz 2017)",
  schema: predictiveSchema,
  phases: () => ["inference"],
  label: (c) => c.rule,
  readout: "forward",
  split: () => "slices",
  create: (net, c) => new PredictiveCoding(net, c),
});
