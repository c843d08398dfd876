import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { buildNetwork, Settler, type NetworkSpecInput } from "../../src/index.js";
import type { KernelBackend, UnitFillKind } from "../../src/kernels/public.js";
import type { Dtype, FloatArray } from "../../src/types/index.js";
import { check } from "../helpers/property.js";
import { inArena, wasmBackends } from "./backends.js";

// The fused rate step is specified as the composition of the separate kernels (backend.ts, `rateStep`):
// these tests hold it to that, bit for bit, on random layers, including sizes that cross the kernel's
// 512-element blocks and sizes with 1-3 trailing elements.

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

/** The separate kernels in the order the contract names; returns what rateStep must return. */
function separate(K: KernelBackend, kind: UnitFillKind, gain: number, offset: number, x: FloatArray, eta: FloatArray, t: FloatArray | null, beta: number, dt: number, bound: number, n: number): number {
  if (t !== null) {
    K.axpy(eta, t, beta, n);
    K.axpy(eta, x, -beta, n);
  }
  if (K.unitFill?.(kind, false, gain, offset, eta, eta, n) !== true) throw new Error("unitFill did not run");
  K.sub(eta, eta, x, n);
  K.axpby(eta, x, eta, 1, dt, n);
  const largest = K.maxAbs(eta, n);
  return largest <= bound ? K.maxAbsDiff(eta, x, n) : -1;
}

const kinds: UnitFillKind[] = ["logistic", "tanh", "relu", "hard-sigmoid", "linear"];
const value = fc.oneof(fc.double({ min: -8, max: 8, noNaN: true }), fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.constantFrom(0, -0, 1, -1, 88, -104, 1e30));
const sizes = fc.oneof(fc.integer({ min: 0, max: 23 }), fc.integer({ min: 509, max: 517 }), fc.integer({ min: 1021, max: 1100 }));

describe("fused rate step (WebAssembly) equals the separate kernels bit for bit", () => {
  for (const be of wasmBackends) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name} ${dtype}: random layers, units, nudging, dt and bounds`, () => {
        check(
          fc.property(
            sizes.chain((n) => fc.tuple(fc.constant(n), fc.array(value, { minLength: n, maxLength: n }), fc.array(value, { minLength: n, maxLength: n }), fc.array(value, { minLength: n, maxLength: n }))),
            fc.constantFrom(...kinds),
            fc.boolean(),
            fc.record({
              gain: fc.oneof(fc.constant(1), fc.double({ min: 0.1, max: 10, noNaN: true })),
              offset: fc.oneof(fc.constant(0), fc.double({ min: -2, max: 2, noNaN: true })),
              beta: fc.double({ min: -2, max: 2, noNaN: true }),
              dt: fc.double({ min: 0.01, max: 1, noNaN: true }),
              bound: fc.oneof(fc.constant(Infinity), fc.constant(1e6), fc.double({ min: 0.5, max: 100, noNaN: true })),
            }),
            ([n, xs, es, ts], kind, nudged, p) => {
              const [x, e1, e2, t] = inArena(be, make(dtype, xs), make(dtype, es), make(dtype, es), make(dtype, ts));
              const gain = kind === "logistic" ? p.gain : 1;
              const offset = kind === "logistic" ? p.offset : 0;
              const want = separate(be, kind, gain, offset, x, e1, nudged ? t : null, p.beta, p.dt, p.bound, n);
              const got = be.rateStep?.(kind, gain, offset, x, e2, nudged ? t : null, p.beta, p.dt, p.bound, n);
              sameBits(e2, e1, `${kind} n=${n}`);
              expect(got).toBe(want);
            },
          ),
          60,
        );
      });
    }

    it(`${be.name}: a NaN net input or a state beyond the bound returns -1 (float32 and float64)`, () => {
      for (const dtype of ["float32", "float64"] as const) {
        const [x, e] = inArena(be, make(dtype, [0, 0, 0, 0, 0]), make(dtype, [0, 1, Number.NaN, 2, 3]));
        expect(be.rateStep?.("tanh", 1, 0, x, e, null, 0, 0.5, Infinity, 5)).toBe(-1);
        const [x2, e2] = inArena(be, make(dtype, [10, 0, 0]), make(dtype, [10, 0, 0]));
        // linear unit: next = 10 + 0.5 (10 - 10) = 10 > bound 5
        expect(be.rateStep?.("linear", 1, 0, x2, e2, null, 0, 0.5, 5, 3)).toBe(-1);
        expect(be.rateStep?.("linear", 1, 0, x2, e2, null, 0, 0.5, 10, 3)).toBe(0);
      }
    });

    it(`${be.name}: calls it cannot take in place are declined, writing nothing`, () => {
      const [x, e] = inArena(be, make("float32", [0, 0, 0]), make("float32", [1, 2, 3]));
      const outside = Float32Array.from([1, 2, 3]);
      expect(be.rateStep?.("logistic", 1, 0, x, outside, null, 0, 0.5, Infinity, 3)).toBeNull();
      expect(Array.from(outside)).toEqual([1, 2, 3]);
      expect(be.rateStep?.("logistic", 1, 0, x, e, null, 0, 0.5, Infinity, 4)).toBeNull(); // n beyond the arrays
      expect(be.rateStep?.("logistic", 1, 0, e, e, null, 0, 0.5, Infinity, 3)).toBeNull(); // next aliases the state
      expect(be.rateStep?.("logistic", 0, 0, x, e, null, 0, 0.5, Infinity, 3)).toBeNull(); // gain not positive
      expect(Array.from(e)).toEqual([1, 2, 3]);
    });
  }
});

describe("settling with the fused step gives the same phases as the separate kernels", () => {
  const spec = (dtype: Dtype): NetworkSpecInput => ({
    dtype,
    seed: 11,
    layers: [
      { name: "sensors", size: 13, role: "input" },
      { name: "middle", size: 21, role: "hidden", unit: { kind: "tanh" } },
      { name: "choice", size: 6, role: "output", unit: { kind: "logistic", gain: 2, offset: 0.1 } },
    ],
    connections: [
      { from: "sensors", to: "middle", feedback: { kind: "tied", gain: 0.5 } },
      { from: "middle", to: "choice", feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.4, maxSteps: 30, tolerance: 1e-30 },
  });
  for (const be of wasmBackends) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name} ${dtype}: free and nudged snapshots are identical`, () => {
        const withoutFused: KernelBackend = { ...be, rateStep: undefined };
        const B = 5;
        const inputs = { sensors: Float64Array.from({ length: B * 13 }, (_, i) => (i * 7919) % 3 === 0 ? 1 : 0) };
        const targets = { choice: Float64Array.from({ length: B * 6 }, (_, i) => (i % 6 === i % 4 ? 1 : 0)) };
        const run = (K: KernelBackend) => {
          const net = buildNetwork(spec(dtype), { backend: K });
          const s = new Settler(net, B);
          const free = s.settle({ phase: "free", inputs });
          const freeStates = free.state.map((a) => Array.from(a));
          const nudged = s.settle({ phase: "nudged", beta: 0.7, inputs, targets, start: free });
          return { freeStates, nudgedStates: nudged.state.map((a) => Array.from(a)), change: nudged.lastChange };
        };
        const a = run(be);
        const b = run(withoutFused);
        expect(a.freeStates).toEqual(b.freeStates);
        expect(a.nudgedStates).toEqual(b.nudgedStates);
        expect(a.change).toBe(b.change);
      });
    }
  }
});
