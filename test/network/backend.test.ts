import { describe, it, expect } from "vitest";
import { buildNetwork, createRule, Settler, Snapshot, loadWasmKernelsSync, wasmSimdSupported, randomAssociation, type NetworkSpecInput } from "../../src/index.js";

const spec = (dtype: "float32" | "float64"): NetworkSpecInput => ({
  dtype,
  seed: 12,
  layers: [
    { name: "in", size: 37, role: "input" },
    { name: "hid", size: 23, role: "hidden" },
    { name: "out", size: 5, role: "output" },
  ],
  connections: [
    { from: "in", to: "hid", feedback: { kind: "tied", gain: 1 } },
    { from: "hid", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.5, maxSteps: 40, tolerance: 1e-9 },
});
const data = randomAssociation({ patterns: 9, inputSize: 37, targetSize: 5, seed: 4 });
const batch = { inputs: { in: data.inputs }, targets: { out: data.targets } };

describe.skipIf(!wasmSimdSupported())("networks on the WebAssembly SIMD kernels", () => {
  for (const dtype of ["float64", "float32"] as const) {
    const tol = dtype === "float64" ? 1e-10 : 2e-4;
    it(`settle and train like the TypeScript kernels (${dtype}), with every array in the kernels' memory`, () => {
      const wasm = loadWasmKernelsSync({ relaxed: false });
      const a = buildNetwork(spec(dtype));
      const b = buildNetwork(spec(dtype), { backend: wasm });
      expect(b.kernels.name).toBe("wasm-simd");
      expect(wasm.isArenaView(b.connections[0]!.weights)).toBe(true);
      const sa = new Settler(a, 9).settle({ phase: "free", inputs: batch.inputs });
      const sb = new Settler(b, 9).settle({ phase: "free", inputs: batch.inputs });
      // a call without `out` returns a copy in ordinary memory (the arena is never given back); with `out` it settles in place
      expect(wasm.isArenaView(sb.activity[1]!)).toBe(false);
      const inPlace = new Settler(b, 9).settle({ phase: "free", inputs: batch.inputs }, new Snapshot(b, 9));
      expect(wasm.isArenaView(inPlace.activity[1]!)).toBe(true);
      sa.activity[2]!.forEach((v, i) => expect(Math.abs(v - sb.activity[2]![i]!)).toBeLessThan(tol));
      const ra = createRule(a, { rule: "eqprop", beta: 0.5, rate: 0.2 });
      const rb = createRule(b, { rule: "eqprop", beta: 0.5, rate: 0.2 });
      for (let i = 0; i < 5; i++) {
        ra.step(batch);
        rb.step(batch);
      }
      a.connections[0]!.weights.forEach((v, i) => expect(Math.abs(v - b.connections[0]!.weights[i]!)).toBeLessThan(tol));
      expect(wasm.isArenaView(b.connections[0]!.weights)).toBe(true);
    });
  }

  it("a network built later in the same memory leaves earlier networks' arrays valid (growth detaches nothing)", () => {
    const wasm = loadWasmKernelsSync({ relaxed: false, arenaBytes: 1024 });
    const first = buildNetwork(spec("float64"), { backend: wasm });
    const w = first.connections[0]!.weights;
    const before = Array.from(w);
    for (let i = 0; i < 4; i++) buildNetwork({ ...spec("float64"), layers: [{ name: "in", size: 300, role: "input" }, { name: "hid", size: 200, role: "hidden" }, { name: "out", size: 5, role: "output" }] }, { backend: wasm });
    expect(wasm.generation).toBeGreaterThan(0);
    expect(Array.from(w)).toEqual(before);
    expect(() => new Settler(first, 9).settle({ phase: "free", inputs: batch.inputs })).not.toThrow();
  });
});

describe.skipIf(!wasmSimdSupported())("settling without out on the WebAssembly kernels", () => {
  it("does not grow the arena, gives the same bits as settling into out, and returns snapshots independent of one another", () => {
    const wasm = loadWasmKernelsSync({ relaxed: false });
    const net = buildNetwork({ ...spec("float32"), dynamics: { kind: "energy", dt: 0.5, maxSteps: 20, tolerance: 1e-9, clip: true }, layers: spec("float32").layers.map((l) => (l.role === "input" ? l : { ...l, unit: { kind: "hard-sigmoid" } })) }, { backend: wasm });
    const settler = new Settler(net, 9);
    const first = settler.settle({ phase: "free", inputs: batch.inputs, record: true });
    const used = wasm.arenaBytes;
    const other = { in: Float64Array.from(data.inputs, (v) => 1 - v) };
    let last = first;
    for (let k = 0; k < 200; k++) last = settler.settle({ phase: k % 2 === 0 ? "free" : "clamped", inputs: k % 3 === 0 ? other : batch.inputs, targets: batch.targets, start: last });
    expect(wasm.arenaBytes).toBe(used);
    // the same phase settled in place, on a fresh settler: the same bits, the same steps and record
    const reference = new Settler(net, 9).settle({ phase: "free", inputs: batch.inputs, record: true }, new Snapshot(net, 9));
    for (const i of [1, 2]) {
      expect(Array.from(first.activity[i]!)).toEqual(Array.from(reference.activity[i]!));
      expect(Array.from(first.state[i]!)).toEqual(Array.from(reference.state[i]!));
    }
    expect(first.steps).toBe(reference.steps);
    expect(first.converged).toBe(reference.converged);
    expect(first.record?.length).toBe(reference.record?.length);
    expect(Array.from(first.record!.at(-1)![2]!)).toEqual(Array.from(reference.record!.at(-1)![2]!));
  });
});
