/**
 * Rates and slopes against an independent autodiff library (tfjs-core with
 * the CPU backend, test-only dependency). tfjs computes in float32, so the
 * comparison uses a float32 tolerance.
 */
import * as tf from "@tensorflow/tfjs-core";
import "@tensorflow/tfjs-backend-cpu";
import "@tensorflow/tfjs-core/dist/register_all_gradients.js";
import { beforeAll, describe, it } from "vitest";
import { createUnit, type UnitSpec } from "../../src/units/index.js";
import { EPS32, expectClose } from "../helpers/tolerance.js";

beforeAll(async () => {
  tf.env().set("IS_TEST", true);
  await tf.setBackend("cpu");
});

// Inputs avoid the kinks (0 and 1), where conventions for the slope differ.
const xs = [-6, -2.5, -1, -0.3, 0.2, 0.45, 0.8, 1.3, 2.7, 5];

const cases: [string, UnitSpec, (t: tf.Tensor) => tf.Tensor][] = [
  ["logistic", { kind: "logistic" }, (t) => tf.sigmoid(t)],
  ["logistic gain 3 offset 0.5", { kind: "logistic", gain: 3, offset: 0.5 }, (t) => tf.sigmoid(tf.mul(3, tf.sub(t, 0.5)))],
  ["tanh", { kind: "tanh" }, (t) => tf.tanh(t)],
  ["linear", { kind: "linear" }, (t) => tf.mul(t, 1)],
  ["relu", { kind: "relu" }, (t) => tf.relu(t)],
  ["hard sigmoid", { kind: "hard-sigmoid" }, (t) => tf.clipByValue(t, 0, 1)],
  ["softplus", { kind: "softplus" }, (t) => tf.softplus(t)],
  ["softplus gain 2", { kind: "softplus", gain: 2 }, (t) => tf.div(tf.softplus(tf.mul(2, t)), 2)],
];

describe("rates and slopes against tfjs autodiff", () => {
  it.each(cases)("%s", (_name, spec, op) => {
    const unit = createUnit(spec);
    const x = tf.tensor1d(xs, "float32");
    const y = op(x).dataSync();
    const dy = tf.grad((t: tf.Tensor) => tf.sum(op(t)))(x).dataSync();
    for (let i = 0; i < xs.length; i++) {
      const xi = Math.fround(xs[i] as number);
      expectClose(unit.value(xi), y[i] as number, 8 * EPS32, `${_name} f(${xi})`);
      expectClose(unit.slope(xi), dy[i] as number, 8 * EPS32, `${_name} f'(${xi})`);
    }
  });
});
