import { describe, it, expect, beforeAll } from "vitest";
import fc from "fast-check";
import * as tf from "@tensorflow/tfjs-core";
import "@tensorflow/tfjs-backend-cpu";
import "@tensorflow/tfjs-core/dist/register_all_gradients.js";
import {
  buildNetwork,
  createRule,
  recurrentGradient,
  finiteDifferenceGradient,
  feedforwardGradient,
  gradientAgreement,
  patternLoss,
  patternLossGradient,
  ParameterDelta,
  EbbflowError,
  createRandom,
  Settler,
  Trainer,
  createDataset,
  type LossName,
  type Network,
  type ParameterDelta as PD,
} from "../../src/index.js";
import { check } from "../helpers/property.js";
import { EPS64, relativeError } from "../helpers/tolerance.js";

const flat = (d: PD) => [...d.weights.flatMap((w) => Array.from(w)), ...d.feedback.flatMap((f) => (f ? Array.from(f) : [])), ...d.biases.flatMap((b) => Array.from(b))];

beforeAll(async () => {
  tf.env().set("IS_TEST", true);
  await tf.setBackend("cpu");
});

/** A random one-hot (or soft) target vector of n classes. */
const target = (rng: ReturnType<typeof createRandom>, n: number, soft: boolean): number[] => {
  if (soft) {
    const raw = Array.from({ length: n }, () => rng.uniform() + 0.05);
    const s = raw.reduce((a, b) => a + b, 0);
    return raw.map((v) => v / s);
  }
  const k = Math.floor(rng.uniform() * n);
  return Array.from({ length: n }, (_, i) => (i === k ? 1 : 0));
};

/** tfjs's value of a loss of logits/probabilities v against t (one pattern). */
function tfLoss(loss: LossName, v: tf.Tensor, t: tf.Tensor): tf.Tensor {
  if (loss === "squared-error") return tf.mul(0.5, tf.sum(tf.square(tf.sub(v, t))));
  if (loss === "binary-cross-entropy") return tf.neg(tf.sum(tf.add(tf.mul(t, tf.log(v)), tf.mul(tf.sub(1, t), tf.log(tf.sub(1, v))))));
  return tf.neg(tf.sum(tf.mul(t, tf.logSoftmax(v))));
}

describe("losses", () => {
  it("each loss's gradient equals central finite differences (1e-7, float64) and tfjs autodiff (float32 tolerance), on random vectors", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 2, max: 6 }), fc.constantFrom<LossName>("squared-error", "binary-cross-entropy", "softmax-cross-entropy"), fc.boolean(), (seed, n, loss, soft) => {
        const rng = createRandom(seed).child("loss");
        const v = Array.from({ length: n }, () => (loss === "binary-cross-entropy" ? 0.05 + 0.9 * rng.uniform() : 3 * rng.normal()));
        const t = loss === "softmax-cross-entropy" ? target(rng, n, soft) : Array.from({ length: n }, () => rng.uniform());
        const g = new Float64Array(n);
        patternLossGradient(loss, v, t, 0, n, g);
        const h = 1e-5;
        const fd = v.map((_, k) => {
          const up = v.slice();
          const down = v.slice();
          up[k]! += h;
          down[k]! -= h;
          return (patternLoss(loss, up, t, 0, n) - patternLoss(loss, down, t, 0, n)) / (2 * h);
        });
        // relative error to 1e-7, or, where the gradient nearly vanishes (a saturated softmax: p ≈ t), the rounding
        // floor of a central difference, about ε·|f|/h (Nocedal & Wright, Numerical Optimization, 2nd ed., §8.1)
        const f = Math.abs(patternLoss(loss, v, t, 0, n));
        const floor = (EPS64 * Math.max(1, f)) / h;
        let diff = 0;
        let size = 0;
        g.forEach((x, k) => {
          diff += (x - fd[k]!) ** 2;
          size += fd[k]! ** 2;
        });
        expect(Math.sqrt(diff)).toBeLessThan(1e-7 * Math.sqrt(size) + 100 * floor);
        const tv = tf.tensor1d(v);
        const tt = tf.tensor1d(t);
        const value = tfLoss(loss, tv, tt);
        const grad = tf.grad((x: tf.Tensor) => tfLoss(loss, x, tt))(tv);
        expect(Math.abs(value.dataSync()[0]! - patternLoss(loss, v, t, 0, n))).toBeLessThan(1e-5 * Math.max(1, Math.abs(value.dataSync()[0]!)));
        // float32: elementwise to 2e-5 relative or absolute (the gradient p − t cancels when p ≈ t)
        const ref = grad.dataSync();
        g.forEach((x, k) => expect(Math.abs(x - ref[k]!)).toBeLessThan(2e-5 * Math.max(1, Math.abs(ref[k]!))));
        tf.dispose([tv, tt, value, grad]);
      }),
      60,
    );
  });
});

