import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { buildNetwork, Settler, energy, EbbflowError, type NetworkSpecInput } from "../../src/index.js";
import { check } from "../helpers/property.js";
import { expectClose, EPS32 } from "../helpers/tolerance.js";
import { solve } from "../helpers/linalg.js";

const tight = { kind: "rate" as const, dt: 0.5, maxSteps: 5000, tolerance: 1e-14 };

describe("rate dynamics", () => {
  it("linear units settle to the closed-form fixed point x* = (I - W)^-1 b (linear algebra)", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 6 }), fc.integer({ min: 0, max: 2 ** 31 - 1 }), (n, seed) => {
        // random W with row sums of |w| below 0.8 so that I - W is invertible and the dynamics contract
        let s = seed;
        const rnd = () => ((s = (s * 1103515245 + 12345) % 2147483648) / 2147483648) * 2 - 1;
        const w = Array.from({ length: n * n }, rnd);
        for (let i = 0; i < n; i++) {
          let sum = 0;
          for (let j = 0; j < n; j++) sum += Math.abs(w[i * n + j]!);
          for (let j = 0; j < n; j++) w[i * n + j] = (w[i * n + j]! * 0.8) / Math.max(sum, 1e-9);
        }
        const b = Array.from({ length: n }, rnd);
        const net = buildNetwork({
          layers: [
            { name: "in", size: 1, role: "input" },
            { name: "x", size: n, role: "output", unit: { kind: "linear" }, bias: b },
          ],
          connections: [
            { from: "in", to: "x", init: { kind: "constant", value: 0 } },
            { from: "x", to: "x", weights: w },
          ],
          dynamics: tight,
        });
        const snap = new Settler(net, 1).settle({ phase: "free", inputs: { in: [1] } });
        expect(snap.converged).toBe(true);
        const a = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === j ? 1 : 0) - w[i * n + j]!));
        const xs = solve(a, b);
        for (let i = 0; i < n; i++) expectClose(snap.activity[1]![i]!, xs[i]!, 1e-10, `x*[${i}]`);
      }),
      50,
    );
  });

  it("the 3-unit CHL network settles to the listed free and clamped fixed points (methods.md item 1 [DER, numerically verified])", () => {
    const net = buildNetwork({
      layers: [
        { name: "in", size: 1, role: "input" },
        { name: "hidden", size: 1, role: "hidden", bias: 0.1 },
        { name: "out", size: 1, role: "output", bias: -0.2 },
      ],
      connections: [
        { from: "in", to: "hidden", weights: [0.5], feedback: { kind: "tied", gain: 1 } },
        { from: "in", to: "out", weights: [-0.3], feedback: { kind: "tied", gain: 1 } },
        { from: "hidden", to: "out", weights: [0.8], feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: tight,
    });
    const settler = new Settler(net, 1);
    const free = settler.settle({ phase: "free", inputs: { in: [1] } });
    expect(free.converged).toBe(true);
    expectClose(free.activity[1]![0]!, 0.73448664, 1e-8, "s-[1]");
    expectClose(free.activity[2]![0]!, 0.52188334, 1e-8, "s-[2]");
    const clamped = settler.settle({ phase: "clamped", inputs: { in: [1] }, targets: { out: [0.9] } });
    expectClose(clamped.activity[1]![0]!, 0.78918171, 1e-8, "s+[1]");
    expect(clamped.activity[2]![0]).toBe(0.9);
  });

  it("the recurrent tanh network settles to s* of methods.md item 5 to 1e-10 ([DER, numerically verified])", () => {
    const net = buildNetwork({
      layers: [
        { name: "x", size: 3, role: "input" },
        { name: "s", size: 3, role: "output", unit: { kind: "tanh" } },
      ],
      connections: [
        { from: "x", to: "s", weights: [1, 0, 0, 0, 1, 0, 0, 0, 1] },
        { from: "s", to: "s", weights: [0.0, 0.5, -0.3, 0.2, 0.0, 0.4, -0.1, 0.3, 0.0] },
      ],
      dynamics: tight,
    });
    const snap = new Settler(net, 1).settle({ phase: "free", inputs: { x: [0.5, -0.2, 0.1] } });
    expect(snap.converged).toBe(true);
    const want = [0.412634646767, -0.106338039948, 0.026828683657];
    want.forEach((v, i) => expect(Math.abs(snap.activity[1]![i]! - v)).toBeLessThan(1e-10));
  });

  it("Xie–Seung layered network: the free fixed point satisfies x_k = f(W_k x_{k-1} + γ W_{k+1}ᵀ x_{k+1} + b_k) (methods.md item 3, Eq. 2.5)", () => {
    check(
      fc.property(
        fc.integer({ min: 1, max: 5 }),
        fc.integer({ min: 1, max: 5 }),
        fc.integer({ min: 1, max: 4 }),
        fc.double({ min: 0, max: 0.5, noNaN: true }),
        fc.integer({ min: 0, max: 1e6 }),
        (h1, h2, o, gamma, seed) => {
          const net = buildNetwork({
            seed,
            layers: [
              { name: "in", size: 3, role: "input" },
              { name: "h1", size: h1, role: "hidden" },
              { name: "h2", size: h2, role: "hidden" },
              { name: "out", size: o, role: "output", unit: { kind: "linear" } },
            ],
            connections: [
              { from: "in", to: "h1", init: { kind: "normal", std: 0.8 } },
              { from: "h1", to: "h2", init: { kind: "normal", std: 0.8 }, feedback: { kind: "tied", gain: gamma } },
              { from: "h2", to: "out", init: { kind: "normal", std: 0.8 }, feedback: { kind: "tied", gain: gamma } },
            ],
            dynamics: { dt: 0.5, maxSteps: 20000, tolerance: 1e-13 },
          });
          const snap = new Settler(net, 1).settle({ phase: "free", inputs: { in: [0.3, -0.5, 0.8] }, requireConvergence: true });
          const x = snap.activity;
          const W = (c: number) => net.connections[c]!.weights;
          const sizes = [3, h1, h2, o];
          for (let k = 1; k <= 3; k++) {
            for (let i = 0; i < sizes[k]!; i++) {
              let eta = net.layers[k]!.bias[i]!;
              for (let j = 0; j < sizes[k - 1]!; j++) eta += W(k - 1)[i * sizes[k - 1]! + j]! * x[k - 1]![j]!;
              if (k < 3) for (let j = 0; j < sizes[k + 1]!; j++) eta += gamma * W(k)[j * sizes[k]! + i]! * x[k + 1]![j]!;
              const f = k === 3 ? eta : 1 / (1 + Math.exp(-eta));
              expect(Math.abs(x[k]![i]! - f)).toBeLessThan(1e-10);
            }
          }
        },
      ),
      40,
    );
  });
});

