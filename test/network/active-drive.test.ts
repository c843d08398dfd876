/**
 * Settling with the activity-sparse products (src/network/active-drive.ts) gives the same bits as with the dense
 * products, on every backend: random small networks of hard-sigmoid and rectified units (which sit at exactly 0)
 * with inputs that are mostly exact zeros, two hidden layers, a free and a nudged phase (the input drive and the
 * per-step products). Analytic property: leaving out terms x·w = ±0 from a sum that starts at +0 changes no bit
 * (IEEE 754-2019 §6.3; see src/kernels/active.ts).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { buildNetwork } from "../../src/index.js";
import { typescriptBackend } from "../../src/kernels/index.js";
import type { KernelBackend } from "../../src/kernels/backend.js";
import { ACTIVE_PRODUCT_CROSSOVER } from "../../src/kernels/active.js";
import { activeProductCounts, setActiveProductCrossover } from "../../src/network/active-drive.js";
import { settleBothWays } from "../helpers/active-settle.js";
import { check } from "../helpers/property.js";
import { wasmBackends } from "../kernels-wasm/backends.js";

const backends: readonly KernelBackend[] = [typescriptBackend, ...wasmBackends];
const always = { typescript: { wide: 2, narrow: 2 }, "wasm-simd": { wide: 2, narrow: 2 }, "wasm-relaxed-simd": { wide: 2, narrow: 2 } };
const never = { typescript: { wide: 0, narrow: 0 }, "wasm-simd": { wide: 0, narrow: 0 }, "wasm-relaxed-simd": { wide: 0, narrow: 0 } };

const caseArb = fc.record({
  batch: fc.integer({ min: 1, max: 12 }),
  sizes: fc.tuple(fc.integer({ min: 1, max: 40 }), fc.integer({ min: 1, max: 30 }), fc.integer({ min: 1, max: 20 }), fc.integer({ min: 1, max: 6 })),
  unit: fc.constantFrom("hard-sigmoid", "relu"),
  energy: fc.boolean(),
  zeros: fc.double({ min: 0, max: 1, noNaN: true }),
  seed: fc.integer({ min: 1, max: 2 ** 30 }),
  dtype: fc.constantFrom("float32" as const, "float64" as const),
});

type Case = typeof caseArb extends fc.Arbitrary<infer C> ? C : never;

function settleBoth(be: KernelBackend, t: Case): string[][] {
  const [nIn, h1, h2, nOut] = t.sizes;
  const unit = { kind: t.unit };
  const net = buildNetwork(
    {
      seed: t.seed,
      dtype: t.dtype,
      layers: [
        { name: "in", size: nIn, role: "input" },
        { name: "h1", size: h1, role: "hidden", unit },
        { name: "h2", size: h2, role: "hidden", unit },
        { name: "out", size: nOut, role: "output", unit },
      ],
      connections: [
        { from: "in", to: "h1", feedback: { kind: "tied", gain: 1 }, init: { kind: "glorot-uniform" } },
        { from: "h1", to: "h2", feedback: { kind: "tied", gain: 1 }, init: { kind: "glorot-uniform" } },
        { from: "h2", to: "out", feedback: { kind: "separate" }, init: { kind: "glorot-uniform" } },
      ],
      dynamics: t.energy ? { kind: "energy", dt: 0.5, maxSteps: 8, tolerance: 1e-12, clip: true } : { kind: "rate", dt: 0.5, maxSteps: 8, tolerance: 1e-12 },
    },
    { backend: be },
  );
  return settleBothWays(net, t.batch, t.seed, t.zeros, (on) => setActiveProductCrossover(on ? always : never));
}

describe("settling with activity-sparse products", () => {
  for (const be of backends) {
    it(`${be.name}: the same bits as the dense products (input drive and per-step products, two hidden layers)`, () => {
      activeProductCounts.active = 0;
      try {
        check(
          fc.property(caseArb, (t) => {
            const [active, dense] = settleBoth(be, t);
            expect(active).toEqual(dense);
          }),
          40,
        );
      } finally {
        setActiveProductCrossover(ACTIVE_PRODUCT_CROSSOVER);
      }
      // the active path did run
      expect(activeProductCounts.active).toBeGreaterThan(0);
    });
  }
});
