import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { buildNetwork, Settler, Snapshot, EbbflowError, recurrentGradient, finiteDifferenceGradient, loadWasmKernelsSync, wasmSimdSupported, type NetworkSpecInput } from "../../src/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";

/** A small recurrent net (input -> hidden <-> output, lateral hidden) with the given per-layer taus. */
function recurrentSpec(seed: number, tauH?: number, tauO?: number, kind: "rate" | "energy" = "rate"): NetworkSpecInput {
  return {
    seed,
    layers: [
      { name: "in", size: 3, role: "input" },
      { name: "h", size: 4, role: "hidden", unit: { kind: "tanh" }, ...(tauH === undefined ? {} : { tau: tauH }) },
      { name: "out", size: 2, role: "output", unit: { kind: "logistic" }, ...(tauO === undefined ? {} : { tau: tauO }) },
    ],
    connections: [
      { from: "in", to: "h", init: { kind: "uniform", low: -0.5, high: 0.5 } },
      { from: "h", to: "out", init: { kind: "uniform", low: -0.5, high: 0.5 }, feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { kind, dt: 0.2, maxSteps: 40000, tolerance: 1e-13 },
  };
}

describe("per-layer time constants", () => {
  it("the fixed point does not depend on the layers' tau (analytic: tau only rescales time in x' = (f(eta) - x)/tau)", () => {
    check(
      fc.property(
        fc.integer({ min: 0, max: 10000 }),
        fc.double({ min: 0.3, max: 5, noNaN: true }),
        fc.double({ min: 0.3, max: 5, noNaN: true }),
        fc.constantFrom("rate" as const, "energy" as const),
        fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: 3, maxLength: 3 }),
        (seed, tH, tO, kind, x) => {
          const a = new Settler(buildNetwork(recurrentSpec(seed, undefined, undefined, kind)), 1).settle({ phase: "free", inputs: { in: x }, requireConvergence: true });
          const b = new Settler(buildNetwork(recurrentSpec(seed, tH, tO, kind)), 1).settle({ phase: "free", inputs: { in: x }, requireConvergence: true });
          for (const li of [1, 2]) for (let k = 0; k < a.activity[li]!.length; k++) expectClose(b.activity[li]![k]!, a.activity[li]![k]!, 1e-9, `layer ${li} unit ${k}`);
        },
      ),
      25,
    );
  });

  it("tau 1 written out gives the same bits as no tau", () => {
    const a = new Settler(buildNetwork(recurrentSpec(3)), 2).settle({ phase: "free", inputs: { in: [0.1, 0.2, 0.3, -0.4, 0.5, 0.6] }, maxSteps: 37 });
    const b = new Settler(buildNetwork(recurrentSpec(3, 1, 1)), 2).settle({ phase: "free", inputs: { in: [0.1, 0.2, 0.3, -0.4, 0.5, 0.6] }, maxSteps: 37 });
    expect(Array.from(b.activity[2]!)).toEqual(Array.from(a.activity[2]!));
    expect(b.lastChange).toBe(a.lastChange);
  });

  it("a slow layer moves by dt/tau per step: one step from rest is (dt/tau)·f(eta) (Euler step of tau x' = f(eta) - x)", () => {
    const net = buildNetwork({
      layers: [
        { name: "in", size: 1, role: "input" },
        { name: "out", size: 1, role: "output", unit: { kind: "linear" }, tau: 4 },
      ],
      connections: [{ from: "in", to: "out", weights: [2] }],
      dynamics: { dt: 0.2 },
    });
    const s = new Settler(net, 1).settle({ phase: "free", inputs: { in: [1] }, maxSteps: 1 });
    expectClose(s.activity[1]![0]!, (0.2 / 4) * 2, 1e-15, "x after one step");
    // the stop rule's change is the state change times tau (dt·|f(eta) − x|), per layer
    expectClose(s.layerChange[1]!, 0.2 * 2, 1e-15, "scaled change");
  });

  it("recurrent backprop and finite differences at the fixed point agree, with and without tau (unchanged meaning)", () => {
    const batch = { inputs: { in: [0.3, -0.2, 0.7] }, targets: { out: [0.2, 0.9] } };
    const plain = buildNetwork(recurrentSpec(11));
    const slow = buildNetwork(recurrentSpec(11, 3, 0.5));
    const g0 = recurrentGradient(plain, batch);
    const g1 = recurrentGradient(slow, batch);
    const f1 = finiteDifferenceGradient(slow, batch);
    for (let c = 0; c < g0.weights.length; c++) {
      for (let k = 0; k < g0.weights[c]!.length; k++) {
        expectClose(g1.weights[c]![k]!, g0.weights[c]![k]!, 1e-8, `w[${c}][${k}] tau vs none`);
        expectClose(f1.weights[c]![k]!, g1.weights[c]![k]!, 1e-6, `w[${c}][${k}] finite differences`);
      }
    }
  });

  it("refuses a tau on an input layer and a non-positive tau, with the path", () => {
    const bad = (layer: Record<string, unknown>) => () => buildNetwork({ layers: [layer as never, { name: "o", size: 1, role: "output" }], connections: [{ from: "i", to: "o" }] });
    expect(bad({ name: "i", size: 1, role: "input", tau: 2 })).toThrow(/layers\[0\]\.tau/);
    try {
      buildNetwork({ layers: [{ name: "i", size: 1, role: "input" }, { name: "o", size: 1, role: "output", tau: -1 }], connections: [{ from: "i", to: "o" }] });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(EbbflowError);
      expect((e as EbbflowError).issues[0]!.path).toBe("layers[1].tau");
    }
  });
});

