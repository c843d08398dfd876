/**
 * Rules on the feedforward pass (feedback paths ignored): backprop, the
 * reference; feedback alignment; direct feedback alignment.
 * @module
 */
import { z } from "zod";
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import { fillUnit } from "../kernels/units.js";
import type { Network } from "../network/network.js";
import { createRandom, fillNormal } from "../random/index.js";
import { maskTransposed } from "../network/pattern.js";
import { ParameterDelta } from "./delta.js";
import { batchSizeOf, checkedLayerValues, checkRates, computeAndApply, connectionRate, type Batch, type LearningRule, type RuleState } from "./base.js";
import { commonRuleFields, defineRule, type RuleConfigBase } from "./descriptor.js";
import { lossNameSchema, patternLossGradient, type LossName } from "../train/loss.js";

// the loss whose output error the rule sends back (default: the squared error; see LossName)
const lossField = { loss: lossNameSchema.default("squared-error") } as const;
const backpropSchema = z.object({ rule: z.literal("backprop"), ...lossField, ...commonRuleFields }).strict();
const feedbackAlignmentSchema = z.object({ rule: z.literal("feedback-alignment"), ...lossField, ...commonRuleFields }).strict();
const directFeedbackAlignmentSchema = z
  .object({
    rule: z.literal("direct-feedback-alignment"),
    ...lossField,
    scale: z.number({ error: "a feedback scale > 0" }).refine((v) => Number.isFinite(v) && v > 0, { error: "a feedback scale > 0" }).default(1),
    ...commonRuleFields,
  })
  .strict();
/** The config of a rule on the feedforward pass (backprop, feedback alignment, direct feedback alignment). @category Rules */
export interface FeedforwardConfig extends RuleConfigBase {
  readonly rule: "backprop" | "feedback-alignment" | "direct-feedback-alignment";
  /** Direct feedback alignment: scale of the fixed random feedback matrices. */
  readonly scale?: number | undefined;
  /** The loss whose output error the rule sends back (default the squared error). */
  readonly loss: LossName;
}
import type { BatchInput } from "../interop/ndarray.js";
import type { Snapshot } from "../network/settle.js";

/** Layers in an order where every forward connection goes from an earlier to a later layer. @category Rules */
export function forwardOrder(net: Network): number[] {
  const indeg = net.layers.map(() => 0);
  for (const c of net.connections) {
    if (c.from === c.to) fail("unsupported", `connections[${c.index}]`, "no lateral connection on a feedforward pass", c.label);
    indeg[c.to] = (indeg[c.to] as number) + 1;
  }
  const order: number[] = [];
  const ready = net.layers.filter((l) => indeg[l.index] === 0).map((l) => l.index);
  while (ready.length > 0) {
    const i = ready.shift() as number;
    order.push(i);
    for (const c of net.connections) {
      if (c.from !== i) continue;
      indeg[c.to] = (indeg[c.to] as number) - 1;
      if (indeg[c.to] === 0) ready.push(c.to);
    }
  }
  if (order.length !== net.layers.length) fail("unsupported", "connections", "forward connections without cycles (a feedforward pass)", "a cycle");
  for (const l of net.layers) {
    if (l.role !== "input" && l.inhibition.kind !== "none") fail("unsupported", `layers[${l.index}].inhibition`, "kind none on a feedforward pass (inhibition depends on the layer's own activity)", l.inhibition.kind);
  }
  return order;
}

/** Buffers of one feedforward pass: net input, activity, slope and error signal per layer (B×N). @category Rules */
export interface ForwardPass {
  readonly batch: number;
  readonly netInput: FloatArray[];
  readonly activity: FloatArray[];
  readonly slope: FloatArray[];
  readonly delta: FloatArray[];
}

/** Allocates a {@link ForwardPass} for `net` and `batch`. @category Rules */
export function createForwardPass(net: Network, batch: number): ForwardPass {
  const a = () => net.layers.map((l) => net.allocate(batch * l.size));
  return { batch, netInput: a(), activity: a(), slope: a(), delta: a() };
}

/** Runs the feedforward pass: `a_l = Σ W x_from + b_l`, `x_l = f(a_l)`; inputs taken as activity. @category Rules */
export function runForward(net: Network, order: readonly number[], batch: Batch, pass: ForwardPass): void {
  const B = pass.batch;
  const gemm = net.kernels.gemm;
  for (const i of order) {
    const l = net.layers[i]!;
    const x = pass.activity[i] as FloatArray;
    if (l.role === "input") {
      const v = checkedLayerValues(batch.inputs, l.name, B * l.size, "inputs");
      for (let k = 0; k < x.length; k++) x[k] = v[k] as number;
      continue;
    }
    const a = pass.netInput[i] as FloatArray;
    for (let p = 0; p < B; p++) a.set(l.bias, p * l.size);
    for (const c of net.incoming[i] ?? []) gemm(a, pass.activity[c.from] as FloatArray, c.weights, B, l.size, net.layers[c.from]!.size, false, true, 1, 1);
    fillUnit(net.kernels, l.unit, false, x, a);
    fillUnit(net.kernels, l.unit, true, pass.slope[i] as FloatArray, a);
  }
}

