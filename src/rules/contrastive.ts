/**
 * Phase-difference rules on two settled states, the prediction (free) and
 * the target-driven state (clamped): CHL, GeneRec and its variants, Xie–Seung scaled CHL,
 * and the sliding-threshold calcium rule.
 * @module
 */
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import type { Snapshot } from "../network/settle.js";
import { applyCalciumCurve } from "../curves/index.js";
import { ParameterDelta } from "./delta.js";
import { SettlingRule, batchSizeOf, connectionRate, contrast, contrastBias, type Batch, type RuleState } from "./base.js";
import type { RuleConfig } from "./config.js";

type Cfg<K extends RuleConfig["rule"]> = Extract<RuleConfig, { rule: K }>;

/** Depth of every layer: shortest path from an input along forward connections. @category Rules */
export function layerDepths(net: Network): number[] {
  const depth = net.layers.map((l) => (l.role === "input" ? 0 : Number.POSITIVE_INFINITY));
  for (let changed = true; changed; ) {
    changed = false;
    for (const c of net.connections) {
      const d = (depth[c.from] as number) + 1;
      if (c.from !== c.to && d < (depth[c.to] as number)) {
        depth[c.to] = d;
        changed = true;
      }
    }
  }
  return depth;
}

/** Settles the free phase and then the clamped phase from the free state; returns [free, clamped]. */
function settleTwoPhases(rule: SettlingRule & { ws: (b: number) => { settler: import("../network/settle.js").Settler; snaps: Snapshot[] }; startAt: (b: number) => Snapshot | undefined }, batch: Batch): [Snapshot, Snapshot, number] {
  const B = batchSizeOf(rule.net, batch);
  const { settler, snaps } = rule.ws(B);
  const free = settler.settle({ phase: "free", inputs: batch.inputs, start: rule.startAt(B) }, snaps[0]);
  const clamped = settler.settle({ phase: "clamped", reuseDrive: true, inputs: batch.inputs, targets: batch.targets, start: free }, snaps[1]);
  return [free, clamped, B];
}

/**
 * Contrastive Hebbian learning: `ΔW = ε (y⁺x⁺ᵀ − y⁻x⁻ᵀ)`, `Δb = ε (y⁺ − y⁻)`, averaged over the batch.
 * Movellan (1990), Connectionist Models Summer School, pp. 10–17.
 * With `xie-seung` the rate of a layer at depth k is scaled by γ^(k−L)
 * (Xie & Seung 2003, Neural Computation 15:441, Eq. 2.8); at γ = 0 only the output layer learns.
 * @category Rules
 */
export class ContrastiveHebbian extends SettlingRule {
  readonly phases = ["free", "clamped"] as const;
  private readonly factors: number[];

  constructor(net: Network, config: Cfg<"chl"> | Cfg<"xie-seung">) {
    super(net, config);
    this.factors = net.layers.map(() => 1);
    if (config.rule === "xie-seung") {
      let gamma = config.gamma;
      const tied = net.connections.filter((c) => c.feedback.kind === "tied");
      if (gamma === undefined) {
        if (tied.length === 0) fail("invalid_config", `connections[${net.connections.length - 1}].feedback`, "tied feedback (the Xie–Seung network feeds back the transposed weights scaled by gamma)", "no tied feedback path");
        const gains = new Set(tied.map((c) => (c.feedback.kind === "tied" ? c.feedback.gain : 0)));
        if (gains.size > 1) fail("invalid_config", "connections", "one feedback gain shared by every tied connection (or rule.gamma given)", [...gains].join(", "));
        gamma = [...gains][0] as number;
      }
      const depth = layerDepths(net);
      const L = Math.max(...net.outputLayers.map((l) => depth[l.index] as number));
      net.layers.forEach((l, i) => {
        const k = depth[i] as number;
        this.factors[i] = gamma > 0 ? gamma ** (k - L) : k === L ? 1 : 0;
      });
    }
  }

  /** @internal */
  ws(b: number) {
    return this.workspace(b, 2);
  }

  /** @internal */
  startAt(b: number) {
    return this.startFor(b);
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const [free, clamped, B] = settleTwoPhases(this, batch);
    this.lastFree = free;
    return chlFromSnapshots(this.net, this.config, this.factors, free, clamped, B, out, (layer) => this.phaseScratch(B, layer));
  }
}

