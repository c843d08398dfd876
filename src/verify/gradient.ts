/**
 * Exact gradients of the squared error at the free fixed point: recurrent
 * backprop through the adjoint linear system, and central finite differences.
 * @module
 */
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import { parameterArraysOf, parameterSlots, slotArray, type Network } from "../network/network.js";
import { maskTransposed, parameterGradient, parameterPositions } from "../network/pattern.js";
import { Settler, type Snapshot, type LayerValues } from "../network/settle.js";
import { ParameterDelta } from "../rules/delta.js";
import { batchSizeOf, type Batch } from "../rules/base.js";
import { flatBatch, type BatchInput } from "../interop/ndarray.js";
import { solveInPlace } from "./linalg.js";
import { refuseUnknownOptions } from "../errors/options.js";
import { batchLoss, DEFAULT_OBJECTIVE, patternLossGradient, requireObjective, type LossName, type Objective } from "../train/loss.js";

/** Settling overrides used by the verification routines (tight by default). @category Verification */
export interface VerifySettling {
  /** Tolerance on the largest state change (default 1e-13). */
  readonly tolerance?: number | undefined;
  /** Maximum steps (default 100000). */
  readonly maxSteps?: number | undefined;
}

/** Options of the exact gradients: settling overrides and the loss. @category Verification */
export interface VerifyOptions extends VerifySettling {
  /**
   * The loss whose gradient is taken (default: the squared error on the output state, see
   * {@link DEFAULT_OBJECTIVE}): a loss name (on the output state) or a full {@link Objective}.
   */
  readonly loss?: LossName | Objective | undefined;
}

const VERIFY_OPTIONS = ["tolerance", "maxSteps", "loss"];

/** The objective named by verification options (default: squared error on the output state). */
export function objectiveOf(opts: { readonly loss?: LossName | Objective | undefined }, path = "options.loss"): Objective {
  return opts.loss === undefined ? DEFAULT_OBJECTIVE : requireObjective(path, opts.loss);
}

/**
 * The loss ebbflow verifies against: `J = (1/B) Σ_b factor · L(v_b, t_b)` over the output layers at the
 * free fixed point, v the output activity (rate dynamics) or, under energy dynamics, the output state u
 * (`on: "state"`, the default: the quantity the default nudging cost acts on) or the rate ρ(u)
 * (`on: "rate"`). Default: `L = ½‖v − t‖²`. A pattern's target row of NaN (not observed) adds nothing: with
 * a mask, J is the sum over the observed entries (still divided by the batch size B).
 * @category Verification
 */
export function freeLoss(net: Network, free: Snapshot, targets: LayerValues, objective: Objective = DEFAULT_OBJECTIVE): number {
  let j = 0;
  const o = requireObjective("objective", objective);
  const onState = net.spec.dynamics.kind === "energy" && o.on === "state";
  for (const l of net.outputLayers) {
    const y = (onState ? free.state : free.activity)[l.index] as FloatArray;
    const t = targets[l.name];
    if (t === undefined || t.length !== y.length) fail("shape_mismatch", `targets.${l.name}`, `${y.length} values`, t === undefined ? "missing" : `${t.length} values`);
    j += o.factor * batchLoss(o.loss, y, t, free.batch, l.size);
  }
  return j / free.batch;
}

/** Settles the free phase tightly and requires convergence. */
export function settleFree(net: Network, inputs: LayerValues, batch: number, opts: VerifySettling = {}): Snapshot {
  return new Settler(net, batch).settle({ phase: "free", inputs, tolerance: opts.tolerance ?? 1e-13, maxSteps: opts.maxSteps ?? 100000, requireConvergence: true });
}

/** Second derivative of a unit function from its slope, by Richardson-extrapolated central differences (error O(h⁴)). */
function curvature(slope: (x: number) => number, x: number): number {
  const h = 1e-3 * Math.max(1, Math.abs(x));
  const d1 = (slope(x + h) - slope(x - h)) / (2 * h);
  const d2 = (slope(x + h / 2) - slope(x - h / 2)) / h;
  return (4 * d2 - d1) / 3;
}

