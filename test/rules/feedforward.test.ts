import { describe, it, expect, beforeAll } from "vitest";
import fc from "fast-check";
import * as tf from "@tensorflow/tfjs-core";
import "@tensorflow/tfjs-backend-cpu";
import "@tensorflow/tfjs-core/dist/register_all_gradients.js";
import { buildNetwork, createRule, feedforwardGradient, ParameterDelta, createRandom, type Network, type FloatArray } from "../../src/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";

beforeAll(async () => {
  tf.env().set("IS_TEST", true);
  await tf.setBackend("cpu");
});

describe("backprop on the feedforward pass", () => {
  it("equals the autodiff gradient of @tensorflow/tfjs-core (independent library) on random small nets, to float32 tolerance", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 1, max: 5 }), fc.integer({ min: 1, max: 4 }), fc.integer({ min: 1, max: 3 }), fc.constantFrom("logistic", "tanh", "softplus"), (seed, h, o, B, unit) => {
        const rng = createRandom(seed).child("data");
        const net = buildNetwork({
          seed,
          layers: [
            { name: "in", size: 3, role: "input" },
            { name: "h", size: h, role: "hidden", unit: { kind: unit }, bias: Array.from({ length: h }, () => rng.normal() * 0.5) },
            { name: "out", size: o, role: "output", unit: { kind: "logistic" }, bias: Array.from({ length: o }, () => rng.normal() * 0.5) },
          ],
          connections: [
            { from: "in", to: "h", init: { kind: "normal", std: 1 } },
            { from: "h", to: "out", init: { kind: "normal", std: 1 } },
            { from: "in", to: "out", init: { kind: "normal", std: 1 } },
          ],
        });
        const x = Array.from({ length: B * 3 }, () => rng.normal());
        const t = Array.from({ length: B * o }, () => rng.uniform());
        const ours = feedforwardGradient(net, { inputs: { in: x }, targets: { out: t } });
        const W = net.connections.map((c) => tf.tensor2d(Array.from(c.weights), [net.layers[c.to]!.size, net.layers[c.from]!.size]));
        const bh = tf.tensor1d(Array.from(net.layers[1]!.bias));
        const bo = tf.tensor1d(Array.from(net.layers[2]!.bias));
        const X = tf.tensor2d(x, [B, 3]);
        const T = tf.tensor2d(t, [B, o]);
        const act = (z: tf.Tensor) => (unit === "logistic" ? tf.sigmoid(z) : unit === "tanh" ? tf.tanh(z) : tf.softplus(z));
        const loss = (w0: tf.Tensor, w1: tf.Tensor, w2: tf.Tensor, b0: tf.Tensor, b1: tf.Tensor) => {
          const hid = act(tf.add(tf.matMul(X, w0 as tf.Tensor2D, false, true), b0));
          const y = tf.sigmoid(tf.add(tf.add(tf.matMul(hid, w1 as tf.Tensor2D, false, true), tf.matMul(X, w2 as tf.Tensor2D, false, true)), b1));
          return tf.div(tf.mul(0.5, tf.sum(tf.square(tf.sub(y, T)))), B) as tf.Scalar;
        };
        const grads = tf.grads(loss)([W[0]!, W[1]!, W[2]!, bh, bo]);
        const compare = (a: ArrayLike<number>, g: tf.Tensor) => {
          const b = g.dataSync();
          for (let i = 0; i < b.length; i++) expect(Math.abs((a[i] as number) - (b[i] as number))).toBeLessThan(2e-5 * Math.max(1, Math.abs(b[i] as number)));
        };
        compare(ours.weights[0]!, grads[0]!);
        compare(ours.weights[1]!, grads[1]!);
        compare(ours.weights[2]!, grads[2]!);
        compare(ours.biases[1]!, grads[3]!);
        compare(ours.biases[2]!, grads[4]!);
        tf.dispose([...W, bh, bo, X, T, ...grads]);
      }),
      40,
    );
  });

  it("reproduces the 2-2-2 worked example of Mazur (2015), methods.md item 11: forward values, E_total and one update", () => {
    const net = buildNetwork({
      layers: [
        { name: "i", size: 2, role: "input" },
        { name: "h", size: 2, role: "hidden", bias: 0.35 },
        { name: "o", size: 2, role: "output", bias: 0.6 },
      ],
      connections: [
        { from: "i", to: "h", weights: [0.15, 0.2, 0.25, 0.3] },
        { from: "h", to: "o", weights: [0.4, 0.45, 0.5, 0.55] },
      ],
    });
    const batch = { inputs: { i: [0.05, 0.1] }, targets: { o: [0.01, 0.99] } };
    const rule = createRule(net, { rule: "backprop", rate: 0.5 });
    const d = rule.computeDelta(batch, new ParameterDelta(net));
    const pass = (rule as unknown as { pass(b: number): { activity: FloatArray[]; netInput: FloatArray[] } }).pass(1);
    expectClose(pass.netInput[1]![0]!, 0.3775, 1e-12, "net_h1 [SRC-P]");
    expectClose(pass.activity[1]![0]!, 0.593269992, 1e-9, "out_h1");
    expectClose(pass.activity[1]![1]!, 0.596884378, 1e-9, "out_h2");
    expectClose(pass.netInput[2]![0]!, 1.105905967, 1e-9, "net_o1");
    expectClose(pass.activity[2]![0]!, 0.75136507, 1e-9, "out_o1");
    expectClose(pass.activity[2]![1]!, 0.772928465, 1e-9, "out_o2");
    const y = pass.activity[2]!;
    expectClose(0.5 * (0.01 - y[0]!) ** 2 + 0.5 * (0.99 - y[1]!) ** 2, 0.298371109, 1e-9, "E_total [SRC-P]");
    const g = feedforwardGradient(net, batch);
    expectClose(g.weights[1]![0]!, 0.082167041, 1e-9, "dE/dw5");
    expectClose(g.weights[0]![0]!, 0.000438568, 1e-9, "dE/dw1");
    // updated weights (the example does not update biases): w + d, d = -0.5 dE/dw
    const w5to8 = [0.35891648, 0.408666186, 0.51130127, 0.561370121];
    const w1to4 = [0.149780716, 0.199561432, 0.249751144, 0.299502287];
    w5to8.forEach((v, k) => expectClose(net.connections[1]!.weights[k]! + d.weights[1]![k]!, v, 1e-9, `w${5 + k}`));
    w1to4.forEach((v, k) => expectClose(net.connections[0]!.weights[k]! + d.weights[0]![k]!, v, 1e-9, `w${1 + k}`));
  });
});