/** CHL changes from a free and a clamped snapshot (batch-averaged), with per-layer factors. */
function chlFromSnapshots(net: Network, config: RuleConfig, factors: readonly number[], minus: Snapshot, plus: Snapshot, B: number, out: ParameterDelta, scratchFor: (layer: number) => FloatArray): ParameterDelta {
  out.clear();
  for (const c of net.connections) {
    if (c.spec.frozen) continue;
    const n = net.layers[c.to]!.size;
    const m = net.layers[c.from]!.size;
    const alpha = (connectionRate(config, c) * (factors[c.to] as number)) / B;
    if (alpha === 0) continue;
    const clampedPre = net.layers[c.from]!.role === "input";
    contrast(net.kernels, out.weights[c.index] as FloatArray, alpha, plus.activity[c.to] as FloatArray, plus.activity[c.from] as FloatArray, minus.activity[c.to] as FloatArray, minus.activity[c.from] as FloatArray, B, n, m, clampedPre, scratchFor(c.to));
    transposeInto(out.feedback[c.index] ?? null, out.weights[c.index] as FloatArray, n, m);
  }
  for (const l of net.layers) {
    if (l.role === "input") continue;
    contrastBias(out.biases[l.index] as FloatArray, (config.rate * (factors[l.index] as number)) / B, plus.activity[l.index] as FloatArray, minus.activity[l.index] as FloatArray, B, l.size);
  }
  return out;
}

/** A learned separate feedback matrix (|from|×|to|) takes the transposed change of its forward matrix (|to|×|from|). */
function transposeInto(dst: FloatArray | null, src: FloatArray, n: number, m: number): void {
  if (dst === null) return;
  for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) dst[j * n + i] = src[i * m + j] as number;
}

/**
 * GeneRec (O'Reilly 1996, Neural Computation 8:895), x sending, y receiving, ⁻ free, ⁺ clamped:
 * basic `ε x⁻(y⁺ − y⁻)`; symmetric `ε [x⁻(y⁺ − y⁻) + y⁻(x⁺ − x⁻)]` (the sum, not the average);
 * midpoint `ε ½(x⁻ + x⁺)(y⁺ − y⁻)`; symmetric-midpoint `ε [½(x⁻+x⁺)(y⁺−y⁻) + ½(y⁻+y⁺)(x⁺−x⁻)]`,
 * which equals CHL exactly with this normalisation. Biases: `ε (y⁺ − y⁻)`.
 * @category Rules
 */
export class GeneRec extends SettlingRule {
  readonly phases = ["free", "clamped"] as const;
  private diff = new Map<number, FloatArray[]>();
  private mid = new Map<number, FloatArray[]>();

  constructor(net: Network, config: Cfg<"generec">) {
    super(net, config);
  }

  /** @internal */
  ws(b: number) {
    return this.workspace(b, 2);
  }

  /** @internal */
  startAt(b: number) {
    return this.startFor(b);
  }

  private buffers(B: number): [FloatArray[], FloatArray[]] {
    let d = this.diff.get(B);
    let m = this.mid.get(B);
    if (d === undefined || m === undefined) {
      d = this.net.layers.map((l) => this.net.allocate(B * l.size));
      m = this.net.layers.map((l) => this.net.allocate(B * l.size));
      this.diff.set(B, d);
      this.mid.set(B, m);
    }
    return [d, m];
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const [free, clamped, B] = settleTwoPhases(this, batch);
    this.lastFree = free;
    return generecFromSnapshots(this.net, this.config as Cfg<"generec">, free, clamped, B, out, ...this.buffers(B));
  }
}

/** GeneRec changes from snapshots (exported for the arithmetic checks). */
export function generecFromSnapshots(net: Network, config: Cfg<"generec">, minus: Snapshot, plus: Snapshot, B: number, out: ParameterDelta, diff: FloatArray[], mid: FloatArray[]): ParameterDelta {
  out.clear();
  for (const l of net.layers) {
    const a = plus.activity[l.index] as FloatArray;
    const b = minus.activity[l.index] as FloatArray;
    const d = diff[l.index] as FloatArray;
    const h = mid[l.index] as FloatArray;
    for (let k = 0; k < d.length; k++) {
      d[k] = (a[k] as number) - (b[k] as number);
      h[k] = 0.5 * ((a[k] as number) + (b[k] as number));
    }
  }
  const variant = config.variant;
  const gemm = net.kernels.gemm;
  for (const c of net.connections) {
    if (c.spec.frozen) continue;
    const n = net.layers[c.to]!.size;
    const m = net.layers[c.from]!.size;
    const alpha = connectionRate(config, c) / B;
    const w = out.weights[c.index] as FloatArray;
    const dy = diff[c.to] as FloatArray;
    const dx = diff[c.from] as FloatArray;
    if (variant === "basic" || variant === "symmetric") gemm(w, dy, minus.activity[c.from] as FloatArray, n, m, B, true, false, alpha, 0);
    else gemm(w, dy, mid[c.from] as FloatArray, n, m, B, true, false, alpha, 0);
    if (variant === "symmetric") gemm(w, minus.activity[c.to] as FloatArray, dx, n, m, B, true, false, alpha, 1);
    else if (variant === "symmetric-midpoint") gemm(w, mid[c.to] as FloatArray, dx, n, m, B, true, false, alpha, 1);
    transposeInto(out.feedback[c.index] ?? null, w, n, m);
  }
  for (const l of net.layers) {
    if (l.role === "input") continue;
    contrastBias(out.biases[l.index] as FloatArray, config.rate / B, plus.activity[l.index] as FloatArray, minus.activity[l.index] as FloatArray, B, l.size);
  }
  return out;
}