/**
 * The exact gradient dJ/dθ of {@link freeLoss} (the loss `opts.loss`) at the free fixed point, for every weight, learned
 * feedback matrix and bias, by recurrent backprop (Almeida 1987; Pineda 1987, Phys. Rev. Lett.
 * 59:2229): with `h(s) = 0` the fixed-point condition (rate: `f(η) − x`; energy:
 * `ρ'(u) η − u`), solve `(∂h/∂s)ᵀ λ = ∂J/∂s` and read `dJ/dθ = −λᵀ ∂h/∂θ`. For a network without
 * feedback this is plain backprop. For a connection with a pattern, θ are the pattern's free parameters
 * (see `parameterGradient`): zero outside the pattern, a shared parameter's gradient (the sum over its
 * positions) at each of its positions, a symmetric pair's `g_ij + g_ji` at both. Dense, O(n³) per pattern in the number n of free units:
 * meant for verification on small and medium networks.
 * @throws {@link EbbflowError} `unsupported` for k-winners-take-all layers (not differentiable),
 *   `divergence` if settling does not converge or the fixed point is not stable.
 * @category Verification
 */
export function recurrentGradient(net: Network, given: Batch | BatchInput, opts: VerifyOptions = {}, out?: ParameterDelta): ParameterDelta {
  refuseUnknownOptions(opts, VERIFY_OPTIONS);
  const batch: Batch = flatBatch(net, given);
  const objective = objectiveOf(opts);
  for (const l of net.layers) if (l.inhibition.kind === "kwta") fail("unsupported", `layers[${l.index}].inhibition`, "no k-winners-take-all (its inhibition is not differentiable)", "kwta");
  // stateful units change the fixed-point condition this derivation solves (per-layer tau does not)
  for (const l of net.layers) if (l.spec.adaptation !== undefined) fail("unsupported", `layers[${l.index}].adaptation`, "no adaptation (recurrent backprop here assumes stateless units)", "an adaptation");
  for (const c of net.connections) if (c.spec.depression !== undefined) fail("unsupported", `connections[${c.index}].depression`, "no depression (recurrent backprop here assumes static weights)", "a depression");
  const B = batchSizeOf(net, batch);
  const free = settleFree(net, batch.inputs, B, opts);
  const energy = net.spec.dynamics.kind === "energy";
  // index the free units
  const offset = net.layers.map(() => -1);
  let n = 0;
  for (const l of net.layers) {
    if (l.role === "input") continue;
    offset[l.index] = n;
    n += l.size;
  }
  // A: derivative of every free unit's net input with respect to every free unit's activity
  const A = new Float64Array(n * n);
  const addA = (row: number, col: number, v: number) => {
    A[row * n + col] = (A[row * n + col] as number) + v;
  };
  for (const c of net.connections) {
    const F = net.layers[c.from]!;
    const T = net.layers[c.to]!;
    const of = offset[c.from] as number;
    const ot = offset[c.to] as number;
    if (of < 0) continue;
    for (let i = 0; i < T.size; i++)
      for (let j = 0; j < F.size; j++) {
        const w = c.weights[i * F.size + j] as number;
        addA(ot + i, of + j, w);
        if (c.from !== c.to) {
          if (c.feedback.kind === "tied") addA(of + j, ot + i, c.feedback.gain * w);
          else if (c.feedback.kind === "separate") addA(of + j, ot + i, c.feedback.weights[j * T.size + i] as number);
        }
      }
  }
  for (const l of net.layers) {
    if (l.inhibition.kind !== "pooled" || l.role === "input") continue;
    const o = offset[l.index] as number;
    const g = l.inhibition.gain / l.size;
    for (let i = 0; i < l.size; i++) for (let k = 0; k < l.size; k++) addA(o + i, o + k, -g);
  }
  const grad = out ?? new ParameterDelta(net);
  grad.clear();
  const H = new Float64Array(n * n);
  const lam = new Float64Array(n);
  const eta = new Float64Array(n);
  const s = new Float64Array(n);
  const r = new Float64Array(n);
  const q = new Float64Array(n);
  const x = new Float64Array(n);
  const delta = new Float64Array(n);
  const dv = new Float64Array(B * Math.max(0, ...net.outputLayers.map((l) => l.size)));
  for (let p = 0; p < B; p++) {
    for (const l of net.layers) {
      const o = offset[l.index] as number;
      if (o < 0) continue;
      for (let i = 0; i < l.size; i++) x[o + i] = (free.activity[l.index] as FloatArray)[p * l.size + i] as number;
    }
    // net input at the fixed point: bias + inputs' drive + A x
    for (const l of net.layers) {
      const o = offset[l.index] as number;
      if (o < 0) continue;
      for (let i = 0; i < l.size; i++) eta[o + i] = l.bias[i] as number;
    }
    for (const c of net.connections) {
      const F = net.layers[c.from]!;
      if (F.role !== "input") continue;
      const T = net.layers[c.to]!;
      const ot = offset[c.to] as number;
      const xin = free.activity[c.from] as FloatArray;
      for (let i = 0; i < T.size; i++) {
        let sum = 0;
        for (let j = 0; j < F.size; j++) sum += (c.weights[i * F.size + j] as number) * (xin[p * F.size + j] as number);
        eta[ot + i] = (eta[ot + i] as number) + sum;
      }
    }
    for (let i = 0; i < n; i++) {
      let sum = 0;
      for (let k = 0; k < n; k++) sum += (A[i * n + k] as number) * (x[k] as number);
      eta[i] = (eta[i] as number) + sum;
    }
    // derivative factors per unit
    for (const l of net.layers) {
      const o = offset[l.index] as number;
      if (o < 0) continue;
      for (let i = 0; i < l.size; i++) {
        if (energy) {
          const u = (free.state[l.index] as FloatArray)[p * l.size + i] as number;
          const sl = l.unit.slope(u);
          s[o + i] = sl;
          r[o + i] = sl;
          q[o + i] = curvature((v) => l.unit.slope(v), u) * (eta[o + i] as number);
        } else {
          s[o + i] = l.unit.slope(eta[o + i] as number);
          r[o + i] = 1;
          q[o + i] = 0;
        }
      }
    }
    // Hᵀ λ = g with H = diag(q) + diag(s) A diag(r) − I ; store Hᵀ directly
    for (let i = 0; i < n; i++)
      for (let k = 0; k < n; k++) H[k * n + i] = (s[i] as number) * (A[i * n + k] as number) * (r[k] as number) + (i === k ? (q[i] as number) - 1 : 0);
    lam.fill(0);
    for (const l of net.outputLayers) {
      const o = offset[l.index] as number;
      const t = batch.targets[l.name];
      if (t === undefined || t.length !== B * l.size) fail("shape_mismatch", `targets.${l.name}`, `${B * l.size} values`, t === undefined ? "missing" : `${t.length} values`);
      // ∂J/∂v of the loss, then the chain rule to the unknowns (u under energy dynamics: · ρ'(u) for a cost on the rate)
      const onRate = energy && objective.on === "rate";
      const y = (energy && !onRate ? free.state : free.activity)[l.index] as FloatArray;
      patternLossGradient(objective.loss, y, t, p * l.size, l.size, dv);
      for (let i = 0; i < l.size; i++) lam[o + i] = (objective.factor * (dv[p * l.size + i] as number) * (onRate ? (s[o + i] as number) : 1)) / B;
    }
    solveInPlace(H, lam, n);
    for (let i = 0; i < n; i++) delta[i] = -(s[i] as number) * (lam[i] as number);
    // dJ/dθ = δᵀ ∂η/∂θ
    for (const c of net.connections) {
      const F = net.layers[c.from]!;
      const T = net.layers[c.to]!;
      const of = offset[c.from] as number;
      const ot = offset[c.to] as number;
      const xf = free.activity[c.from] as FloatArray;
      const xt = free.activity[c.to] as FloatArray;
      const gw = grad.weights[c.index] as FloatArray;
      for (let i = 0; i < T.size; i++)
        for (let j = 0; j < F.size; j++) {
          let v = (delta[ot + i] as number) * (xf[p * F.size + j] as number);
          if (of >= 0 && c.from !== c.to && c.feedback.kind === "tied") v += c.feedback.gain * (delta[of + j] as number) * (xt[p * T.size + i] as number);
          gw[i * F.size + j] = (gw[i * F.size + j] as number) + v;
        }
      const gf = grad.feedback[c.index];
      if (gf && of >= 0) for (let j = 0; j < F.size; j++) for (let i = 0; i < T.size; i++) gf[j * T.size + i] = (gf[j * T.size + i] as number) + (delta[of + j] as number) * (xt[p * T.size + i] as number);
    }
    for (const l of net.layers) {
      const o = offset[l.index] as number;
      if (o < 0) continue;
      const gb = grad.biases[l.index] as FloatArray;
      for (let i = 0; i < l.size; i++) gb[i] = (gb[i] as number) + (delta[o + i] as number);
    }
  }
  // a connection with a pattern: the gradient of its free parameters (shared positions summed, symmetric pairs g_ij + g_ji), at their positions
  for (const c of net.connections) {
    if (c.pattern.plain) continue;
    parameterGradient(c.pattern, grad.weights[c.index] as FloatArray);
    const gf = grad.feedback[c.index];
    if (gf) maskTransposed(c.pattern, gf);
  }
  return grad;
}

