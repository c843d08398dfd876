import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { buildNetwork, randomAssociation, Settler, Trainer, type NetworkSpecInput } from "../../src/index.js";
import type { KernelBackend, UnitFillKind } from "../../src/kernels/public.js";
import type { Dtype, FloatArray } from "../../src/types/index.js";
import { check } from "../helpers/property.js";
import { inArena, wasmBackends } from "./backends.js";

// The fused energy step is specified as the composition of the separate kernels (backend.ts, `energyStep`):
// these tests hold it to that, bit for bit, on random layers (sizes crossing the kernel's 512-element blocks
// and with 1-3 trailing elements; signed zeros, infinities and NaN among the values), then hold whole
// settlings and whole training runs with it to the same runs without it.

function make(dtype: Dtype, values: readonly number[]): FloatArray {
  return dtype === "float32" ? Float32Array.from(values) : Float64Array.from(values);
}

function sameBits(actual: FloatArray, expected: FloatArray, label: string): void {
  for (let i = 0; i < expected.length; i++) {
    const a = actual[i] as number;
    const b = expected[i] as number;
    if (!(Object.is(a, b) || (Number.isNaN(a) && Number.isNaN(b)))) expect.fail(`${label}: element ${i}: fused ${a}, separate kernels ${b}`);
  }
}

/**
 * The separate kernels in the order the contract names (the settler's order before the fused kernel);
 * returns what energyStep must return: -1 for a NaN or infinite value or one beyond the bound, else the
 * largest change.
 */
function separate(K: KernelBackend, kind: UnitFillKind, gain: number, offset: number, clip: boolean, x: FloatArray, eta: FloatArray, next: FloatArray, dt: number, bound: number, n: number): number {
  if (K.unitFill?.(kind, true, gain, offset, next, x, n) !== true) throw new Error("unitFill did not run");
  K.mul(next, next, eta, n);
  K.sub(next, next, x, n);
  K.axpby(next, x, next, 1, dt, n);
  if (clip && K.unitFill?.(kind, false, gain, offset, next, next, n) !== true) throw new Error("unitFill did not run");
  const largest = K.maxAbs(next, n);
  return largest <= bound && largest < Infinity ? K.maxAbsDiff(next, x, n) : -1;
}

const kinds: UnitFillKind[] = ["logistic", "tanh", "relu", "hard-sigmoid", "linear"];
const value = fc.oneof(
  { weight: 8, arbitrary: fc.double({ min: -2, max: 3, noNaN: true }) },
  { weight: 4, arbitrary: fc.double({ min: -1e6, max: 1e6, noNaN: true }) },
  { weight: 2, arbitrary: fc.constantFrom(0, -0, 1, -1, 0.5, 1e-40, -1e-310, 1e30) },
  { weight: 1, arbitrary: fc.constantFrom(Number.NaN, Infinity, -Infinity) },
);
const sizes = fc.oneof(fc.integer({ min: 0, max: 23 }), fc.integer({ min: 509, max: 517 }), fc.integer({ min: 1021, max: 1100 }));