/** Writes into the output layers' `delta` the error `∂L/∂y ⊙ f'(a)` (squared error: `(y − t) ⊙ f'(a)`). */
function outputError(net: Network, batch: Batch, pass: ForwardPass, loss: LossName): void {
  for (const l of net.outputLayers) {
    const n = pass.batch * l.size;
    // a target row of NaN (not observed) gives no error (patternLossGradient writes zeros)
    const t = checkedLayerValues(batch.targets, l.name, n, "targets", l.size);
    const d = pass.delta[l.index] as FloatArray;
    const y = pass.activity[l.index] as FloatArray;
    const s = pass.slope[l.index] as FloatArray;
    for (let p = 0; p < pass.batch; p++) patternLossGradient(loss, y, t, p * l.size, l.size, d);
    for (let k = 0; k < n; k++) d[k] = (d[k] as number) * (s[k] as number);
  }
}

/** How the error reaches a hidden layer. */
type Carrier = "transpose" | "feedback" | "direct";

/**
 * Backward pass: error signals δ per layer, then `out = scale · gradient-shaped changes`
 * (`out_W = scale · δ_postᵀ x_pre / B`). With `transpose` this is backprop
 * (Rumelhart, Hinton & Williams 1986, Nature 323:533); `feedback` uses each connection's separate
 * fixed matrix B in place of Wᵀ (its separate feedback matrix, or a fixed random one the rule draws; Lillicrap et al.
 * 2016, Nat. Commun. 7:13276); `direct` sends the
 * output error through a fixed matrix per hidden layer (Nøkland 2016, NIPS 29).
 */
function backward(net: Network, order: readonly number[], batch: Batch, pass: ForwardPass, carrier: Carrier, direct: readonly (FloatArray | null)[], random: readonly (FloatArray | null)[], config: RuleConfigBase | null, out: ParameterDelta, loss: LossName): void {
  const B = pass.batch;
  const gemm = net.kernels.gemm;
  outputError(net, batch, pass, loss);
  const outputs = net.outputLayers;
  for (let o = order.length - 1; o >= 0; o--) {
    const i = order[o] as number;
    const l = net.layers[i]!;
    if (l.role === "input" || l.role === "output") continue;
    const d = pass.delta[i] as FloatArray;
    d.fill(0);
    if (carrier === "direct") {
      const D = direct[i] as FloatArray;
      let col = 0;
      const total = outputs.reduce((s, x) => s + x.size, 0);
      for (const out of outputs) {
        // d (B×n) += e_out (B×|out|) · D[:, col:col+|out|]ᵀ, D is n×total
        for (let p = 0; p < B; p++)
          for (let u = 0; u < l.size; u++) {
            let s = 0;
            for (let k = 0; k < out.size; k++) s += ((pass.delta[out.index] as FloatArray)[p * out.size + k] as number) * (D[u * total + col + k] as number);
            d[p * l.size + u] = (d[p * l.size + u] as number) + s;
          }
        col += out.size;
      }
    } else {
      for (const c of net.connections) {
        if (c.from !== i) continue;
        const n = net.layers[c.to]!.size;
        if (carrier === "transpose") gemm(d, pass.delta[c.to] as FloatArray, c.weights, B, l.size, n, false, false, 1, 1);
        else {
          const fb = c.feedback.kind === "separate" ? c.feedback.weights : (random[c.index] as FloatArray);
          gemm(d, pass.delta[c.to] as FloatArray, fb, B, l.size, n, false, true, 1, 1);
        }
      }
    }
    const s = pass.slope[i] as FloatArray;
    for (let k = 0; k < d.length; k++) d[k] = (d[k] as number) * (s[k] as number);
  }
  out.clear();
  for (const c of net.connections) {
    if (config !== null && c.spec.frozen) continue;
    const scale = config === null ? 1 : -connectionRate(config, c);
    gemm(out.weights[c.index] as FloatArray, pass.delta[c.to] as FloatArray, pass.activity[c.from] as FloatArray, net.layers[c.to]!.size, net.layers[c.from]!.size, B, true, false, scale / B, 0);
  }
  for (const l of net.layers) {
    if (l.role === "input") continue;
    const scale = config === null ? 1 : -config.rate;
    // bias change: the batch mean of the error signals
    net.kernels.sumRows(out.biases[l.index] as FloatArray, pass.delta[l.index] as FloatArray, B, l.size, scale / B, 0);
  }
}

/**
 * The exact gradient of `J = (1/B) Σ L(y, t)` on the feedforward pass (feedback ignored), L the loss
 * (default the squared error ½‖y − t‖²), by backprop (Rumelhart, Hinton & Williams 1986, Nature
 * 323:533). Returns `out`.
 * @category Verification
 */
export function feedforwardGradient(net: Network, batch: Batch, out?: ParameterDelta, loss: LossName = "squared-error"): ParameterDelta {
  const order = forwardOrder(net);
  const pass = createForwardPass(net, batchSizeOf(net, batch));
  runForward(net, order, batch, pass);
  const o = out ?? new ParameterDelta(net);
  backward(net, order, batch, pass, "transpose", [], [], null, o, loss);
  return o;
}