/**
 * Every learned parameter array of a network with a name, aligned with {@link ParameterDelta}: weights and
 * learned feedback matrices connection by connection, then the biases of the non-input layers (the order
 * of the reports), from {@link parameterSlots}.
 */
export function parameterArrays(net: Network, d: ParameterDelta): { name: string; kind: "weights" | "feedback" | "bias"; param: FloatArray; delta: FloatArray }[] {
  const own = parameterArraysOf(net);
  const out = parameterSlots(net)
    .filter((s) => !(s.kind === "bias" && net.layers[s.index]!.role === "input"))
    .map((s) => ({ name: s.name, kind: s.kind, param: slotArray(own, s) as FloatArray, delta: slotArray(d, s) }))
    .filter((e): e is { name: string; kind: "weights" | "feedback" | "bias"; param: FloatArray; delta: FloatArray } => e.delta !== null);
  return [...out.filter((e) => e.kind !== "bias"), ...out.filter((e) => e.kind === "bias")];
}

/**
 * The gradient of {@link freeLoss} (the loss `opts.loss`) by central finite differences, `(J(θ+h) − J(θ−h)) / 2h` per
 * parameter, each evaluation settling the free phase from rest. Costs two settlings per parameter. A
 * pattern's free parameter moves all its positions together (entries outside the pattern stay 0).
 * The network is restored exactly afterwards.
 * @category Verification
 */