/**
 * The sliding-threshold calcium rule: `ΔW_ij = ε · curve(fast coactivity, θ_ij)` with the
 * piecewise-linear form of the calcium-control curve (see {@link calciumCurve} for its sources:
 * Lisman 1989; Artola, Bröcher & Singer 1990; Shouval, Bear & Cooper 2002) and θ from
 * - `error`: a slower trace of the same coactivity (led by the free state, the prediction), so in
 *   the curve's linear region the change is clamped minus free (CHL);
 * - `bcm`: the receiving unit's long-term average activity times the sending activity
 *   (self-organising, after Bienenstock, Cooper & Munro 1982, J. Neurosci. 2:32);
 * - `blend`: `errorShare·θ_error + (1 − errorShare)·θ_bcm`.
 *
 * With `timing: "phases"` the fast coactivity is the clamped-phase product and the slower one the
 * free-phase product. With `timing: "continuous"` per-unit traces are updated on every settling step of
 * the free then the clamped phase (fast time constant `fastTau`, slow `slowTau`, in steps) and the
 * coactivities are products of those traces at the end of the trial. Biases follow the same curve with a
 * sending activity of 1.
 * @category Rules
 */
export class SlidingThresholdRule extends SettlingRule {
  readonly phases = ["free", "clamped"] as const;
  private readonly cfg: Cfg<"calcium">;
  /** Long-term average activity per receiving layer (one value per unit), updated once per batch. */
  readonly averages: FloatArray[];
  private scratch = new Map<number, { fastPre: FloatArray[]; slowPre: FloatArray[]; co: FloatArray; th: FloatArray; ch: FloatArray }>();
  private averagesStarted = false;

  constructor(net: Network, config: Cfg<"calcium">) {
    super(net, config);
    this.cfg = config;
    this.averages = net.layers.map((l) => net.allocate(l.size));
  }

  /** @internal */
  ws(b: number) {
    return this.workspace(b, 2);
  }

  /** @internal */
  startAt(b: number) {
    return this.startFor(b);
  }

  private buffers(B: number) {
    let s = this.scratch.get(B);
    if (s === undefined) {
      const big = Math.max(...this.net.connections.map((c) => c.weights.length), ...this.net.layers.map((l) => l.size));
      s = {
        fastPre: this.net.layers.map((l) => this.net.allocate(B * l.size)),
        slowPre: this.net.layers.map((l) => this.net.allocate(B * l.size)),
        co: this.net.allocate(big),
        th: this.net.allocate(big),
        ch: this.net.allocate(big),
      };
      this.scratch.set(B, s);
    }
    return s;
  }

  override saveState(): RuleState {
    return { started: this.averagesStarted, averages: this.averages.map((a) => Array.from(a)) };
  }

