import { describe, it, expect } from "vitest";
import { buildNetwork, createRule, patternViolation, randomAssociation, ParameterDelta, EbbflowError, loadWasmKernelsSync, wasmSimdSupported, type NetworkSpecInput } from "../../src/index.js";
import { ParallelRule } from "../../src/node/index.js";

const spec: NetworkSpecInput = {
  seed: 5,
  layers: [
    { name: "in", size: 12, role: "input" },
    { name: "hid", size: 9, role: "hidden" },
    { name: "out", size: 4, role: "output" },
  ],
  connections: [
    { from: "in", to: "hid", feedback: { kind: "tied", gain: 1 } },
    { from: "hid", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.5, maxSteps: 200, tolerance: 1e-8 },
};
const data = randomAssociation({ patterns: 16, inputSize: 12, targetSize: 4, seed: 2 });
const batch = { inputs: { in: data.inputs }, targets: { out: data.targets } };

describe("multi-core training (worker threads, shared parameters)", () => {
  it("a network with connection patterns is split by slices and stays in its patterns (zero outside, tied, symmetric), tracking one thread", async () => {
    const patterned: NetworkSpecInput = {
      seed: 8,
      layers: [
        { name: "in", shape: [3, 4], role: "input" },
        { name: "hid", shape: [2, 3, 2], role: "hidden" },
        { name: "out", size: 4, role: "output" },
      ],
      connections: [
        { from: "in", to: "hid", pattern: { kind: "convolution", kernel: 2 }, feedback: { kind: "tied", gain: 1 } },
        { from: "hid", to: "hid", pattern: { kind: "local", radius: 1, selfConnections: false, symmetric: true } },
        { from: "hid", to: "out", pattern: { kind: "random", fanIn: 5 }, feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: { dt: 0.5, maxSteps: 200, tolerance: 1e-8 },
    };
    const par = await ParallelRule.create(buildNetwork(patterned), { rule: "chl", rate: 0.3 }, 2);
    try {
      expect(par.split).toBe("slices");
      for (let i = 0; i < 4; i++) await par.step(batch);
      const single = buildNetwork(patterned);
      const rule = createRule(single, { rule: "chl", rate: 0.3 });
      for (let i = 0; i < 4; i++) rule.step(batch);
      par.net.connections.forEach((c, i) => {
        expect(patternViolation(c.pattern, c.weights), c.label).toBeNull();
        c.weights.forEach((v, k) => expect(Math.abs(v - single.connections[i]!.weights[k]!)).toBeLessThan(1e-6));
      });
    } finally {
      await par.close();
    }
  });

  it("the change computed on 2 workers equals one thread's within float32 tolerance", async () => {
    const net = buildNetwork(spec);
    const one = createRule(net, { rule: "eqprop", beta: 0.3, rate: 0.2 }).computeDelta(batch, new ParameterDelta(net));
    const par = await ParallelRule.create(net, { rule: "eqprop", beta: 0.3, rate: 0.2 }, 2);
    try {
      const two = await par.computeDelta(batch);
      one.weights.forEach((w, i) => w.forEach((v, k) => expect(Math.abs(v - two.weights[i]![k]!)).toBeLessThan(1e-6 * Math.max(1, Math.abs(v)))));
      one.biases.forEach((b, i) => b.forEach((v, k) => expect(Math.abs(v - two.biases[i]![k]!)).toBeLessThan(1e-6)));
    } finally {
      await par.close();
    }
  });

  it("training with the same seed and worker count gives the same bits, and tracks the one-thread run", async () => {
    const train = async () => {
      const par = await ParallelRule.create(buildNetwork(spec), { rule: "generec", rate: 0.3 }, 2);
      try {
        for (let i = 0; i < 5; i++) await par.step(batch);
        return Array.from(par.net.connections[0]!.weights);
      } finally {
        await par.close();
      }
    };
    const a = await train();
    const b = await train();
    expect(a).toEqual(b);
    const single = buildNetwork(spec);
    const rule = createRule(single, { rule: "generec", rate: 0.3 });
    for (let i = 0; i < 5; i++) rule.step(batch);
    single.connections[0]!.weights.forEach((v, k) => expect(Math.abs(v - a[k]!)).toBeLessThan(1e-6));
  });

  it.skipIf(!wasmSimdSupported())("workers on WebAssembly kernels (attached to the main thread's memory, computing on the shared parameters) match one thread", async () => {
    const net = buildNetwork(spec, { backend: loadWasmKernelsSync({ relaxed: false }) });
    const one = createRule(net, { rule: "chl", rate: 0.2 }).computeDelta(batch, new ParameterDelta(net));
    const par = await ParallelRule.create(net, { rule: "chl", rate: 0.2 }, 2);
    try {
      expect(par.kernels).toBe("wasm");
      for (let i = 0; i < 2; i++) {
        const two = await par.computeDelta(batch);
        one.weights.forEach((w, j) => w.forEach((v, k) => expect(Math.abs(v - two.weights[j]![k]!)).toBeLessThan(1e-9 * Math.max(1, Math.abs(v)))));
      }
      // after a step the workers see the new parameters
      await par.step(batch);
      const moved = Array.from(par.net.connections[0]!.weights);
      const again = await par.computeDelta(batch);
      const ref = buildNetwork(spec);
      ref.connections.forEach((c, i) => c.weights.set(par.net.connections[i]!.weights));
      ref.layers.forEach((l, i) => l.bias.set(par.net.layers[i]!.bias));
      const expected = createRule(ref, { rule: "chl", rate: 0.2 }).computeDelta(batch, new ParameterDelta(ref));
      expected.weights[0]!.forEach((v, k) => expect(Math.abs(v - again.weights[0]![k]!)).toBeLessThan(1e-9 * Math.max(1, Math.abs(v))));
      expect(moved.length).toBeGreaterThan(0);
    } finally {
      await par.close();
    }
  });

  it("rules whose state changes per batch are refused with a clear error", async () => {
    await expect(ParallelRule.create(buildNetwork(spec), { rule: "eqprop", beta: 0.3, rate: 0.2, mode: "random-sign" }, 2)).rejects.toThrow(EbbflowError);
    await expect(ParallelRule.create(buildNetwork(spec), { rule: "bcm", rate: 0.2 }, 2)).rejects.toThrow(/multi-core/);
  });
});
