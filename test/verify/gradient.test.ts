import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { buildNetwork, recurrentGradient, finiteDifferenceGradient, feedforwardGradient, createRandom, type NetworkSpecInput, type Network, type ParameterDelta } from "../../src/index.js";
import { check } from "../helpers/property.js";
import { expectClose, relativeError } from "../helpers/tolerance.js";

function flat(d: ParameterDelta): number[] {
  const out: number[] = [];
  for (const w of d.weights) out.push(...w);
  for (const f of d.feedback) if (f) out.push(...f);
  for (const b of d.biases) out.push(...b);
  return out;
}

describe("recurrent backprop at the free fixed point", () => {
  it("reproduces the worked example of methods.md item 5 [DER, numerically verified]: dL/dW and delta", () => {
    // the 3-unit recurrent tanh net, split so that only unit 3 is an output:
    // units 1-2 form layer "a", unit 3 layer "b"; W[a][b] is b->a feedback, W[b][a] is a->b forward
    const net = buildNetwork({
      layers: [
        { name: "x", size: 3, role: "input" },
        { name: "a", size: 2, role: "hidden", unit: { kind: "tanh" } },
        { name: "b", size: 1, role: "output", unit: { kind: "tanh" } },
      ],
      connections: [
        { from: "x", to: "a", weights: [1, 0, 0, 0, 1, 0] },
        { from: "x", to: "b", weights: [0, 0, 1] },
        { from: "a", to: "a", weights: [0.0, 0.5, 0.2, 0.0] },
        { from: "b", to: "b", weights: [0] },
        { from: "a", to: "b", weights: [-0.1, 0.3], feedback: { kind: "separate", learned: true } },
      ],
      dynamics: { dt: 0.5, maxSteps: 10000, tolerance: 1e-15 },
    });
    // separate feedback b->a holds W[0][2], W[1][2]
    const ab = net.connection("a", "b");
    if (ab.feedback.kind !== "separate") throw new Error("unexpected");
    ab.feedback.weights.set([-0.3, 0.4]);
    const g = recurrentGradient(net, { inputs: { x: [0.5, -0.2, 0.1] }, targets: { b: [0.25] } });
    const want = [
      [0.003855043736, -0.000993464310, 0.000250647273],
      [-0.029192458940, 0.007523044633, -0.001898035592],
      [-0.104846193615, 0.027019395517, -0.006816890882],
    ];
    const aa = g.weights[2]!; // a->a: rows 0..1, cols 0..1
    expectClose(aa[0]!, want[0]![0]!, 1e-11);
    expectClose(aa[1]!, want[0]![1]!, 1e-11);
    expectClose(aa[2]!, want[1]![0]!, 1e-11);
    expectClose(aa[3]!, want[1]![1]!, 1e-11);
    expectClose(g.weights[4]![0]!, want[2]![0]!, 1e-11); // W[2][0]
    expectClose(g.weights[4]![1]!, want[2]![1]!, 1e-11); // W[2][1]
    expectClose(g.feedback[4]![0]!, want[0]![2]!, 1e-11); // W[0][2]
    expectClose(g.feedback[4]![1]!, want[1]![2]!, 1e-11); // W[1][2]
    expectClose(g.weights[3]![0]!, want[2]![2]!, 1e-11); // W[2][2]
    // delta = dL/db (U = I, b = 0)
    expectClose(g.biases[1]![0]!, 0.009342511023, 1e-11);
    expectClose(g.biases[1]![1]!, -0.070746504610, 1e-11);
    expectClose(g.biases[2]![0]!, -0.254089651552, 1e-11);
  });

  const randomNet = (seed: number, h: number, o: number, gain: number, extras: number, kind: "rate" | "energy"): Network => {
    const rng = createRandom(seed).child("biases");
    const spec: NetworkSpecInput = {
      seed,
      layers: [
        { name: "in", size: 3, role: "input" },
        { name: "h", size: h, role: "hidden", unit: kind === "energy" ? { kind: "logistic", gain: 4, offset: 0.5 } : { kind: "tanh" }, bias: Array.from({ length: h }, () => rng.normal() * 0.3), inhibition: extras & 1 ? { kind: "pooled", gain: 0.5 } : { kind: "none" } },
        { name: "out", size: o, role: "output", unit: kind === "energy" ? { kind: "logistic", gain: 4, offset: 0.5 } : { kind: "logistic" }, bias: Array.from({ length: o }, () => rng.normal() * 0.3) },
      ],
      connections: [
        { from: "in", to: "h", init: { kind: "normal", std: 0.6 } },
        { from: "h", to: "out", init: { kind: "normal", std: 0.6 }, feedback: extras & 2 && kind === "rate" ? { kind: "separate", learned: true, init: { kind: "normal", std: 0.4 } } : { kind: "tied", gain } },
        ...(extras & 4 && kind === "rate" ? [{ from: "h", to: "h", init: { kind: "normal" as const, std: 0.2 } }] : []),
        ...(extras & 8 ? [{ from: "in", to: "out", init: { kind: "normal" as const, std: 0.5 }, feedback: { kind: "tied" as const, gain } }] : []),
      ],
      dynamics: { kind, dt: kind === "energy" ? 0.2 : 0.5, maxSteps: 100000, tolerance: 1e-14 },
    };
    return buildNetwork(spec);
  };

  it("equals central finite differences on random small rate networks (tied, separate, lateral, skip, pooled inhibition) to 1e-7 relative", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 1, max: 4 }), fc.integer({ min: 1, max: 3 }), fc.double({ min: 0, max: 1, noNaN: true }), fc.integer({ min: 0, max: 15 }), (seed, h, o, gain, extras) => {
        const net = randomNet(seed, h, o, gain, extras, "rate");
        const batch = { inputs: { in: [0.3, -0.5, 0.8, 0.9, 0.1, -0.4] }, targets: { out: Array.from({ length: 2 * o }, (_, i) => (i % 3) * 0.4 + 0.1) } };
        const rbp = flat(recurrentGradient(net, batch));
        const fd = flat(finiteDifferenceGradient(net, batch, { step: 1e-5 }));
        expect(relativeError(rbp, fd)).toBeLessThan(1e-7);
      }),
      25,
    );
  });

  it("equals central finite differences on random energy-dynamics networks (smooth ρ, tied gain 1) to 1e-6 relative", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 1, max: 3 }), fc.integer({ min: 1, max: 2 }), (seed, h, o) => {
        const net = randomNet(seed, h, o, 1, 0, "energy");
        const batch = { inputs: { in: [0.3, 0.5, 0.8] }, targets: { out: Array.from({ length: o }, (_, i) => 0.2 + 0.6 * (i % 2)) } };
        const rbp = flat(recurrentGradient(net, batch));
        const fd = flat(finiteDifferenceGradient(net, batch, { step: 1e-5 }));
        expect(relativeError(rbp, fd)).toBeLessThan(1e-6);
      }),
      15,
    );
  });

  it("with no feedback it equals plain backprop on the feedforward pass", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 1, max: 5 }), fc.integer({ min: 1, max: 3 }), (seed, h, o) => {
        const net = randomNet(seed, h, o, 0, 0, "rate");
        const batch = { inputs: { in: [0.3, -0.5, 0.8, 0.9, 0.1, -0.4] }, targets: { out: Array.from({ length: 2 * o }, (_, i) => (i % 2) * 0.8 + 0.1) } };
        expect(relativeError(flat(recurrentGradient(net, batch)), flat(feedforwardGradient(net, batch)))).toBeLessThan(1e-10);
      }),
      30,
    );
  });

  it("leaves the network's parameters exactly as they were (finite differences restore each entry)", () => {
    const net = randomNet(3, 3, 2, 0.5, 15, "rate");
    const before = net.connections.map((c) => Array.from(c.weights));
    finiteDifferenceGradient(net, { inputs: { in: [0.3, -0.5, 0.8] }, targets: { out: [0.2, 0.7] } });
    expect(net.connections.map((c) => Array.from(c.weights))).toEqual(before);
  });

  it("refuses k-winners-take-all layers (not differentiable) with the layer's path", () => {
    const net = buildNetwork({
      layers: [
        { name: "in", size: 2, role: "input" },
        { name: "out", size: 3, role: "output", inhibition: { kind: "kwta", k: 1 } },
      ],
      connections: [{ from: "in", to: "out" }],
    });
    expect(() => recurrentGradient(net, { inputs: { in: [1, 0] }, targets: { out: [1, 0, 0] } })).toThrow(/layers\[1\]\.inhibition/);
  });
});
