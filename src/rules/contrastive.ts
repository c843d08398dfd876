/**
 * Phase-difference rules on two settled states, the prediction (free) and
 * the target-driven state (clamped): CHL, GeneRec and its variants, Xie–Seung scaled CHL,
 * and the sliding-threshold calcium rule.
 * @module
 */
import { z } from "zod";
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import type { Snapshot } from "../network/settle.js";
import { applyCalciumCurve } from "../curves/index.js";
import { vectorTrace, smoothingCoefficient, type VectorTrace } from "../traces/index.js";
import { stepFilter } from "../traces/step.js";
import { ParameterDelta } from "./delta.js";
import { SettlingRule, batchSizeOf, connectionRate, contrast, contrastBias, type Batch, type RuleState } from "./base.js";
import { commonRuleFields, defineRule } from "./descriptor.js";
import type { Combination, ContrastForm, Product } from "./contrast-form.js";
import { layerArraysSchema, layerArraysState } from "./state.js";

const positive = (what: string) => z.number({ error: what }).refine((v) => Number.isFinite(v) && v > 0, { error: what });
const nonNegative = (what: string) => z.number({ error: what }).refine((v) => Number.isFinite(v) && v >= 0, { error: what });
/** A key that was renamed: refused with a message naming its new spelling (it is never read). */
const renamed = (was: string, now: string) => z.never({ error: `the key ${now} (${was} was renamed ${now})` }).optional();

const chlSchema = z.object({ rule: z.literal("chl"), ...commonRuleFields }).strict();
const xieSeungSchema = z.object({ rule: z.literal("xie-seung"), gamma: nonNegative("a feedback gain gamma >= 0").optional(), ...commonRuleFields }).strict();
const generecSchema = z
  .object({
    rule: z.literal("generec"),
    variant: z.enum(["basic", "symmetric", "midpoint", "symmetric-midpoint"], { error: "one of basic, symmetric, midpoint, symmetric-midpoint" }).default("basic"),
    ...commonRuleFields,
  })
  .strict();
const calciumSchema = z
  .object({
    rule: z.literal("calcium"),
    trough: z.number().refine((v) => v > 0 && v < 1, { error: "a trough position in the open interval (0, 1)" }).default(0.05),
    threshold: z
      .enum(["error", "bcm", "blend"], { error: (i) => (i.input === "mix" ? 'one of error, bcm, blend ("mix" was renamed "blend")' : "one of error, bcm, blend") })
      .default("error"),
    // share of the error-driven threshold in a blend, in [0, 1]
    errorShare: z.number().refine((v) => v >= 0 && v <= 1, { error: "an error-driven share in [0, 1]" }).default(0.9),
    mix: renamed("mix", "errorShare"),
    timing: z.enum(["phases", "continuous"], { error: "one of phases, continuous" }).default("phases"),
    fastTau: positive("a time constant > 0 (settling steps)").default(1),
    slowTau: positive("a time constant > 0 (settling steps)").default(20),
    freeSteps: z.number().int().min(1, { error: "an integer >= 1" }).default(100),
    clampedSteps: z.number().int().min(1, { error: "an integer >= 1" }).default(10),
    averageTau: positive("a time constant > 0 (trials)").default(50),
    ...commonRuleFields,
  })
  .strict();

type ChlConfig = z.output<typeof chlSchema>;
type XieSeungConfig = z.output<typeof xieSeungSchema>;
type GenerecConfig = z.output<typeof generecSchema>;
type CalciumConfig = z.output<typeof calciumSchema>;
type Cfg<K extends "chl" | "xie-seung" | "generec" | "calcium"> = { chl: ChlConfig; "xie-seung": XieSeungConfig; generec: GenerecConfig; calcium: CalciumConfig }[K];

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

/**
 * The Xie–Seung factor of every layer's learning rate, γ^(k−L) for a layer at depth k below the output
 * depth L (Xie & Seung 2003, Neural Computation 15:441, Eq. 2.8); at γ = 0 only the output layer learns.
 * γ is `rule.gamma`, or else the gain shared by every tied feedback path.
 * @category Rules
 */