/**
 * Backprop, feedback alignment or direct feedback alignment on the feedforward pass, as a rule:
 * the change is `−ε ×` the (approximate) gradient of the loss (`loss`, default the squared error),
 * averaged over the batch.
 * @category Rules
 */
export class FeedforwardRule implements LearningRule {
  readonly phases = ["forward", "backward"] as const;
  readonly config: FeedforwardConfig;
  readonly net: Network;
  readonly lastFree: Snapshot | null = null;
  freeStart: Snapshot | null = null;

  saveState(): RuleState {
    return {};
  }

  loadState(_state: RuleState): void {
    // no internal state: the fixed feedback matrices are drawn from the network's seed
  }
  private readonly order: number[];
  private readonly carrier: Carrier;
  /** Direct feedback matrices (|layer| × total output size) per hidden layer (direct feedback alignment only). */
  readonly direct: (FloatArray | null)[];
  /** Fixed random feedback matrices (|from| × |to|) for connections without a separate feedback matrix (feedback alignment only). */
  readonly random: (FloatArray | null)[];
  private passes = new Map<number, ForwardPass>();
  private delta: ParameterDelta | null = null;

  constructor(net: Network, config: FeedforwardConfig) {
    this.net = net;
    this.config = config;
    checkRates(net, config);
    this.order = forwardOrder(net);
    this.carrier = config.rule === "backprop" ? "transpose" : config.rule === "feedback-alignment" ? "feedback" : "direct";
    const total = net.outputLayers.reduce((s, l) => s + l.size, 0);
    const root = createRandom(net.spec.seed);
    this.direct = net.layers.map((l) => {
      if (this.carrier !== "direct" || l.role !== "hidden") return null;
      const scale = config.rule === "direct-feedback-alignment" ? (config.scale ?? 1) : 1;
      return fillNormal(net.allocate(l.size * total), root.child(`direct-feedback/${l.name}`), 0, scale / Math.sqrt(total));
    });
    // feedback alignment: each connection's own separate feedback matrix, or else a fixed random one of the rule's
    this.random = net.connections.map((c) => {
      if (this.carrier !== "feedback" || c.feedback.kind === "separate" || net.layers[c.from]!.role === "input") return null;
      const n = net.layers[c.to]!.size;
      const m = net.layers[c.from]!.size;
      // the fixed matrix takes the connection's pattern: zero where the forward weight does not exist
      const b = fillNormal(net.allocate(m * n), root.child(`fixed-feedback/${c.label}`), 0, 1 / Math.sqrt(n));
      maskTransposed(c.pattern, b);
      return b;
    });
  }

  /** The activities of the last feedforward pass for a batch size. */
  pass(batch: number): ForwardPass {
    let p = this.passes.get(batch);
    if (p === undefined) {
      p = createForwardPass(this.net, batch);
      this.passes.set(batch, p);
    }
    return p;
  }

  computeDelta(batch: Batch, out: ParameterDelta): ParameterDelta {
    const pass = this.pass(batchSizeOf(this.net, batch));
    runForward(this.net, this.order, batch, pass);
    backward(this.net, this.order, batch, pass, this.carrier, this.direct, this.random, this.config, out, this.config.loss);
    return out;
  }

  step(batch: BatchInput, scale = 1): void {
    this.delta ??= new ParameterDelta(this.net);
    computeAndApply(this, this.delta, batch, scale);
  }
}

/** The descriptor of a rule on the feedforward pass: stateless, read out on the pass, split by slices. */
function feedforwardDescriptor<C extends FeedforwardConfig>(name: C["rule"], summary: string, schema: z.ZodType<C, unknown>) {
  return defineRule<C>({
    name,
    summary,
    schema,
    phases: () => ["forward", "backward"],
    label: (c) => (c.loss === "squared-error" ? c.rule : `${c.rule} (${c.loss})`),
    readout: "forward",
    split: () => "slices",
    objective: (c) => ({ loss: c.loss, on: "rate", factor: 1 }),
    create: (net, c) => new FeedforwardRule(net, c),
  });
}

/** Backprop on the feedforward pass (the reference). @category Rules */
export const backpropRule = feedforwardDescriptor("backprop", "backprop on the feedforward pass, −ε ∂J/∂W (Rumelhart, Hinton & Williams 1986)", backpropSchema);

/** Feedback alignment. @category Rules */
export const feedbackAlignmentRule = feedforwardDescriptor("feedback-alignment", "feedback alignment: backprop's error carried by fixed random feedback matrices (Lillicrap et al. 2016)", feedbackAlignmentSchema);

/** Direct feedback alignment. @category Rules */
export const directFeedbackAlignmentRule = feedforwardDescriptor(
  "direct-feedback-alignment",
  "direct feedback alignment: the output error sent to every hidden layer through a fixed random matrix (Nøkland 2016)",
  directFeedbackAlignmentSchema,
);