  override loadState(state: RuleState): void {
    const avg = state.averages as number[][] | undefined;
    if (avg === undefined) return;
    avg.forEach((a, i) => (this.averages[i] as FloatArray).set(a));
    this.averagesStarted = state.started === true;
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const net = this.net;
    const cfg = this.cfg;
    const B = batchSizeOf(net, batch);
    const { settler, snaps } = this.ws(B);
    const buf = this.buffers(B);
    let fast: FloatArray[];
    let slow: FloatArray[];
    if (cfg.timing === "phases") {
      const free = settler.settle({ phase: "free", inputs: batch.inputs, start: this.startFor(B) }, snaps[0]);
      this.lastFree = free;
      const clamped = settler.settle({ phase: "clamped", reuseDrive: true, inputs: batch.inputs, targets: batch.targets, start: free }, snaps[1]);
      fast = clamped.activity;
      slow = free.activity;
    } else {
      // per-unit traces updated on every settling step across the free then the clamped phase
      const aFast = 1 - Math.exp(-1 / cfg.fastTau);
      const aSlow = 1 - Math.exp(-1 / cfg.slowTau);
      const tf = buf.fastPre;
      const ts = buf.slowPre;
      let first = true;
      const feed = (s: Snapshot) => {
        if (first) {
          // both traces start at the trial's first state, so neither is biased toward zero
          for (let li = 0; li < net.layers.length; li++) {
            (tf[li] as FloatArray).set(s.activity[li] as FloatArray);
            (ts[li] as FloatArray).set(s.activity[li] as FloatArray);
          }
          first = false;
          return;
        }
        for (let li = 0; li < net.layers.length; li++) {
          const a = s.activity[li] as FloatArray;
          const f = tf[li] as FloatArray;
          const sl = ts[li] as FloatArray;
          for (let k = 0; k < a.length; k++) {
            f[k] = (f[k] as number) + aFast * ((a[k] as number) - (f[k] as number));
            sl[k] = (sl[k] as number) + aSlow * ((a[k] as number) - (sl[k] as number));
          }
        }
      };
      // fixed phase durations (no early stop), so the traces see a known time course
      const free = settler.settle({ phase: "free", inputs: batch.inputs, start: this.startFor(B), onStep: feed, maxSteps: cfg.freeSteps, tolerance: Number.MIN_VALUE }, snaps[0]);
      this.lastFree = free;
      settler.settle({ phase: "clamped", reuseDrive: true, inputs: batch.inputs, targets: batch.targets, start: free, onStep: feed, maxSteps: cfg.clampedSteps, tolerance: Number.MIN_VALUE }, snaps[1]);
      fast = tf;
      slow = ts;
    }
    out.clear();
    const { co, th, ch } = buf;
    const useAvg = cfg.threshold !== "error";
    if (useAvg && !this.averagesStarted) {
      // start the long-term averages at the first batch's slow (free-state) activity
      for (const l of net.layers) meanRows(this.averages[l.index] as FloatArray, slow[l.index] as FloatArray, B, l.size, 1);
      this.averagesStarted = true;
    }
    const wErr = cfg.threshold === "error" ? 1 : cfg.threshold === "bcm" ? 0 : cfg.errorShare;
    for (const c of net.connections) {
      if (c.spec.frozen) continue;
      const n = net.layers[c.to]!.size;
      const m = net.layers[c.from]!.size;
      const alpha = connectionRate(cfg, c) / B;
      const w = out.weights[c.index] as FloatArray;
      const avg = this.averages[c.to] as FloatArray;
      const yF = fast[c.to] as FloatArray;
      const xF = fast[c.from] as FloatArray;
      const yS = slow[c.to] as FloatArray;
      const xS = slow[c.from] as FloatArray;
      const coV = co.subarray(0, n * m);
      const thV = th.subarray(0, n * m);
      const chV = ch.subarray(0, n * m);
      for (let p = 0; p < B; p++) {
        for (let i = 0; i < n; i++) {
          const yf = yF[p * n + i] as number;
          const ys = yS[p * n + i] as number;
          const ya = avg[i] as number;
          for (let j = 0; j < m; j++) {
            const xf = xF[p * m + j] as number;
            coV[i * m + j] = yf * xf;
            thV[i * m + j] = wErr * ys * (xS[p * m + j] as number) + (1 - wErr) * ya * xf;
          }
        }
        applyCalciumCurve(chV, coV, thV, cfg.trough);
        for (let k = 0; k < n * m; k++) w[k] = (w[k] as number) + alpha * (chV[k] as number);
      }
      transposeInto(out.feedback[c.index] ?? null, w, n, m);
    }
    for (const l of net.layers) {
      if (l.role === "input") continue;
      const n = l.size;
      const b = out.biases[l.index] as FloatArray;
      const avg = this.averages[l.index] as FloatArray;
      const coV = co.subarray(0, n);
      const thV = th.subarray(0, n);
      const chV = ch.subarray(0, n);
      for (let p = 0; p < B; p++) {
        for (let i = 0; i < n; i++) {
          coV[i] = (fast[l.index] as FloatArray)[p * n + i] as number;
          thV[i] = wErr * ((slow[l.index] as FloatArray)[p * n + i] as number) + (1 - wErr) * (avg[i] as number);
        }
        applyCalciumCurve(chV, coV, thV, cfg.trough);
        for (let i = 0; i < n; i++) b[i] = (b[i] as number) + (cfg.rate / B) * (chV[i] as number);
      }
    }
    if (useAvg) {
      const a = 1 - Math.exp(-1 / cfg.averageTau);
      for (const l of net.layers) meanRows(this.averages[l.index] as FloatArray, slow[l.index] as FloatArray, B, l.size, a);
    }
    return out;
  }
}

/** `avg += a (mean over rows of x − avg)`. */
function meanRows(avg: FloatArray, x: FloatArray, B: number, n: number, a: number): void {
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let p = 0; p < B; p++) s += x[p * n + j] as number;
    avg[j] = (avg[j] as number) + a * (s / B - (avg[j] as number));
  }
}