function linearExample(feedback?: number[]): Network {
  return buildNetwork({
    layers: [
      { name: "x", size: 2, role: "input" },
      { name: "h", size: 2, role: "hidden", unit: { kind: "linear" } },
      { name: "y", size: 1, role: "output", unit: { kind: "linear" } },
    ],
    connections: [
      { from: "x", to: "h", weights: [0.1, 0.2, 0.3, 0.4] },
      { from: "h", to: "y", weights: [0.5, -0.5], ...(feedback ? { feedback: { kind: "separate" as const, learned: false, init: { kind: "constant" as const, value: 0 } } } : {}) },
    ],
  });
}

describe("feedback alignment", () => {
  it("the linear example of methods.md item 6 [DER]: BP and FA hidden updates, output update", () => {
    const batch = { inputs: { x: [1, 2] }, targets: { y: [1] } };
    const bp = createRule(linearExample(), { rule: "backprop", rate: 1 }).computeDelta(batch, new ParameterDelta(linearExample()));
    [0.65, 1.3, -0.65, -1.3].forEach((v, k) => expectClose(bp.weights[0]![k]!, v, 1e-12, `BP dW0[${k}]`));
    const net = linearExample([1, 0.5]);
    const hy = net.connection("h", "y");
    if (hy.feedback.kind === "separate") hy.feedback.weights.set([1.0, 0.5]);
    const fa = createRule(net, { rule: "feedback-alignment", rate: 1 }).computeDelta(batch, new ParameterDelta(net));
    [1.3, 2.6, 0.65, 1.3].forEach((v, k) => expectClose(fa.weights[0]![k]!, v, 1e-12, `FA dW0[${k}]`));
    [0.65, 1.43].forEach((v, k) => expectClose(fa.weights[1]![k]!, v, 1e-12, `dW[${k}]`));
    // alignment condition e^T W B e > 0 (Lillicrap et al. 2016)
    expectClose(1.3 * (0.5 * 1.0 - 0.5 * 0.5) * 1.3, 0.4225, 1e-12);
  });

  it("with B = Wᵀ it equals backprop exactly (methods.md item 6 [DER], check 1)", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 1, max: 5 }), fc.integer({ min: 1, max: 5 }), (seed, h1, h2) => {
        const spec = {
          seed,
          layers: [
            { name: "in", size: 3, role: "input" as const },
            { name: "a", size: h1, role: "hidden" as const },
            { name: "b", size: h2, role: "hidden" as const, unit: { kind: "tanh" as const } },
            { name: "out", size: 2, role: "output" as const },
          ],
          connections: [
            { from: "in", to: "a" },
            { from: "a", to: "b", feedback: { kind: "separate" as const, learned: false } },
            { from: "b", to: "out", feedback: { kind: "separate" as const, learned: false } },
          ],
        };
        const net = buildNetwork(spec);
        for (const c of net.connections) {
          if (c.feedback.kind !== "separate") continue;
          const n = net.layers[c.to]!.size;
          const m = net.layers[c.from]!.size;
          for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) c.feedback.weights[j * n + i] = c.weights[i * m + j]!;
        }
        const batch = { inputs: { in: [0.2, -0.4, 0.9, 1, 0, -1] }, targets: { out: [0.1, 0.9, 0.5, 0.3] } };
        const fa = createRule(net, { rule: "feedback-alignment", rate: 0.3 }).computeDelta(batch, new ParameterDelta(net));
        const bp = createRule(net, { rule: "backprop", rate: 0.3 }).computeDelta(batch, new ParameterDelta(net));
        fa.weights.forEach((w, i) => expect(Array.from(w)).toEqual(Array.from(bp.weights[i]!)));
        fa.biases.forEach((b, i) => expect(Array.from(b)).toEqual(Array.from(bp.biases[i]!)));
      }),
      30,
    );
  });

  it("with one hidden layer, direct feedback alignment equals feedback alignment given the same B (methods.md item 6 [DER], check 2)", () => {
    const net = buildNetwork({
      seed: 8,
      layers: [
        { name: "in", size: 3, role: "input" },
        { name: "h", size: 4, role: "hidden" },
        { name: "out", size: 2, role: "output" },
      ],
      connections: [
        { from: "in", to: "h" },
        { from: "h", to: "out", feedback: { kind: "separate", learned: false } },
      ],
    });
    const dfa = createRule(net, { rule: "direct-feedback-alignment", rate: 1 }) as unknown as { direct: (FloatArray | null)[]; computeDelta: (b: unknown, o: ParameterDelta) => ParameterDelta };
    const hout = net.connection("h", "out");
    if (hout.feedback.kind === "separate") hout.feedback.weights.set(dfa.direct[1]!);
    const batch = { inputs: { in: [0.2, -0.4, 0.9] }, targets: { out: [0.1, 0.9] } };
    const a = dfa.computeDelta(batch, new ParameterDelta(net));
    const b = createRule(net, { rule: "feedback-alignment", rate: 1 }).computeDelta(batch, new ParameterDelta(net));
    a.weights.forEach((w, i) => Array.from(w).forEach((v, k) => expectClose(v, b.weights[i]![k]!, 1e-14)));
  });

  it("without a separate feedback matrix, feedback alignment draws a fixed random one from the seed (same seed, same update)", () => {
    const make = () =>
      buildNetwork({
        seed: 2,
        layers: [
          { name: "in", size: 2, role: "input" },
          { name: "h", size: 3, role: "hidden" },
          { name: "out", size: 1, role: "output" },
        ],
        connections: [
          { from: "in", to: "h", feedback: { kind: "tied", gain: 1 } },
          { from: "h", to: "out", feedback: { kind: "tied", gain: 1 } },
        ],
      });
    const batch = { inputs: { in: [1, 0] }, targets: { out: [1] } };
    const u1 = createRule(make(), { rule: "feedback-alignment", rate: 1 }).computeDelta(batch, new ParameterDelta(make()));
    const u2 = createRule(make(), { rule: "feedback-alignment", rate: 1 }).computeDelta(batch, new ParameterDelta(make()));
    const bp = createRule(make(), { rule: "backprop", rate: 1 }).computeDelta(batch, new ParameterDelta(make()));
    expect(Array.from(u1.weights[0]!)).toEqual(Array.from(u2.weights[0]!));
    expect(Array.from(u1.weights[0]!)).not.toEqual(Array.from(bp.weights[0]!));
    expect(Array.from(u1.weights[1]!)).toEqual(Array.from(bp.weights[1]!)); // output layer: same delta rule
  });
});