/** A small recurrent net (tied feedback gain 1) for the losses: logistic hidden units, output `out`. */
function recurrentNet(seed: number, h: number, o: number, kind: "rate" | "energy", output: "logistic" | "linear"): Network {
  const rng = createRandom(seed).child("biases");
  const unit = kind === "energy" ? { kind: "logistic" as const, gain: 4, offset: 0.5 } : { kind: "logistic" as const };
  return buildNetwork({
    seed,
    layers: [
      { name: "in", size: 3, role: "input" },
      { name: "h", size: h, role: "hidden", unit, bias: Array.from({ length: h }, () => rng.normal() * 0.3) },
      { name: "out", size: o, role: "output", unit: output === "linear" && kind === "rate" ? { kind: "linear" } : unit, bias: Array.from({ length: o }, () => rng.normal() * 0.3) },
    ],
    connections: [
      { from: "in", to: "h", init: { kind: "normal", std: 0.6 }, feedback: { kind: "tied", gain: 1 } },
      { from: "h", to: "out", init: { kind: "normal", std: kind === "rate" && output === "linear" ? 0.3 : 0.6 }, feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { kind, dt: kind === "energy" ? 0.2 : 0.5, maxSteps: 100000, tolerance: 1e-14 },
  });
}

describe("exact gradients of the cross-entropy losses", () => {
  it("recurrent backprop equals central finite differences to 1e-7 (float64) for softmax and binary cross-entropy, rate and energy dynamics, cost on the state and on the rate", () => {
    check(
      fc.property(
        fc.integer({ min: 0, max: 1e6 }),
        fc.integer({ min: 1, max: 3 }),
        fc.integer({ min: 2, max: 3 }),
        fc.constantFrom<"rate" | "energy">("rate", "energy"),
        fc.constantFrom<LossName>("softmax-cross-entropy", "binary-cross-entropy"),
        fc.constantFrom<"state" | "rate">("state", "rate"),
        (seed, h, o, kind, lossName, on) => {
          // binary cross-entropy needs values in (0, 1): on the rate (energy) or logistic outputs (rate dynamics)
          const onQ = lossName === "binary-cross-entropy" && kind === "energy" ? "rate" : on;
          const net = recurrentNet(seed, h, o, kind, lossName === "softmax-cross-entropy" ? "linear" : "logistic");
          const rng = createRandom(seed).child("targets");
          const batch = { inputs: { in: [0.3, -0.5, 0.8, 0.9, 0.1, -0.4] }, targets: { out: [...target(rng, o, false), ...target(rng, o, true)] } };
          const loss = { loss: lossName, on: onQ, factor: 1 } as const;
          const rbp = flat(recurrentGradient(net, batch, { loss }));
          const fd = flat(finiteDifferenceGradient(net, batch, { loss, step: 1e-6 }));
          expect(relativeError(rbp, fd)).toBeLessThan(1e-7);
        },
      ),
      20,
    );
  });

  it("with no feedback, recurrent backprop and feedforward backprop equal tfjs autodiff of the same graph (softmax and binary cross-entropy, float32 tolerance)", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 1, max: 4 }), fc.integer({ min: 2, max: 4 }), fc.constantFrom<LossName>("softmax-cross-entropy", "binary-cross-entropy"), (seed, h, o, lossName) => {
        const rng = createRandom(seed).child("data");
        const softmax = lossName === "softmax-cross-entropy";
        const net = buildNetwork({
          seed,
          layers: [
            { name: "in", size: 3, role: "input" },
            { name: "h", size: h, role: "hidden", unit: { kind: "tanh" }, bias: Array.from({ length: h }, () => rng.normal() * 0.5) },
            { name: "out", size: o, role: "output", unit: { kind: softmax ? "linear" : "logistic" }, bias: Array.from({ length: o }, () => rng.normal() * 0.5) },
          ],
          connections: [
            { from: "in", to: "h", init: { kind: "normal", std: 1 } },
            { from: "h", to: "out", init: { kind: "normal", std: 1 } },
          ],
          dynamics: { kind: "rate", dt: 1, maxSteps: 1000, tolerance: 1e-14 },
        });
        const B = 2;
        const x = Array.from({ length: B * 3 }, () => rng.normal());
        const t = [...target(rng, o, false), ...target(rng, o, true)];
        const batch = { inputs: { in: x }, targets: { out: t } };
        const ours = recurrentGradient(net, batch, { loss: lossName });
        const ff = feedforwardGradient(net, batch, undefined, lossName);
        expect(relativeError(flat(ours), flat(ff))).toBeLessThan(1e-10);
        const [W0, W1] = net.connections.map((c) => tf.tensor2d(Array.from(c.weights), [net.layers[c.to]!.size, net.layers[c.from]!.size]));
        const bh = tf.tensor1d(Array.from(net.layers[1]!.bias));
        const bo = tf.tensor1d(Array.from(net.layers[2]!.bias));
        const X = tf.tensor2d(x, [B, 3]);
        const T = tf.tensor2d(t, [B, o]);
        const f = (w0: tf.Tensor, w1: tf.Tensor, b0: tf.Tensor, b1: tf.Tensor) => {
          const hid = tf.tanh(tf.add(tf.matMul(X, w0 as tf.Tensor2D, false, true), b0));
          const z = tf.add(tf.matMul(hid, w1 as tf.Tensor2D, false, true), b1);
          const l = softmax ? tf.neg(tf.sum(tf.mul(T, tf.logSoftmax(z)))) : tf.neg(tf.sum(tf.add(tf.mul(T, tf.log(tf.sigmoid(z))), tf.mul(tf.sub(1, T), tf.log(tf.sub(1, tf.sigmoid(z)))))));
          return tf.div(l, B) as tf.Scalar;
        };
        const grads = tf.grads(f)([W0!, W1!, bh, bo]);
        const ref = [...grads[0]!.dataSync(), ...grads[1]!.dataSync(), ...grads[2]!.dataSync(), ...grads[3]!.dataSync()];
        const mine = [...ours.weights[0]!, ...ours.weights[1]!, ...ours.biases[1]!, ...ours.biases[2]!];
        expect(relativeError(mine, ref)).toBeLessThan(2e-5);
        tf.dispose([W0!, W1!, bh, bo, X, T, ...grads]);
      }),
      30,
    );
  });

  it("the verification functions refuse options they do not know", () => {
    const net = recurrentNet(1, 2, 2, "rate", "logistic");
    const batch = { inputs: { in: [0.1, 0.2, 0.3] }, targets: { out: [1, 0] } };
    for (const call of [
      () => recurrentGradient(net, batch, { lose: "softmax-cross-entropy" } as never),
      () => finiteDifferenceGradient(net, batch, { tolerence: 1e-9 } as never),
      () => recurrentGradient(net, batch, { loss: "hinge" as never }),
    ]) {
      try {
        call();
        expect.unreachable();
      } catch (e) {
        expect(e).toBeInstanceOf(EbbflowError);
        expect((e as EbbflowError).code).toBe("invalid_parameter");
      }
    }
  });
});

