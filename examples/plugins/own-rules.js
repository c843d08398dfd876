// @ts-check
/**
 * Two learning rules and a unit kind of our own, as an ebbflow plugin (docs/guide/own-rule.md walks
 * through them).
 *
 * - `naka-rushton` (a unit kind): the contrast-response rate r = x₊ⁿ / (x₊ⁿ + cⁿ), x₊ = max(0, x), of
 *   Naka & Rushton 1966 (J. Physiol. 185:536) as used for cortical contrast responses (Albrecht &
 *   Hamilton 1982, J. Neurophysiol. 48:217), with its slope n x₊ⁿ⁻¹ cⁿ / (x₊ⁿ + cⁿ)².
 *
 * - `reward-hebbian`: a reward-gated Hebbian rule with weight normalisation. After the free phase the
 *   network's choice is scored: reward +1 when its most active output unit is the target's, −1 otherwise.
 *   Each synapse changes by ε (r − r̄)(y − ȳ) x: presynaptic activity times the receiving unit's activity
 *   relative to its layer's mean, gated by how much better than usual the trial went (a three-factor rule
 *   in the sense of Frémaux & Gerstner 2016, Front. Neural Circuits 9:85; reward minus a running baseline
 *   as in Williams 1992, Machine Learning 8:229; the centred postsynaptic term makes the chosen unit gain
 *   on reward and lose on penalty, as in associative reward-penalty learning, Barto & Anandan 1985,
 *   IEEE Trans. SMC 15:360), and every receiving unit's incoming weight vector is then rescaled to a fixed length
 *   (multiplicative normalisation, after von der Malsburg 1973, Kybernetik 14:85). The baseline r̄ is a
 *   running average of the reward over batches: the rule keeps state, saved in checkpoints.
 * - `blended-contrast`: declared by its contrast form alone, a blend λ·CHL + (1 − λ)·GeneRec (basic) of
 *   two published rules (Movellan 1990; O'Reilly 1996), for showing that a rule written as a form is
 *   split across worker threads with the same bits as one thread. At λ = 1 it is CHL.
 *
 * Load it with `ebbflow train ... --plugin examples/plugins/own-rules.js`, `"plugins": [...]` in an
 * experiment file, or `loadPlugins(["./own-rules.js"])` in code.
 */
import { z } from "zod";
import { SettlingRule, FormRule, applyDelta, batchSizeOf, commonRuleFields, connectionRate, defineRule, defineUnit, ParameterDelta, smoothingCoefficient, unitFromScalars } from "ebbflow";

/** The Naka–Rushton rate x₊ⁿ / (x₊ⁿ + cⁿ). */
function nakaRushton(x, n, c) {
  if (!(x > 0)) return x !== x ? x : 0; // NaN stays NaN
  const p = x ** n;
  return p / (p + c ** n);
}

/** Its slope n x₊ⁿ⁻¹ cⁿ / (x₊ⁿ + cⁿ)² (0 for x ≤ 0). */
function nakaRushtonSlope(x, n, c) {
  if (!(x > 0)) return x !== x ? x : 0;
  const p = x ** n;
  const cn = c ** n;
  return (n * (p / x) * cn) / (p + cn) ** 2;
}

/** The Naka–Rushton unit kind (no WebAssembly kernel: it runs its own fill on every backend). */
export const nakaRushtonUnit = defineUnit({
  kind: "naka-rushton",
  schema: z
    .object({
      kind: z.literal("naka-rushton"),
      /** Exponent n (≥ 1). */
      exponent: z.number().min(1).default(2),
      /** Semi-saturation input c (> 0). */
      halfInput: z.number().positive().default(1),
    })
    .strict(),
  summary: "Naka–Rushton contrast response x₊ⁿ / (x₊ⁿ + cⁿ); exponent n ≥ 1 (default 2), halfInput c > 0 (default 1)",
  create: (spec) =>
    unitFromScalars(spec, {
      lower: 0,
      upper: 1,
      value: (x) => nakaRushton(x, spec.exponent, spec.halfInput),
      slope: (x) => nakaRushtonSlope(x, spec.exponent, spec.halfInput),
    }),
});