describe("energy dynamics", () => {
  it("with symmetric (tied, gain 1) weights the energy never increases from step to step (Hopfield 1984, PNAS 81:3088)", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 4 }), fc.integer({ min: 1, max: 4 }), fc.integer({ min: 0, max: 1e6 }), fc.boolean(), (h, o, seed, nudged) => {
        const net = buildNetwork({
          seed,
          layers: [
            { name: "in", size: 2, role: "input" },
            { name: "h", size: h, role: "hidden", bias: 0.1 },
            { name: "out", size: o, role: "output", bias: -0.1 },
          ],
          connections: [
            { from: "in", to: "h", init: { kind: "normal", std: 1 }, feedback: { kind: "tied", gain: 1 } },
            { from: "h", to: "out", init: { kind: "normal", std: 1 }, feedback: { kind: "tied", gain: 1 } },
          ],
          dynamics: { kind: "energy", dt: 0.05, maxSteps: 1 },
        });
        const settler = new Settler(net, 2);
        const inputs = { in: [0.2, 0.9, 1, 0.1] };
        const targets = { out: Array.from({ length: 2 * o }, (_, i) => (i % 2) * 0.8 + 0.1) };
        const beta = nudged ? 0.5 : 0;
        let snap = settler.settle({ phase: "free", inputs });
        let e = energy(net, snap, targets, beta);
        for (let step = 0; step < 200; step++) {
          snap = settler.settle(nudged ? { phase: "nudged", beta, inputs, targets, start: snap } : { phase: "free", inputs, start: snap });
          const e2 = energy(net, snap, targets, beta);
          expect(e2).toBeLessThanOrEqual(e + 1e-12 * Math.max(1, Math.abs(e)));
          e = e2;
        }
      }),
      30,
    );
  });

  it("the linear EqProp fixture reaches its closed-form free fixed point h = 11/21, y = 13/42 (methods.md item 4 [DER])", () => {
    const net = buildNetwork({
      layers: [
        { name: "x", size: 1, role: "input" },
        { name: "h", size: 1, role: "hidden", unit: { kind: "hard-sigmoid" }, bias: 0.1 },
        { name: "y", size: 1, role: "output", unit: { kind: "hard-sigmoid" }, bias: 0.1 },
      ],
      connections: [
        { from: "x", to: "h", weights: [0.3], feedback: { kind: "tied", gain: 1 } },
        { from: "h", to: "y", weights: [0.4], feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: { kind: "energy", dt: 0.5, maxSteps: 5000, tolerance: 1e-15 },
    });
    const s = new Settler(net, 1);
    const free = s.settle({ phase: "free", inputs: { x: [1] } });
    expectClose(free.state[1]![0]!, 11 / 21, 1e-12, "h");
    expectClose(free.state[2]![0]!, 13 / 42, 1e-12, "y");
    // nudged: (1 + β) y = W2 h + b_y + β d, h = W1 x + W2 y + b_h
    const beta = 0.1;
    const nudged = s.settle({ phase: "nudged", beta, inputs: { x: [1] }, targets: { y: [0.9] }, start: free });
    const h = nudged.state[1]![0]!;
    const y = nudged.state[2]![0]!;
    expectClose(h, 0.3 + 0.4 * y + 0.1, 1e-12, "h nudged");
    expectClose((1 + beta) * y, 0.4 * h + 0.1 + beta * 0.9, 1e-12, "y nudged");
  });
});