export function finiteDifferenceGradient(net: Network, given: Batch | BatchInput, opts: VerifyOptions & { readonly step?: number | undefined } = {}, out?: ParameterDelta): ParameterDelta {
  refuseUnknownOptions(opts, [...VERIFY_OPTIONS, "step"]);
  const batch: Batch = flatBatch(net, given);
  const objective = objectiveOf(opts);
  const h = opts.step ?? 1e-6;
  const B = batchSizeOf(net, batch);
  const grad = out ?? new ParameterDelta(net);
  grad.clear();
  const loss = () => freeLoss(net, settleFree(net, batch.inputs, B, opts), batch.targets, objective);
  const positions = new Map<FloatArray, Int32Array[]>();
  for (const c of net.connections) if (!c.pattern.plain) positions.set(c.weights, parameterPositions(c.pattern));
  for (const { param, delta } of parameterArrays(net, grad)) {
    const tied = positions.get(param);
    if (tied !== undefined) {
      // one free parameter of a pattern: its positions move together
      for (const at of tied) {
        const keep = param[at[0] as number] as number;
        const set = (v: number) => {
          for (const k of at) param[k] = v;
        };
        set(keep + h);
        const up = loss();
        set(keep - h);
        const down = loss();
        set(keep);
        for (const k of at) delta[k] = (up - down) / (2 * h);
      }
      continue;
    }
    for (let k = 0; k < param.length; k++) {
      const keep = param[k] as number;
      param[k] = keep + h;
      const up = loss();
      param[k] = keep - h;
      const down = loss();
      param[k] = keep;
      delta[k] = (up - down) / (2 * h);
    }
  }
  for (const c of net.connections) {
    const gf = grad.feedback[c.index];
    if (gf && !c.pattern.plain) maskTransposed(c.pattern, gf);
  }
  return grad;
}
