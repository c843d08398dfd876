import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { buildNetwork, createRule, recurrentGradient, finiteDifferenceGradient, ParameterDelta, EbbflowError, createRandom, Settler, type ParameterDelta as PD } from "../../src/index.js";
import { check } from "../helpers/property.js";
import { expectClose, relativeError } from "../helpers/tolerance.js";

const flat = (d: PD) => [...d.weights.flatMap((w) => Array.from(w)), ...d.biases.flatMap((b) => Array.from(b))];

/** The exact linear fixture of methods.md item 4 [DER]: x = 1 -> h -> y, hard sigmoid in its linear region. */
function fixture() {
  return buildNetwork({
    layers: [
      { name: "x", size: 1, role: "input" },
      { name: "h", size: 1, role: "hidden", unit: { kind: "hard-sigmoid" }, bias: 0.1 },
      { name: "y", size: 1, role: "output", unit: { kind: "hard-sigmoid" }, bias: 0.1 },
    ],
    connections: [
      { from: "x", to: "h", weights: [0.3], feedback: { kind: "tied", gain: 1 } },
      { from: "h", to: "y", weights: [0.4], feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { kind: "energy", dt: 0.5, maxSteps: 20000, tolerance: 1e-15 },
  });
}
const batch = { inputs: { x: [1] }, targets: { y: [0.9] } };

describe("Equilibrium Propagation", () => {
  it("the exact gradient of the linear fixture matches methods.md item 4 [DER] (via recurrent backprop)", () => {
    const g = recurrentGradient(fixture(), batch);
    expectClose(g.weights[0]![0]!, -0.281179138322, 1e-11, "dJ/dW1");
    expectClose(g.weights[1]![0]!, -0.455242414426, 1e-11, "dJ/dW2");
    expectClose(g.biases[1]![0]!, -0.281179138, 1e-9, "dJ/db_h");
    expectClose(g.biases[2]![0]!, -0.702947846, 1e-9, "dJ/db_y");
  });

  it("one-sided and symmetric estimates of -dJ/dW2 match the table of methods.md item 4 [DER, numerically verified]", () => {
    const table = [
      [0.2, 0.3934844155, 0.4614460059],
      [0.1, 0.4225960793, 0.4569446791],
      [0.05, 0.4384704856, 0.4556762167],
      [0.025, 0.446744976, 0.4553513623],
    ] as const;
    for (const [beta, one, sym] of table) {
      const net = fixture();
      const a = createRule(net, { rule: "eqprop", beta, rate: 1 }).computeDelta(batch, new ParameterDelta(net));
      expectClose(a.weights[1]![0]!, one, 1e-9, `one-sided beta=${beta}`);
      const b = createRule(net, { rule: "eqprop", beta, rate: 1, mode: "symmetric" }).computeDelta(batch, new ParameterDelta(net));
      expectClose(b.weights[1]![0]!, sym, 1e-9, `symmetric beta=${beta}`);
    }
    const net = fixture();
    expectClose(createRule(net, { rule: "eqprop", beta: 0.1, rate: 1 }).computeDelta(batch, new ParameterDelta(net)).weights[0]![0]!, 0.251266464, 1e-9, "-dJ/dW1 one-sided");
    expectClose(createRule(net, { rule: "eqprop", beta: 0.1, rate: 1, mode: "symmetric" }).computeDelta(batch, new ParameterDelta(net)).weights[0]![0]!, 0.2852213916, 1e-9, "-dJ/dW1 symmetric");
  });

  it("bias is first order in β one-sided (ratio in [1.7, 2.3]) and second order symmetric (ratio in [3.4, 4.6]) on random nonlinear nets (methods.md item 4, check 2)", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 2, max: 4 }), (seed, h) => {
        const rng = createRandom(seed).child("biases");
        const net = buildNetwork({
          seed,
          layers: [
            { name: "in", size: 3, role: "input" },
            { name: "h", size: h, role: "hidden", unit: { kind: "logistic", gain: 4, offset: 0.5 }, bias: Array.from({ length: h }, () => 0.2 * rng.normal()) },
            { name: "out", size: 2, role: "output", unit: { kind: "logistic", gain: 4, offset: 0.5 }, bias: [0.1 * rng.normal(), 0.1 * rng.normal()] },
          ],
          connections: [
            { from: "in", to: "h", init: { kind: "normal", std: 0.5 }, feedback: { kind: "tied", gain: 1 } },
            { from: "h", to: "out", init: { kind: "normal", std: 0.5 }, feedback: { kind: "tied", gain: 1 } },
          ],
          dynamics: { kind: "energy", dt: 0.2, maxSteps: 100000, tolerance: 1e-14 },
        });
        const b = { inputs: { in: [0.2, 0.7, 0.4] }, targets: { out: [0.9, 0.1] } };
        const exact = flat(recurrentGradient(net, b)).map((v) => -v);
        const err = (beta: number, mode: "one-sided" | "symmetric") => relativeError(flat(createRule(net, { rule: "eqprop", beta, rate: 1, mode }).computeDelta(b, new ParameterDelta(net))), exact);
        const small1 = err(0.001, "one-sided");
        const small2 = err(0.0025, "symmetric");
        // The order is an asymptotic claim: nets near a bifurcation of the free state (gain-4 units, about 1 in 600
        // draws) are not yet in the asymptotic regime at these β and are skipped, so that the test does not flake.
        fc.pre(small1 < 0.05 && small2 < 0.01);
        const r1 = err(0.002, "one-sided") / small1;
        const r2 = err(0.005, "symmetric") / small2;
        expect(r1).toBeGreaterThanOrEqual(1.7);
        expect(r1).toBeLessThanOrEqual(2.3);
        expect(r2).toBeGreaterThanOrEqual(3.4);
        expect(r2).toBeLessThanOrEqual(4.6);
      }),
      15,
    );
  });

  it("on rate dynamics with symmetric feedback, the estimate also tends to the gradient as β -> 0 (finite differences as reference)", () => {
    const net = buildNetwork({
      seed: 4,
      layers: [
        { name: "in", size: 2, role: "input" },
        { name: "h", size: 3, role: "hidden" },
        { name: "out", size: 1, role: "output" },
      ],
      connections: [
        { from: "in", to: "h", init: { kind: "normal", std: 1 }, feedback: { kind: "tied", gain: 1 } },
        { from: "h", to: "out", init: { kind: "normal", std: 1 }, feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: { dt: 0.5, maxSteps: 100000, tolerance: 1e-14 },
    });
    const b = { inputs: { in: [1, 0, 0, 1] }, targets: { out: [1, 0] } };
    const exact = flat(finiteDifferenceGradient(net, b, { step: 1e-5 })).map((v) => -v);
    const err = (beta: number) => relativeError(flat(createRule(net, { rule: "eqprop", beta, rate: 1 }).computeDelta(b, new ParameterDelta(net))), exact);
    expect(err(0.001)).toBeLessThan(1e-2);
    expect(err(0.01) / err(0.005)).toBeGreaterThan(1.7);
  });

  it("random-sign mode draws the sign of β from the seed: same seed, same signs, both signs occur", () => {
    const signs = (seed: number) => {
      const net = buildNetwork({ ...fixture().spec, seed });
      const rule = createRule(net, { rule: "eqprop", beta: 0.1, rate: 1, mode: "random-sign" });
      const out: number[] = [];
      for (let i = 0; i < 12; i++) out.push(Math.sign(rule.computeDelta(batch, new ParameterDelta(net)).weights[1]![0]! - 0.43));
      return out;
    };
    expect(signs(3)).toEqual(signs(3));
    expect(new Set(signs(3)).size).toBe(2);
  });

  it("freeSteps and nudgedSteps cap the phases: the change equals the EqProp formula on phases settled for those step counts (naive loops)", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 30 }), fc.integer({ min: 1, max: 8 }), fc.integer({ min: 0, max: 1e6 }), (free, nudged, seed) => {
        const spec = {
          seed,
          layers: [
            { name: "a", size: 3, role: "input" as const },
            { name: "b", size: 4, role: "hidden" as const },
            { name: "c", size: 2, role: "output" as const },
          ],
          connections: [
            { from: "a", to: "b", feedback: { kind: "tied" as const, gain: 1 } },
            { from: "b", to: "c", feedback: { kind: "tied" as const, gain: 1 } },
          ],
          dynamics: { dt: 0.5, maxSteps: 50, tolerance: 1e-300 },
        };
        const r = createRandom(seed).child("data");
        const B = 2;
        const b = { inputs: { a: Array.from({ length: B * 3 }, () => r.uniform()) }, targets: { c: Array.from({ length: B * 2 }, () => r.uniform()) } };
        const net = buildNetwork(spec);
        const beta = 0.4;
        const d = createRule(net, { rule: "eqprop", beta, rate: 1, freeSteps: free, nudgedSteps: nudged }).computeDelta(b, new ParameterDelta(net));
        // the phases by hand, and Scellier & Bengio (2017) Eq. 18 (one-sided) with naive loops
        const s = new Settler(buildNetwork(spec), B);
        const f = s.settle({ phase: "free", inputs: b.inputs, maxSteps: free });
        const fAct = f.activity.map((a) => Array.from(a));
        expect(f.steps).toBe(free);
        const n = s.settle({ phase: "nudged", beta, inputs: b.inputs, targets: b.targets, start: f, maxSteps: nudged });
        expect(n.steps).toBe(nudged);
        const nAct = n.activity.map((a) => Array.from(a));
        const sizes = [3, 4, 2];
        for (const [ci, from, to] of [[0, 0, 1], [1, 1, 2]] as const) {
          for (let i = 0; i < sizes[to]!; i++) {
            for (let j = 0; j < sizes[from]!; j++) {
              let sum = 0;
              for (let p = 0; p < B; p++) sum += nAct[to]![p * sizes[to]! + i]! * nAct[from]![p * sizes[from]! + j]! - fAct[to]![p * sizes[to]! + i]! * fAct[from]![p * sizes[from]! + j]!;
              expectClose(d.weights[ci]![i * sizes[from]! + j]!, sum / (beta * B), 1e-12, `w${ci}[${i},${j}]`);
            }
          }
        }
      }),
      30,
    );
  });

  it("freeSteps and nudgedSteps must be integers >= 1 (config path in the error)", () => {
    for (const bad of [0, 2.5, -1]) {
      for (const key of ["freeSteps", "nudgedSteps"]) {
        try {
          createRule(fixture(), { rule: "eqprop", beta: 0.1, rate: 1, [key]: bad });
          throw new Error("no error");
        } catch (e) {
          expect(e).toBeInstanceOf(EbbflowError);
          expect((e as EbbflowError).path).toBe(`rule.${key}`);
        }
      }
    }
  });

  it("β = 0 is rejected with the config path", () => {
    try {
      createRule(fixture(), { rule: "eqprop", beta: 0, rate: 1 });
      throw new Error("no error");
    } catch (e) {
      expect(e).toBeInstanceOf(EbbflowError);
      expect((e as EbbflowError).path).toBe("rule.beta");
    }
  });
});