describe("inhibition", () => {
  it("k-winners-take-all leaves exactly k rectified units active (common practice)", () => {
    check(
      fc.property(fc.integer({ min: 2, max: 9 }), fc.integer({ min: 0, max: 1e6 }), (n, seed) => {
        const k = 1 + (seed % (n - 1));
        const net = buildNetwork({
          seed,
          layers: [
            { name: "in", size: 4, role: "input" },
            { name: "out", size: n, role: "output", unit: { kind: "relu" }, inhibition: { kind: "kwta", k } },
          ],
          connections: [{ from: "in", to: "out", init: { kind: "normal", std: 1 } }],
          dynamics: { dt: 1, maxSteps: 3 },
        });
        const snap = new Settler(net, 1).settle({ phase: "free", inputs: { in: [0.9, 0.1, 0.5, 0.7] } });
        const active = Array.from(snap.activity[1]!).filter((v) => v > 0).length;
        // ties in the net input could leave fewer than k strictly above the midpoint
        expect(active).toBeLessThanOrEqual(k);
        expect(active).toBeGreaterThanOrEqual(1);
      }),
    );
  });

  it("pooled inhibition lowers the settled mean activity as its gain grows (common practice)", () => {
    const mean = (gain: number) => {
      const net = buildNetwork({
        seed: 3,
        layers: [
          { name: "in", size: 3, role: "input" },
          { name: "out", size: 6, role: "output", inhibition: { kind: "pooled", gain } },
        ],
        connections: [{ from: "in", to: "out", init: { kind: "uniform", low: 0, high: 1 } }],
      });
      const a = new Settler(net, 1).settle({ phase: "free", inputs: { in: [1, 1, 1] } }).activity[1]!;
      return Array.from(a).reduce((x, y) => x + y, 0) / a.length;
    };
    expect(mean(2)).toBeLessThan(mean(0));
    expect(mean(8)).toBeLessThan(mean(2));
  });
});

