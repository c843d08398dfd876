import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { buildNetwork, createRandom, Settler, type NetworkSpecInput, type Snapshot } from "../../src/index.js";
import { check } from "../helpers/property.js";

// The drive a phase reuses must be the drive it would have computed: these tests settle the same phases
// with and without `reuseDrive` and compare the states. For a chain of layers the sums are formed in the
// same order either way, so the states agree bit for bit; with skip and lateral connections the order of
// the additions may differ, so they agree to rounding (analytic property: the same sum of the same terms).

type Dtype = "float32" | "float64";

function chain(dtype: Dtype, sizes: number[], seed: number, extra: { skip: boolean; lateral: boolean }): NetworkSpecInput {
  const names = sizes.map((_, i) => (i === 0 ? "sensors" : i === sizes.length - 1 ? "report" : `stage${i}`));
  const connections: NonNullable<NetworkSpecInput["connections"]> = [];
  for (let i = 1; i < sizes.length; i++) connections.push({ from: names[i - 1]!, to: names[i]!, feedback: { kind: "tied", gain: 1 } });
  if (extra.skip && sizes.length > 2) connections.push({ from: names[0]!, to: names[sizes.length - 1]!, feedback: { kind: "tied", gain: 0.5 } });
  if (extra.lateral && sizes.length > 2) connections.push({ from: names[1]!, to: names[1]!, feedback: { kind: "none" } });
  return {
    dtype,
    seed,
    layers: sizes.map((size, i) => ({ name: names[i]!, size, role: i === 0 ? "input" : i === sizes.length - 1 ? "output" : "hidden" })),
    connections,
    dynamics: { dt: 0.5, maxSteps: 40, tolerance: 1e-30 },
  };
}

function values(seed: number, n: number): Float64Array {
  const r = createRandom(seed).child("values");
  return Float64Array.from({ length: n }, () => r.uniform());
}

function states(s: Snapshot): number[][] {
  return s.state.map((a) => Array.from(a));
}

describe("reusing the drive between phases", () => {
  it("a nudged phase after the free phase: identical states with and without reuse (chain, float32 and float64)", () => {
    check(
      fc.property(fc.array(fc.integer({ min: 1, max: 9 }), { minLength: 2, maxLength: 4 }), fc.integer({ min: 1, max: 4 }), fc.integer({ min: 0, max: 1e6 }), fc.constantFrom<Dtype>("float32", "float64"), (sizes, B, seed, dtype) => {
        const spec = chain(dtype, sizes, seed, { skip: false, lateral: false });
        const inputs = { sensors: values(seed + 1, B * sizes[0]!) };
        const targets = { report: values(seed + 2, B * sizes.at(-1)!) };
        const run = (reuse: boolean) => {
          const net = buildNetwork(spec);
          const s = new Settler(net, B);
          const free = s.settle({ phase: "free", inputs });
          const a = s.settle({ phase: "nudged", beta: 0.4, inputs, targets, start: free, reuseDrive: reuse });
          const aStates = states(a);
          const b = s.settle({ phase: "nudged", beta: -0.4, inputs, targets, start: free, reuseDrive: reuse });
          return [aStates, states(b)];
        };
        expect(run(true)).toEqual(run(false));
      }),
      60,
    );
  });

  it("a clamped phase after the free phase adds only what the clamped outputs send: identical states (chain)", () => {
    check(
      fc.property(fc.array(fc.integer({ min: 1, max: 9 }), { minLength: 2, maxLength: 4 }), fc.integer({ min: 1, max: 4 }), fc.integer({ min: 0, max: 1e6 }), (sizes, B, seed) => {
        const spec = chain("float64", sizes, seed, { skip: false, lateral: false });
        const inputs = { sensors: values(seed + 1, B * sizes[0]!) };
        const targets = { report: values(seed + 2, B * sizes.at(-1)!) };
        const run = (reuse: boolean) => {
          const s = new Settler(buildNetwork(spec), B);
          const free = s.settle({ phase: "free", inputs });
          return states(s.settle({ phase: "clamped", inputs, targets, start: free, reuseDrive: reuse }));
        };
        expect(run(true)).toEqual(run(false));
      }),
      60,
    );
  });

  it("with skip and lateral connections the reused drive agrees to rounding (float64, 1e-12)", () => {
    check(
      fc.property(fc.array(fc.integer({ min: 1, max: 7 }), { minLength: 3, maxLength: 4 }), fc.integer({ min: 1, max: 3 }), fc.integer({ min: 0, max: 1e6 }), fc.constantFrom("nudged", "clamped"), (sizes, B, seed, phase) => {
        const spec = chain("float64", sizes, seed, { skip: true, lateral: true });
        const inputs = { sensors: values(seed + 1, B * sizes[0]!) };
        const targets = { report: values(seed + 2, B * sizes.at(-1)!) };
        const run = (reuse: boolean) => {
          const s = new Settler(buildNetwork(spec), B);
          const free = s.settle({ phase: "free", inputs });
          return states(s.settle(phase === "nudged" ? { phase, beta: 0.3, inputs, targets, start: free, reuseDrive: reuse } : { phase, inputs, targets, start: free, reuseDrive: reuse }));
        };
        const a = run(true).flat();
        const b = run(false).flat();
        a.forEach((v, i) => expect(Math.abs(v - (b[i] as number))).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(b[i] as number))));
      }),
      40,
    );
  });

  it("is not taken for another inputs object, nor after a clamped phase for a free one", () => {
    const spec = chain("float64", [5, 4, 3], 3, { skip: false, lateral: false });
    const B = 2;
    const first = { sensors: values(1, B * 5) };
    const second = { sensors: values(2, B * 5) };
    const targets = { report: values(3, B * 3) };
    const net = buildNetwork(spec);
    const s = new Settler(net, B);
    const free1 = s.settle({ phase: "free", inputs: first });
    // other inputs: the drive must come from `second`, as in a fresh settler
    const reused = states(s.settle({ phase: "nudged", beta: 0.5, inputs: second, targets, start: free1, reuseDrive: true }));
    const fresh = new Settler(net, B);
    const free2 = fresh.settle({ phase: "free", inputs: first });
    expect(reused).toEqual(states(fresh.settle({ phase: "nudged", beta: 0.5, inputs: second, targets, start: free2 })));
    // a free phase after a clamped one: the clamped outputs' input must not linger in the drive
    s.settle({ phase: "clamped", inputs: first, targets, start: free1 });
    const after = states(s.settle({ phase: "free", inputs: first, reuseDrive: true }));
    expect(after).toEqual(states(new Settler(net, B).settle({ phase: "free", inputs: first })));
  });
});