describe("fused energy step (WebAssembly) equals the separate kernels bit for bit", () => {
  for (const be of wasmBackends) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name} ${dtype}: random layers, units, clip, dt and bounds`, () => {
        check(
          fc.property(
            sizes.chain((n) => fc.tuple(fc.constant(n), fc.array(value, { minLength: n, maxLength: n }), fc.array(value, { minLength: n, maxLength: n }))),
            fc.constantFrom(...kinds),
            fc.boolean(),
            fc.record({
              gain: fc.oneof(fc.constant(1), fc.double({ min: 0.1, max: 10, noNaN: true })),
              offset: fc.oneof(fc.constant(0), fc.double({ min: -2, max: 2, noNaN: true })),
              dt: fc.oneof(fc.constant(0.5), fc.double({ min: 0.01, max: 1, noNaN: true })),
              bound: fc.oneof(fc.constant(Infinity), fc.constant(1e6), fc.double({ min: 0.5, max: 100, noNaN: true })),
            }),
            ([n, xs, es], kind, clip, p) => {
              const [x, eta, n1, n2] = inArena(be, make(dtype, xs), make(dtype, es), make(dtype, xs.map(() => 7)), make(dtype, xs.map(() => 9)));
              const gain = kind === "logistic" ? p.gain : 1;
              const offset = kind === "logistic" ? p.offset : 0;
              const want = separate(be, kind, gain, offset, clip, x, eta, n1, p.dt, p.bound, n);
              const got = be.energyStep?.(kind, gain, offset, clip, x, eta, n2, p.dt, p.bound, n);
              sameBits(n2, n1, `${kind} clip ${clip} n=${n}`);
              expect(got).toBe(want);
            },
          ),
          50,
        );
      });
    }

    it(`${be.name}: calls it cannot take in place are declined, writing nothing`, () => {
      const [x, e, next] = inArena(be, make("float32", [0, 0, 0]), make("float32", [1, 2, 3]), make("float32", [4, 5, 6]));
      const outside = Float32Array.from([1, 2, 3]);
      expect(be.energyStep?.("hard-sigmoid", 1, 0, true, x, e, outside, 0.5, Infinity, 3)).toBeNull();
      expect(Array.from(outside)).toEqual([1, 2, 3]);
      expect(be.energyStep?.("hard-sigmoid", 1, 0, true, x, e, next, 0.5, Infinity, 4)).toBeNull(); // n beyond the arrays
      expect(be.energyStep?.("hard-sigmoid", 1, 0, true, x, next, next, 0.5, Infinity, 3)).toBeNull(); // next aliases the net input
      expect(be.energyStep?.("hard-sigmoid", 1, 0, true, next, e, next, 0.5, Infinity, 3)).toBeNull(); // next aliases the state
      expect(be.energyStep?.("logistic", 0, 0, false, x, e, next, 0.5, Infinity, 3)).toBeNull(); // gain not positive
      expect(Array.from(next)).toEqual([4, 5, 6]);
    });
  }
});

describe("settling and training with the fused energy step give the runs of the separate kernels", () => {
  // clipped hard-sigmoid layers (the published EqProp setting's form: Scellier & Bengio 2017) and an unclipped
  // rectified layer take the fused step; the nudged output keeps the separate kernels
  const spec = (dtype: Dtype): NetworkSpecInput => ({
    dtype,
    seed: 5,
    layers: [
      { name: "in", size: 10, role: "input" },
      { name: "h1", size: 23, role: "hidden", unit: { kind: "hard-sigmoid" } },
      { name: "h2", size: 9, role: "hidden", unit: { kind: "relu" } },
      { name: "out", size: 6, role: "output", unit: { kind: "hard-sigmoid" } },
    ],
    connections: [
      { from: "in", to: "h1", feedback: { kind: "tied", gain: 1 }, init: { kind: "glorot-uniform" } },
      { from: "h1", to: "h2", feedback: { kind: "tied", gain: 1 }, init: { kind: "glorot-uniform" } },
      { from: "h2", to: "out", feedback: { kind: "tied", gain: 1 }, init: { kind: "glorot-uniform" } },
    ],
    dynamics: { kind: "energy", dt: 0.5, maxSteps: 12, tolerance: 1e-30, clip: true },
  });
  /** The same backend without its fused energy step (the settler then runs the separate kernels). */
  const unfused = (be: KernelBackend): KernelBackend => ({ ...be, energyStep: undefined });
  const bits = (a: ArrayLike<number>) => Array.from(a, (v) => (Number.isNaN(v) ? "NaN" : Object.is(v, -0) ? "-0" : v));

  for (const be of wasmBackends) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name} ${dtype}: free and nudged snapshots are identical`, () => {
        const B = 4;
        const inputs = { in: Float64Array.from({ length: B * 10 }, (_, i) => ((i * 7919) % 5) / 4) };
        const targets = { out: Float64Array.from({ length: B * 6 }, (_, i) => (i % 6 === i % 4 ? 1 : 0)) };
        const run = (K: KernelBackend) => {
          const net = buildNetwork(spec(dtype), { backend: K });
          const s = new Settler(net, B);
          const free = s.settle({ phase: "free", inputs });
          const freeStates = free.state.map(bits);
          const freeChanges = bits(free.layerChange);
          const nudged = s.settle({ phase: "nudged", beta: 0.5, inputs, targets, start: free, reuseDrive: true });
          return { freeStates, freeChanges, nudgedStates: nudged.state.map(bits), nudgedActivity: nudged.activity.map(bits), change: nudged.lastChange };
        };
        expect(run(be)).toEqual(run(unfused(be)));
      });
    }

    it(`${be.name}: EqProp training with persistent training and held-out states, shuffled: the same weights and held-out figures`, () => {
      const train = randomAssociation({ patterns: 14, inputSize: 10, targetSize: 6, seed: 3 });
      const test = randomAssociation({ patterns: 7, inputSize: 10, targetSize: 6, seed: 4 });
      const run = (K: KernelBackend) => {
        const net = buildNetwork(spec("float32"), { backend: K });
        const trainer = new Trainer(
          net,
          { rule: "eqprop", mode: "random-sign", beta: 0.5, freeSteps: 6, nudgedSteps: 3, cost: "rate", squaredHalf: false, rate: 0.2 },
          train,
          { epochs: 2, batchSize: 4, shuffle: true, persistentStates: true, persistentTestStates: true, ties: "first" },
          { test, seed: 9 },
        );
        trainer.run();
        const history = trainer.history.map(({ seconds: _s, ...r }) => r);
        return { history, weights: net.connections.map((c) => bits(c.weights)), biases: net.layers.map((l) => bits(l.bias)) };
      };
      // the fused kernel ran (and the reference run did not have it)
      let calls = 0;
      const counted: KernelBackend = { ...be, energyStep: (...a: Parameters<NonNullable<KernelBackend["energyStep"]>>) => (calls++, be.energyStep!(...a)) };
      const fused = run(counted);
      expect(calls).toBeGreaterThan(0);
      expect(fused).toEqual(run(unfused(be)));
    });
  }
});