describe("batches, precision and reproducibility", () => {
  const spec = (dtype: "float32" | "float64", seed = 7): NetworkSpecInput => ({
    dtype,
    seed,
    layers: [
      { name: "in", size: 5, role: "input" },
      { name: "h", size: 7, role: "hidden" },
      { name: "out", size: 3, role: "output" },
    ],
    connections: [
      { from: "in", to: "h", feedback: { kind: "none" } },
      { from: "h", to: "out", feedback: { kind: "tied", gain: 0.5 } },
    ],
    dynamics: { dt: 0.5, maxSteps: 300, tolerance: 1e-7 },
  });
  const inputs = { in: Array.from({ length: 15 }, (_, i) => Math.sin(i)) };

  it("same seed, same bits", () => {
    const a = new Settler(buildNetwork(spec("float64")), 3).settle({ phase: "free", inputs });
    const b = new Settler(buildNetwork(spec("float64")), 3).settle({ phase: "free", inputs });
    expect(Array.from(a.activity[2]!)).toEqual(Array.from(b.activity[2]!));
    const c = new Settler(buildNetwork(spec("float64", 8)), 3).settle({ phase: "free", inputs });
    expect(Array.from(c.activity[2]!)).not.toEqual(Array.from(a.activity[2]!));
  });

  it("float32 and float64 agree to float32 tolerance", () => {
    const a = new Settler(buildNetwork(spec("float64")), 3).settle({ phase: "free", inputs });
    const b = new Settler(buildNetwork(spec("float32")), 3).settle({ phase: "free", inputs });
    expect(b.activity[2]).toBeInstanceOf(Float32Array);
    for (let i = 0; i < 9; i++) expectClose(b.activity[2]![i]!, a.activity[2]![i]!, 1e-4, `out[${i}]`);
    expect(EPS32).toBeLessThan(1e-4);
  });

  it("settling a batch equals settling each pattern alone", () => {
    const net = buildNetwork(spec("float64"));
    const all = new Settler(net, 3).settle({ phase: "free", inputs, tolerance: 1e-13, maxSteps: 2000 });
    for (let p = 0; p < 3; p++) {
      const one = new Settler(net, 1).settle({ phase: "free", inputs: { in: inputs.in.slice(p * 5, p * 5 + 5) }, tolerance: 1e-13, maxSteps: 2000 });
      for (let j = 0; j < 3; j++) expectClose(one.activity[2]![j]!, all.activity[2]![p * 3 + j]!, 1e-12);
    }
  });

  it("records every step when asked", () => {
    const snap = new Settler(buildNetwork(spec("float64")), 3).settle({ phase: "free", inputs, record: true, maxSteps: 12, tolerance: 1e-30 });
    expect(snap.record).toHaveLength(12);
    expect(snap.steps).toBe(12);
    expect(snap.converged).toBe(false);
    expect(Array.from(snap.record![11]![2]!)).toEqual(Array.from(snap.activity[2]!));
  });
});