const rewardSchema = z
  .object({
    rule: z.literal("reward-hebbian"),
    /** Time constant of the reward baseline, in batches; 0 for no baseline. */
    baselineTau: z.number().min(0).default(10),
    /** Length every receiving unit's incoming weight vector is rescaled to; 0 for no normalisation. */
    norm: z.number().min(0).default(1),
    ...commonRuleFields,
  })
  .strict();

/** Index of the largest of `n` values starting at `offset` (the first one on ties). */
function argmax(values, offset, n) {
  let best = 0;
  for (let i = 1; i < n; i++) if (values[offset + i] > values[offset + best]) best = i;
  return best;
}

class RewardHebbian extends SettlingRule {
  /** @param {import("ebbflow").Network} net @param {z.output<typeof rewardSchema>} config */
  constructor(net, config) {
    super(net, config);
    this.cfg = config;
    this.phases = ["free"];
    /** Running average of the reward (the baseline). */
    this.baseline = 0;
    this.started = false;
    this.rewards = new Float64Array(0);
  }

  /** The reward of every pattern: +1 when the most active output unit is the target's, else −1. */
  score(free, targets, B) {
    if (this.rewards.length !== B) this.rewards = new Float64Array(B);
    this.rewards.fill(0);
    for (const l of this.net.outputLayers) {
      const y = free.activity[l.index];
      const t = targets[l.name];
      for (let b = 0; b < B; b++) {
        const right = l.size === 1 ? y[b] > 0.5 === t[b] > 0.5 : argmax(y, b * l.size, l.size) === argmax(t, b * l.size, l.size);
        this.rewards[b] += right ? 1 : -1;
      }
    }
    return this.rewards;
  }

  computeDelta(batch, out) {
    const net = this.net;
    const B = batchSizeOf(net, batch);
    const { settler, snaps } = this.workspace(B, 1);
    const free = settler.settle({ phase: "free", inputs: batch.inputs, start: this.startFor(B) }, snaps[0]);
    this.lastFree = free;
    const r = this.score(free, batch.targets, B);
    let mean = 0;
    for (let b = 0; b < B; b++) mean += r[b] / B;
    const tau = this.cfg.baselineTau;
    const baseline = tau > 0 && this.started ? this.baseline : tau > 0 ? mean : 0;
    out.clear();
    for (const c of net.connections) {
      if (c.spec.frozen) continue;
      const n = net.layers[c.to].size;
      const m = net.layers[c.from].size;
      const y = free.activity[c.to];
      const x = free.activity[c.from];
      const w = out.weights[c.index];
      const alpha = connectionRate(this.cfg, c) / B;
      for (let b = 0; b < B; b++) {
        const gate = alpha * (r[b] - baseline);
        let mean = 0;
        for (let i = 0; i < n; i++) mean += y[b * n + i] / n;
        for (let i = 0; i < n; i++) {
          const gi = gate * (y[b * n + i] - mean);
          for (let j = 0; j < m; j++) w[i * m + j] += gi * x[b * m + j];
        }
      }
    }
    // biases alike, with a sending activity of 1
    for (const l of net.layers) {
      if (l.role === "input") continue;
      const y = free.activity[l.index];
      const d = out.biases[l.index];
      for (let b = 0; b < B; b++) {
        let mean = 0;
        for (let i = 0; i < l.size; i++) mean += y[b * l.size + i] / l.size;
        for (let i = 0; i < l.size; i++) d[i] += (this.cfg.rate / B) * (r[b] - baseline) * (y[b * l.size + i] - mean);
      }
    }
    // the baseline follows the batch's mean reward (the first batch sets it)
    if (tau > 0) {
      this.baseline = this.started ? this.baseline + smoothingCoefficient(tau) * (mean - this.baseline) : mean;
      this.started = true;
    }
    return out;
  }