export function xieSeungFactors(net: Network, config: Cfg<"xie-seung">): number[] {
  let gamma = config.gamma;
  const tied = net.connections.filter((c) => c.feedback.kind === "tied");
  if (gamma === undefined) {
    if (tied.length === 0) fail("invalid_config", `connections[${net.connections.length - 1}].feedback`, "tied feedback (the Xie–Seung network feeds back the transposed weights scaled by gamma)", "no tied feedback path");
    const gains = new Set(tied.map((c) => (c.feedback.kind === "tied" ? c.feedback.gain : 0)));
    if (gains.size > 1) fail("invalid_config", "connections", "one feedback gain shared by every tied connection (or rule.gamma given)", [...gains].join(", "));
    gamma = [...gains][0] as number;
  }
  const g = gamma;
  const depth = layerDepths(net);
  const L = Math.max(...net.outputLayers.map((l) => depth[l.index] as number));
  return net.layers.map((_, i) => {
    const k = depth[i] as number;
    return g > 0 ? g ** (k - L) : k === L ? 1 : 0;
  });
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
  declare readonly config: Cfg<"chl"> | Cfg<"xie-seung">;
  private readonly factors: number[];

  constructor(net: Network, config: Cfg<"chl"> | Cfg<"xie-seung">) {
    super(net, config);
    this.factors = config.rule === "xie-seung" ? xieSeungFactors(net, config) : net.layers.map(() => 1);
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
function chlFromSnapshots(net: Network, config: Cfg<"chl"> | Cfg<"xie-seung">, factors: readonly number[], free: Snapshot, clamped: Snapshot, B: number, out: ParameterDelta, scratchFor: (layer: number) => FloatArray): ParameterDelta {
  out.clear();
  for (const c of net.connections) {
    if (c.spec.frozen) continue;
    const n = net.layers[c.to]!.size;
    const m = net.layers[c.from]!.size;
    const alpha = (connectionRate(config, c) * (factors[c.to] as number)) / B;
    if (alpha === 0) continue;
    const clampedPre = net.layers[c.from]!.role === "input";
    contrast(net.kernels, out.weights[c.index] as FloatArray, alpha, clamped.activity[c.to] as FloatArray, clamped.activity[c.from] as FloatArray, free.activity[c.to] as FloatArray, free.activity[c.from] as FloatArray, B, n, m, clampedPre, scratchFor(c.to));
    transposeInto(out.feedback[c.index] ?? null, out.weights[c.index] as FloatArray, n, m);
  }
  for (const l of net.layers) {
    if (l.role === "input") continue;
    contrastBias(out.biases[l.index] as FloatArray, (config.rate * (factors[l.index] as number)) / B, clamped.activity[l.index] as FloatArray, free.activity[l.index] as FloatArray, B, l.size);
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
  declare readonly config: Cfg<"generec">;
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
export function generecFromSnapshots(net: Network, config: Cfg<"generec">, free: Snapshot, clamped: Snapshot, B: number, out: ParameterDelta, diff: FloatArray[], mid: FloatArray[]): ParameterDelta {
  out.clear();
  for (const l of net.layers) {
    const a = clamped.activity[l.index] as FloatArray;
    const b = free.activity[l.index] as FloatArray;
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
    if (variant === "basic" || variant === "symmetric") gemm(w, dy, free.activity[c.from] as FloatArray, n, m, B, true, false, alpha, 0);
    else gemm(w, dy, mid[c.from] as FloatArray, n, m, B, true, false, alpha, 0);
    if (variant === "symmetric") gemm(w, free.activity[c.to] as FloatArray, dx, n, m, B, true, false, alpha, 1);
    else if (variant === "symmetric-midpoint") gemm(w, mid[c.to] as FloatArray, dx, n, m, B, true, false, alpha, 1);
    transposeInto(out.feedback[c.index] ?? null, w, n, m);
  }
  for (const l of net.layers) {
    if (l.role === "input") continue;
    contrastBias(out.biases[l.index] as FloatArray, config.rate / B, clamped.activity[l.index] as FloatArray, free.activity[l.index] as FloatArray, B, l.size);
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
  /** Long-term average activity per layer (one trace per unit, time constant `averageTau` in batches), updated once per batch. */
  readonly averageTraces: VectorTrace[];
  private readonly means: FloatArray[];
  private scratch = new Map<number, { fastPre: FloatArray[]; slowPre: FloatArray[]; co: FloatArray; th: FloatArray; ch: FloatArray }>();
  private averagesStarted = false;
  /**
   * With `timing: "continuous"`: the fast and slow traces run on from the previous step (the previous
   * pattern of a sequence) instead of starting at the trial's first state. Set by the Trainer in
   * sequence mode; {@link SlidingThresholdRule.resetTraces} starts them afresh (a new sequence).
   */
  carryTraces = false;
  /** Batch size of the traces left by the last step (0: none to carry). */
  private tracesBatch = 0;

  constructor(net: Network, config: Cfg<"calcium">) {
    super(net, config);
    this.cfg = config;
    this.averageTraces = net.layers.map((l) => vectorTrace({ tau: config.averageTau, n: l.size, dtype: net.dtype }));
    this.means = net.layers.map((l) => new Float64Array(l.size));
  }

  /** Long-term average activity per layer (live views of {@link SlidingThresholdRule.averageTraces}). */
  get averages(): FloatArray[] {
    return this.averageTraces.map((t) => t.value);
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

  /** The next step's traces start at its first state (a new sequence). */
  resetTraces(): void {
    this.tracesBatch = 0;
  }

  /** The continuous traces of the last step per layer (B×N; null before any continuous step): for recording. */
  traces(batch: number): { fast: FloatArray[]; slow: FloatArray[] } | null {
    const b = this.scratch.get(batch);
    return b === undefined ? null : { fast: b.fastPre, slow: b.slowPre };
  }

  override saveState(): RuleState {
    const base = { started: this.averagesStarted, averages: this.averageTraces.map((t) => Array.from(t.value)) };
    const live = this.carryTraces && this.tracesBatch > 0 ? this.scratch.get(this.tracesBatch) : undefined;
    if (live === undefined) return base;
    // carried traces are part of the state: resuming mid-sequence continues them bit for bit
    return { ...base, traces: { batch: this.tracesBatch, fast: live.fastPre.map((a) => Array.from(a)), slow: live.slowPre.map((a) => Array.from(a)) } };
  }

  override loadState(state: RuleState): void {
    const { traces, ...rest } = state as Record<string, unknown>;
    const s = layerArraysState(this.net, rest, "averages", "averages");
    let carried: { batch: number; fast: number[][]; slow: number[][] } | null = null;
    if (traces !== undefined) {
      const t = traces as { batch?: unknown; fast?: unknown; slow?: unknown };
      const B = t?.batch;
      if (typeof B !== "number" || !Number.isInteger(B) || B < 1) fail("invalid_config", "rule.traces.batch", "an integer >= 1", B);
      for (const key of ["fast", "slow"] as const) {
        const arrays = t[key];
        if (!Array.isArray(arrays) || arrays.length !== this.net.layers.length) fail("invalid_config", `rule.traces.${key}`, `one array per layer (${this.net.layers.length})`, arrays);
        (arrays as unknown[]).forEach((a, i) => {
          const want = B * this.net.layers[i]!.size;
          if (!Array.isArray(a) || a.length !== want || a.some((v) => typeof v !== "number" || !Number.isFinite(v))) fail("invalid_config", `rule.traces.${key}[${i}]`, `${want} finite numbers (batch × layer size)`, Array.isArray(a) ? `array of length ${a.length}` : a);
        });
      }
      carried = { batch: B, fast: t.fast as number[][], slow: t.slow as number[][] };
    }
    s.values.forEach((a, i) => (this.averageTraces[i] as VectorTrace).value.set(a));
    this.averagesStarted = s.started;
    this.tracesBatch = 0;
    if (carried !== null) {
      const buf = this.buffers(carried.batch);
      carried.fast.forEach((a, i) => (buf.fastPre[i] as FloatArray).set(a));
      carried.slow.forEach((a, i) => (buf.slowPre[i] as FloatArray).set(a));
      this.tracesBatch = carried.batch;
    }
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
      const aFast = smoothingCoefficient(cfg.fastTau);
      const aSlow = smoothingCoefficient(cfg.slowTau);
      const tf = buf.fastPre;
      const ts = buf.slowPre;
      // in sequence mode the traces run on from the previous pattern's step (same batch)
      let first = !(this.carryTraces && this.tracesBatch === B);
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
          stepFilter(tf[li] as FloatArray, 0, a, 0, a.length, aFast);
          stepFilter(ts[li] as FloatArray, 0, a, 0, a.length, aSlow);
        }
      };
      // fixed phase durations (no early stop), so the traces see a known time course
      const free = settler.settle({ phase: "free", inputs: batch.inputs, start: this.startFor(B), onStep: feed, maxSteps: cfg.freeSteps, tolerance: Number.MIN_VALUE }, snaps[0]);
      this.lastFree = free;
      settler.settle({ phase: "clamped", reuseDrive: true, inputs: batch.inputs, targets: batch.targets, start: free, onStep: feed, maxSteps: cfg.clampedSteps, tolerance: Number.MIN_VALUE }, snaps[1]);
      this.tracesBatch = B;
      fast = tf;
      slow = ts;
    }
    out.clear();
    const { co, th, ch } = buf;
    const useAvg = cfg.threshold !== "error";
    if (useAvg && !this.averagesStarted) {
      // start the long-term averages at the first batch's free-phase (slow) activity
      for (const l of net.layers) (this.averageTraces[l.index] as VectorTrace).value.set(meanRows(this.means[l.index] as Float64Array, slow[l.index] as FloatArray, B, l.size));
      this.averagesStarted = true;
    }
    const wErr = cfg.threshold === "error" ? 1 : cfg.threshold === "bcm" ? 0 : cfg.errorShare;
    for (const c of net.connections) {
      if (c.spec.frozen) continue;
      const n = net.layers[c.to]!.size;
      const m = net.layers[c.from]!.size;
      const alpha = connectionRate(cfg, c) / B;
      const w = out.weights[c.index] as FloatArray;
      const avg = (this.averageTraces[c.to] as VectorTrace).value;
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
      const avg = (this.averageTraces[l.index] as VectorTrace).value;
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
      for (const l of net.layers) (this.averageTraces[l.index] as VectorTrace).update(meanRows(this.means[l.index] as Float64Array, slow[l.index] as FloatArray, B, l.size));
    }
    return out;
  }
}

/** `out[j] =` the mean over the B rows of x (B×n); returns `out`. */
function meanRows(out: Float64Array, x: FloatArray, B: number, n: number): Float64Array {
  for (let j = 0; j < n; j++) {
    let s = 0;
    for (let p = 0; p < B; p++) s += x[p * n + j] as number;
    out[j] = s / B;
  }
  return out;
}

/** Does any trained connection feed back through a learned separate matrix (its change is the transposed forward change)? */
function learnsSeparateFeedback(net: Network): boolean {
  return net.connections.some((c) => !c.spec.frozen && c.feedback.kind === "separate" && c.feedback.learned);
}

/** The phases of CHL and GeneRec: free, then clamped from the free state with its drive carried over. */
const FREE_CLAMPED: ContrastForm["phases"] = [{ phase: "free" }, { phase: "clamped", reuseDrive: true }];

/** `k · (P_addᵀ Q_add − P_subtractᵀ Q_subtract)` between two phases, or `k · (P_add − P_subtract)ᵀ X` for an input sender. */
export function phaseContrast(add: number, subtract: number): (k: number, input: boolean) => Product[] {
  const diff: Combination = [
    [add, 1],
    [subtract, -1],
  ];
  return (k, input) =>
    input
      ? [{ perPattern: k, post: diff, pre: "input" }]
      : [
          { perPattern: k, post: [[add, 1]], pre: [[add, 1]] },
          { perPattern: -k, post: [[subtract, 1]], pre: [[subtract, 1]] },
        ];
}

/** CHL (and Xie–Seung) as a contrast form: phase 0 free, phase 1 clamped. */
function chlForm(layerFactors?: readonly number[]): ContrastForm {
  return { phases: FREE_CLAMPED, products: phaseContrast(1, 0), scale: 1, bias: { add: 1, subtract: 0 }, layerFactors };
}

/** Contrastive Hebbian learning. @category Rules */
export const chlRule = defineRule({
  name: "chl",
  summary: "contrastive Hebbian learning, ε(y⁺x⁺ᵀ − y⁻x⁻ᵀ) between the clamped and free states (Movellan 1990)",
  schema: chlSchema,
  phases: () => ["free", "clamped"],
  label: (c) => c.rule,
  readout: "settle",
  split: () => "rows",
  contrast: (_c, net) => (learnsSeparateFeedback(net) ? null : chlForm()),
  create: (net, c) => new ContrastiveHebbian(net, c),
});

/** CHL with the Xie–Seung per-layer rates. @category Rules */
export const xieSeungRule = defineRule({
  name: "xie-seung",
  summary: "CHL with the rate of a layer at depth k scaled by γ^(k−L), equal to backprop as γ → 0 (Xie & Seung 2003)",
  schema: xieSeungSchema,
  phases: () => ["free", "clamped"],
  label: (c) => c.rule,
  readout: "settle",
  split: () => "rows",
  contrast: (c, net) => (learnsSeparateFeedback(net) ? null : chlForm(xieSeungFactors(net, c))),
  create: (net, c) => new ContrastiveHebbian(net, c),
});

/** GeneRec in its four variants. @category Rules */
export const generecRule = defineRule({
  name: "generec",
  summary: "GeneRec: ε x⁻(y⁺ − y⁻) and its symmetric and midpoint variants (O'Reilly 1996)",
  schema: generecSchema,
  phases: () => ["free", "clamped"],
  label: (c) => `${c.rule} (${c.variant})`,
  readout: "settle",
  split: () => "rows",
  contrast: (c, net) => {
    if (learnsSeparateFeedback(net)) return null;
    // x sending, y receiving, - free (phase 0), + clamped (phase 1)
    const diff: Combination = [
      [1, 1],
      [0, -1],
    ];
    const free: Combination = [[0, 1]];
    const mid: Combination = [
      [1, 0.5],
      [0, 0.5],
    ];
    const v = c.variant;
    const products = (k: number, input: boolean): Product[] => {
      const out: Product[] = [{ perPattern: k, post: diff, pre: input ? "input" : v === "basic" || v === "symmetric" ? free : mid }];
      // the second products carry x+ - x-, which is zero for a clamped input layer
      if (!input && v === "symmetric") out.push({ perPattern: k, post: free, pre: diff });
      if (!input && v === "symmetric-midpoint") out.push({ perPattern: k, post: mid, pre: diff });
      return out;
    };
    return { phases: FREE_CLAMPED, products, scale: 1, bias: { add: 1, subtract: 0 } };
  },
  create: (net, c) => new GeneRec(net, c),
});

/** The calcium rule's saved state: long-term averages and, in sequence mode, the carried continuous traces. */
const calciumStateSchema = (layerArraysSchema("averages") as unknown as z.ZodObject).extend({
  traces: z
    .object({ batch: z.number().int().min(1), fast: z.array(z.array(z.number().refine(Number.isFinite, { error: "a finite number" }))), slow: z.array(z.array(z.number().refine(Number.isFinite, { error: "a finite number" }))) })
    .strict()
    .optional(),
});

/** The sliding-threshold calcium rule. @category Rules */
export const calciumRule = defineRule({
  name: "calcium",
  summary: "sliding-threshold calcium rule: ε·curve(fast coactivity, θ), a piecewise-linear form of the calcium-control curve (Lisman 1989; Artola, Bröcher & Singer 1990; Shouval, Bear & Cooper 2002); θ from a slower trace (error), a long postsynaptic average (bcm, after Bienenstock, Cooper & Munro 1982) or a blend of the two",
  schema: calciumSchema,
  phases: () => ["free", "clamped"],
  label: (c) => c.rule,
  readout: "settle",
  // the long-term averages of the bcm and blend thresholds change from batch to batch
  split: (c) => (c.threshold === "error" ? "slices" : "none"),
  state: calciumStateSchema,
  create: (net, c) => new SlidingThresholdRule(net, c),
});