describe("bad input", () => {
  const net = buildNetwork({
    layers: [
      { name: "in", size: 2, role: "input" },
      { name: "out", size: 1, role: "output", unit: { kind: "linear" } },
    ],
    connections: [{ from: "in", to: "out", weights: [1, 1] }],
  });

  it("wrong input or target length names the layer, the expected and the found length", () => {
    const s = new Settler(net, 2);
    const e = (() => {
      try {
        s.settle({ phase: "clamped", inputs: { in: [1, 2, 3] }, targets: { out: [1] } });
      } catch (err) {
        return err as EbbflowError;
      }
      throw new Error("no error");
    })();
    expect(e).toBeInstanceOf(EbbflowError);
    expect(e.issues.map((i) => i.path)).toEqual(["inputs.in", "targets.out"]);
    expect(e.issues[0]!.expected).toContain("4 values");
    expect(e.issues[0]!.received).toBe("3 values");
  });

  it("a NaN input is rejected, never propagated", () => {
    expect(() => new Settler(net, 1).settle({ phase: "free", inputs: { in: [1, Number.NaN] } })).toThrow(/inputs\.in\[1\]/);
  });

  it("typed-array inputs and targets are checked too: NaN, infinities, and values beyond float32's range in a float32 network", () => {
    const pathOf = (f: () => unknown) => {
      try {
        f();
      } catch (err) {
        return (err as EbbflowError).issues.map((i) => `${i.path}: ${i.expected}`);
      }
      throw new Error("no error");
    };
    expect(pathOf(() => new Settler(net, 1).settle({ phase: "free", inputs: { in: Float64Array.of(1, Number.NaN) } }))).toEqual(["inputs.in[1]: a finite number"]);
    expect(pathOf(() => new Settler(net, 1).settle({ phase: "clamped", inputs: { in: Float32Array.of(1, 0) }, targets: { out: Float64Array.of(-Infinity) } }))).toEqual(["targets.out[0]: a finite number"]);
    const net32 = buildNetwork({ ...net.spec, dtype: "float32" });
    // 1e300 is a finite float64 but rounds to Infinity in float32 storage (IEEE 754 binary32 max ≈ 3.4e38)
    expect(pathOf(() => new Settler(net32, 1).settle({ phase: "free", inputs: { in: Float64Array.of(0.5, 1e300) } }))).toEqual(["inputs.in[1]: a number within the range of float32"]);
    expect(pathOf(() => new Settler(net32, 1).settle({ phase: "free", inputs: { in: [0.5, 1e300] } }))).toEqual(["inputs.in[1]: a number within the range of float32"]);
    // arrays of another element type are refused by value, not by a crash
    expect(pathOf(() => new Settler(net, 1).settle({ phase: "free", inputs: { in: BigInt64Array.of(1n, 2n) as unknown as ArrayLike<number> } }))).toEqual(["inputs.in[0]: a finite number"]);
    // the values loaded are the values given
    const ok = new Settler(net32, 1).settle({ phase: "free", inputs: { in: Float64Array.of(0.25, -3) } });
    expect(Array.from(ok.activity[0]!)).toEqual([0.25, -3]);
  });

  it("β = 0 in the nudged phase is rejected", () => {
    expect(() => new Settler(net, 1).settle({ phase: "nudged", beta: 0, inputs: { in: [1, 1] }, targets: { out: [1] } })).toThrow(EbbflowError);
  });

  it("divergence stops settling with an error naming the layer and the step", () => {
    const wild = buildNetwork({
      layers: [
        { name: "in", size: 1, role: "input" },
        { name: "loop", size: 2, role: "output", unit: { kind: "linear" } },
      ],
      connections: [
        { from: "in", to: "loop", weights: [1, 1] },
        { from: "loop", to: "loop", weights: [0, 3, 3, 0] },
      ],
      dynamics: { dt: 0.5, maxSteps: 1000, bound: 1e6 },
    });
    try {
      new Settler(wild, 1).settle({ phase: "free", inputs: { in: [1] } });
      throw new Error("no error");
    } catch (e) {
      const err = e as EbbflowError;
      expect(err.code).toBe("divergence");
      expect(err.path).toBe("layers[1]");
      expect(err.message).toMatch(/"loop"/);
      expect(err.message).toMatch(/step \d+/);
    }
  });

  it("requireConvergence turns a run that hits maxSteps into an error instead of a half-settled result", () => {
    expect(() => new Settler(net, 1).settle({ phase: "free", inputs: { in: [1, 1] }, maxSteps: 2, requireConvergence: true })).toThrow(/converge/);
  });
});