  step(batch, scale = 1) {
    this.change ??= new ParameterDelta(this.net);
    this.computeDelta(batch, this.change);
    if (scale !== 1) this.change.scale(scale);
    applyDelta(this.net, this.change);
    if (this.cfg.norm > 0) this.normalise();
  }

  /** Rescales every receiving unit's incoming weights (each trained matrix's rows) to length `norm`. */
  normalise() {
    for (const c of this.net.connections) {
      if (c.spec.frozen) continue;
      const m = this.net.layers[c.from].size;
      const w = c.weights;
      for (let i = 0; i < w.length / m; i++) {
        let s = 0;
        for (let j = 0; j < m; j++) s += w[i * m + j] ** 2;
        if (s === 0) continue;
        const f = this.cfg.norm / Math.sqrt(s);
        for (let j = 0; j < m; j++) w[i * m + j] *= f;
      }
    }
  }

  saveState() {
    return { baseline: this.baseline, started: this.started };
  }

  loadState(state) {
    this.baseline = state.baseline;
    this.started = state.started;
  }
}

/** The reward-gated Hebbian rule. */
export const rewardHebbian = defineRule({
  name: "reward-hebbian",
  summary: "reward-gated Hebbian rule, ε (r − r̄)(y − ȳ) xᵀ with rows rescaled to a fixed length (three-factor rule; Frémaux & Gerstner 2016)",
  schema: rewardSchema,
  phases: () => ["free"],
  label: (c) => c.rule,
  readout: "settle",
  // the baseline changes from batch to batch, and the normalisation follows the whole update: one thread only
  split: (c) => (c.baselineTau === 0 && c.norm === 0 ? "slices" : "none"),
  state: z.object({ baseline: z.number().refine(Number.isFinite, { error: "a finite number" }), started: z.boolean() }).strict(),
  create: (net, config) => new RewardHebbian(net, config),
});

const blendSchema = z
  .object({
    rule: z.literal("blended-contrast"),
    /** Weight of CHL in the blend (1 − λ goes to GeneRec's basic form). */
    lambda: z.number().min(0).max(1).default(0.5),
    /** Settling steps of each phase (fixed, so that every pattern settles alike in any batch). */
    steps: z.number().int().min(1).default(60),
    ...commonRuleFields,
  })
  .strict();

/** The blend as a contrast form: phase 0 free (⁻), phase 1 clamped (⁺). */
function blendForm(c) {
  const fixed = { maxSteps: c.steps, tolerance: Number.MIN_VALUE };
  const diff = [
    [1, 1],
    [0, -1],
  ];
  return {
    phases: [
      { phase: "free", ...fixed },
      { phase: "clamped", reuseDrive: true, ...fixed },
    ],
    // (1−λ)(y⁺ − y⁻)x⁻ᵀ + λ(y⁺x⁺ᵀ − y⁻x⁻ᵀ); with an input sender x⁺ = x⁻ and both are (y⁺ − y⁻)xᵀ
    products: (k, input) =>
      input
        ? [{ perPattern: k, post: diff, pre: "input" }]
        : [
            { perPattern: (1 - c.lambda) * k, post: diff, pre: [[0, 1]] },
            { perPattern: c.lambda * k, post: [[1, 1]], pre: [[1, 1]] },
            { perPattern: -c.lambda * k, post: [[0, 1]], pre: [[0, 1]] },
          ],
    scale: 1,
    bias: { add: 1, subtract: 0 },
  };
}

/** The blended contrast rule, declared by its form. */
export const blendedContrast = defineRule({
  name: "blended-contrast",
  summary: "λ·CHL + (1 − λ)·GeneRec, declared by its contrast form (a demonstration blend of Movellan 1990 and O'Reilly 1996)",
  schema: blendSchema,
  phases: () => ["free", "clamped"],
  label: (c) => `${c.rule} (λ=${c.lambda})`,
  readout: "settle",
  split: () => "rows",
  contrast: (c) => blendForm(c),
  create: (net, c) => new FormRule(net, c, blendForm(c)),
});

export const rules = [rewardHebbian, blendedContrast];
export const units = [nakaRushtonUnit];