/** Bisection for the root of g on [lo, hi] (g changes sign): an independent solver for the steady states. */
function bisect(g: (x: number) => number, lo: number, hi: number): number {
  for (let k = 0; k < 200; k++) {
    const mid = 0.5 * (lo + hi);
    if (Math.sign(g(mid)) === Math.sign(g(lo))) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

const logistic = (x: number) => 1 / (1 + Math.exp(-x));

describe("spike-frequency adaptation (Benda & Herz 2003)", () => {
  const spec = (gain: number, tau = 5): NetworkSpecInput => ({
    layers: [
      { name: "in", size: 1, role: "input" },
      { name: "out", size: 1, role: "output", unit: { kind: "logistic" }, adaptation: { tau, gain } },
    ],
    connections: [{ from: "in", to: "out", weights: [3] }],
    dynamics: { dt: 0.2, maxSteps: 100000, tolerance: 1e-14 },
  });

  it("settles to the steady state r = f(w·x − g·r), a = g·r (root found by bisection)", () => {
    check(
      fc.property(fc.double({ min: 0, max: 3, noNaN: true }), fc.double({ min: 0.5, max: 20, noNaN: true }), fc.double({ min: -1, max: 1, noNaN: true }), (g, tau, x) => {
        const s = new Settler(buildNetwork(spec(g, tau)), 1).settle({ phase: "free", inputs: { in: [x] }, requireConvergence: true });
        const r = bisect((v) => logistic(3 * x - g * v) - v, 0, 1);
        expectClose(s.activity[1]![0]!, r, 1e-9, "rate");
        expectClose(s.adaptation[1]![0]!, g * r, 1e-9, "adaptation");
      }),
      30,
    );
  });

  it("gain 0 gives the bits of a layer without adaptation", () => {
    const a = new Settler(buildNetwork(spec(0)), 1).settle({ phase: "free", inputs: { in: [0.4] }, maxSteps: 50 });
    const plain = buildNetwork({ ...spec(0), layers: [{ name: "in", size: 1, role: "input" }, { name: "out", size: 1, role: "output", unit: { kind: "logistic" } }] });
    const b = new Settler(plain, 1).settle({ phase: "free", inputs: { in: [0.4] }, maxSteps: 50 });
    expect(a.activity[1]![0]).toBe(b.activity[1]![0]);
  });

  it("carries over from `start`: a repeated stimulus meets an adapted unit and gets a smaller response", () => {
    const net = buildNetwork(spec(2, 50));
    const settler = new Settler(net, 1);
    const first = settler.settle({ phase: "free", inputs: { in: [1] }, maxSteps: 100 });
    const r1 = first.activity[1]![0]!;
    const second = settler.settle({ phase: "free", inputs: { in: [1] }, maxSteps: 100, start: first });
    expect(second.adaptation[1]![0]!).toBeGreaterThan(first.adaptation[1]![0]! * 0.99);
    expect(second.activity[1]![0]!).toBeLessThan(r1);
    // without start, the units are at rest again
    const fresh = settler.settle({ phase: "free", inputs: { in: [1] }, maxSteps: 100 });
    expect(fresh.activity[1]![0]).toBe(r1);
  });

  it("refuses adaptation on an input layer and a negative gain, with the path", () => {
    expect(() => buildNetwork({ layers: [{ name: "i", size: 1, role: "input", adaptation: { tau: 1, gain: 1 } }, { name: "o", size: 1, role: "output" }], connections: [{ from: "i", to: "o" }] })).toThrow(/layers\[0\]\.adaptation/);
    expect(() => buildNetwork(spec(-1))).toThrow(/layers\[1\]\.adaptation\.gain/);
    expect(() => recurrentGradient(buildNetwork(spec(1)), { inputs: { in: [1] }, targets: { out: [0.5] } })).toThrow(/adaptation/);
  });
});

describe("synaptic depression (Tsodyks & Markram 1997)", () => {
  const spec = (recovery: number, use: number): NetworkSpecInput => ({
    layers: [
      { name: "in", size: 2, role: "input" },
      { name: "out", size: 1, role: "output", unit: { kind: "linear" } },
    ],
    connections: [{ from: "in", to: "out", weights: [1.5, -0.5], depression: { recovery, use } }],
    dynamics: { dt: 0.1, maxSteps: 200000, tolerance: 1e-14 },
  });

  it("settles to the steady state R = 1/(1 + U·tau·x) (dR/dt = 0) and y = Σ w·R·x (analytic)", () => {
    check(
      fc.property(fc.double({ min: 0.5, max: 10, noNaN: true }), fc.double({ min: 0.05, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), (tau, use, x0, x1) => {
        const s = new Settler(buildNetwork(spec(tau, use)), 1).settle({ phase: "free", inputs: { in: [x0, x1] }, requireConvergence: true });
        const R0 = 1 / (1 + use * tau * x0);
        const R1 = 1 / (1 + use * tau * x1);
        expectClose(s.resources[0]![0]!, R0, 1e-9, "R0");
        expectClose(s.resources[0]![1]!, R1, 1e-9, "R1");
        expectClose(s.activity[1]![0]!, 1.5 * R0 * x0 - 0.5 * R1 * x1, 1e-9, "y");
      }),
      30,
    );
  });

  it("resources rest at 1 and stay in [0, 1] under a strong, long drive", () => {
    const net = buildNetwork(spec(100, 1));
    const s = new Settler(net, 1).settle({ phase: "free", inputs: { in: [1, 1] }, maxSteps: 5000 });
    for (const v of s.resources[0]!) {
      expect(v).toBeGreaterThanOrEqual(0);
      expect(v).toBeLessThanOrEqual(1);
    }
    const rest = new Settler(net, 1).settle({ phase: "free", inputs: { in: [0, 0] }, maxSteps: 3 });
    expect(Array.from(rest.resources[0]!)).toEqual([1, 1]);
  });

  it("refuses a utilisation outside (0, 1], with the path", () => {
    expect(() => buildNetwork(spec(1, 1.5))).toThrow(/connections\[0\]\.depression\.use/);
  });
});

describe.skipIf(!wasmSimdSupported())("stateful units and tau on the WebAssembly SIMD kernels", () => {
  it("settle like the TypeScript kernels (float64), their state in the kernels' memory", () => {
    const spec: NetworkSpecInput = {
      seed: 4,
      layers: [
        { name: "in", size: 9, role: "input" },
        { name: "h", size: 7, role: "hidden", tau: 3, adaptation: { tau: 6, gain: 0.8 } },
        { name: "out", size: 3, role: "output", unit: { kind: "tanh" } },
      ],
      connections: [
        { from: "in", to: "h", depression: { recovery: 4, use: 0.4 }, feedback: { kind: "tied", gain: 1 } },
        { from: "h", to: "out", feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: { dt: 0.3, maxSteps: 60 },
    };
    const wasm = loadWasmKernelsSync({ relaxed: false });
    const a = buildNetwork(spec);
    const b = buildNetwork(spec, { backend: wasm });
    const x = Array.from({ length: 18 }, (_, k) => ((k * 37) % 11) / 11);
    const sa = new Settler(a, 2).settle({ phase: "free", inputs: { in: x } });
    // settled in place (`out`), so the stateful units' arrays are the kernels' own
    const sb = new Settler(b, 2).settle({ phase: "free", inputs: { in: x } }, new Snapshot(b, 2));
    expect(wasm.isArenaView(sb.adaptation[1]!)).toBe(true);
    for (let k = 0; k < 6; k++) expectClose(sb.activity[2]![k]!, sa.activity[2]![k]!, 1e-10, `out[${k}]`);
    for (let k = 0; k < 14; k++) expectClose(sb.adaptation[1]![k]!, sa.adaptation[1]![k]!, 1e-10, `a[${k}]`);
    for (let k = 0; k < 18; k++) expectClose(sb.resources[0]![k]!, sa.resources[0]![k]!, 1e-10, `R[${k}]`);
  });
});