/** An energy-dynamics net for EqProp: smooth logistic units (gain 4), tied feedback gain 1. */
function eqpropNet(seed: number, h: number, o: number): Network {
  const rng = createRandom(seed).child("biases");
  const unit = { kind: "logistic" as const, gain: 4, offset: 0.5 };
  return buildNetwork({
    seed,
    layers: [
      { name: "in", size: 3, role: "input" },
      { name: "h", size: h, role: "hidden", unit, bias: Array.from({ length: h }, () => 0.2 * rng.normal()) },
      { name: "out", size: o, role: "output", unit, bias: Array.from({ length: o }, () => 0.1 * rng.normal()) },
    ],
    connections: [
      { from: "in", to: "h", init: { kind: "normal", std: 0.5 }, feedback: { kind: "tied", gain: 1 } },
      { from: "h", to: "out", init: { kind: "normal", std: 0.5 }, feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { kind: "energy", dt: 0.2, maxSteps: 100000, tolerance: 1e-14 },
  });
}

describe("Equilibrium Propagation with the cross-entropy losses", () => {
  it("on softmax cross-entropy (cost on the state or the rate) follows the gradient: bias O(β) one-sided (ratio in [1.7, 2.3]), O(β²) symmetric (ratio in [3.4, 4.6]) (Scellier & Bengio 2017; Laborieux et al. 2021)", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 2, max: 3 }), fc.constantFrom<"state" | "rate">("state", "rate"), (seed, h, cost) => {
        const net = eqpropNet(seed, h, 3);
        const b = { inputs: { in: [0.2, 0.7, 0.4] }, targets: { out: [0, 1, 0] } };
        const loss = { loss: "softmax-cross-entropy", on: cost, factor: 1 } as const;
        const exact = flat(recurrentGradient(net, b, { loss })).map((v) => -v);
        const err = (beta: number, mode: "one-sided" | "symmetric") =>
          relativeError(flat(createRule(net, { rule: "eqprop", beta, rate: 1, mode, loss: "softmax-cross-entropy", cost }).computeDelta(b, new ParameterDelta(net))), exact);
        const r1 = err(0.002, "one-sided") / err(0.001, "one-sided");
        const r2 = err(0.005, "symmetric") / err(0.0025, "symmetric");
        expect(r1).toBeGreaterThanOrEqual(1.7);
        expect(r1).toBeLessThanOrEqual(2.3);
        expect(r2).toBeGreaterThanOrEqual(3.4);
        expect(r2).toBeLessThanOrEqual(4.6);
      }),
      8,
    );
  });

  it("gradientAgreement with loss binary-cross-entropy configures EqProp with it and compares with that loss's gradient (relative error small at small β)", () => {
    const net = eqpropNet(7, 3, 2);
    const batch = { inputs: { in: [0.2, 0.7, 0.4, 0.9, 0.1, 0.5] }, targets: { out: [1, 0, 0, 1] } };
    const r = gradientAgreement(net, { rule: "eqprop", beta: 0.0005, rate: 1, mode: "symmetric", cost: "rate" }, batch, { loss: "binary-cross-entropy" });
    expect(r.loss).toEqual({ loss: "binary-cross-entropy", on: "rate", factor: 1 });
    expect(r.overall.relativeError).toBeLessThan(1e-4);
    expect(r.rule).toContain("binary-cross-entropy");
    // a rule told another loss than the option is refused, naming rule.loss
    try {
      gradientAgreement(net, createRule(net, { rule: "eqprop", beta: 0.01, rate: 1 }), batch, { loss: "binary-cross-entropy" });
      expect.unreachable();
    } catch (e) {
      expect((e as EbbflowError).path).toBe("rule.loss");
    }
  });

  it("squaredHalf: false nudges with β‖v − t‖², twice the force: the estimate is twice the gradient of ½‖v − t‖² (and agrees with the factor-2 reference)", () => {
    const net = eqpropNet(11, 2, 2);
    const b = { inputs: { in: [0.3, 0.5, 0.8] }, targets: { out: [0.9, 0.1] } };
    const half = flat(createRule(net, { rule: "eqprop", beta: 0.002, rate: 1, mode: "symmetric", cost: "rate" }).computeDelta(b, new ParameterDelta(net)));
    const full = flat(createRule(net, { rule: "eqprop", beta: 0.002, rate: 1, mode: "symmetric", cost: "rate", squaredHalf: false }).computeDelta(b, new ParameterDelta(net)));
    expect(relativeError(full, half.map((v) => 2 * v))).toBeLessThan(1e-4);
    const r = gradientAgreement(net, { rule: "eqprop", beta: 0.002, rate: 1, mode: "symmetric", cost: "rate", squaredHalf: false }, b);
    expect(r.loss.factor).toBe(2);
    expect(r.overall.relativeError).toBeLessThan(1e-4);
    expect(() => createRule(net, { rule: "eqprop", beta: 0.1, rate: 1, loss: "softmax-cross-entropy", squaredHalf: false })).toThrow(EbbflowError);
  });

  it("the default cost, given explicitly, settles the nudged phase to the same bits as no cost (squared error on the state)", () => {
    const net = eqpropNet(5, 3, 2);
    const inputs = { in: [0.2, 0.7, 0.4] };
    const targets = { out: [0.9, 0.1] };
    const s = new Settler(net, 1);
    const a = s.settle({ phase: "nudged", beta: 0.5, inputs, targets, maxSteps: 50 }).state.map((x) => Array.from(x));
    const c = s.settle({ phase: "nudged", beta: 0.5, inputs, targets, maxSteps: 50, cost: { loss: "squared-error", on: "state", factor: 1 } }).state.map((x) => Array.from(x));
    expect(c).toEqual(a);
  });
});

describe("the training loss", () => {
  it("training.loss is the loss of rules that follow one (EqProp) and of the `loss` metric; a rule naming another loss is refused at rule.loss", () => {
    const net = eqpropNet(3, 3, 2);
    const data = createDataset("two", [[0.2, 0.7, 0.4], [0.9, 0.1, 0.5]], [[1, 0], [0, 1]]);
    const t = new Trainer(net, { rule: "eqprop", beta: 0.5, rate: 0.1 }, data, { epochs: 1, batchSize: 2, loss: "softmax-cross-entropy" }, { seed: 1 });
    expect((t.rule.config as { loss?: string }).loss).toBe("softmax-cross-entropy");
    const m = t.runEpoch().train!;
    expect(m.loss).toBeCloseTo(m.softmaxCrossEntropy, 12);
    try {
      new Trainer(net, { rule: "eqprop", beta: 0.5, rate: 0.1, loss: "squared-error" }, data, { epochs: 1, loss: "binary-cross-entropy" });
      expect.unreachable();
    } catch (e) {
      expect((e as EbbflowError).path).toBe("rule.loss");
    }
  });
});
