/**
 * Settling with the activity-sparse tied-feedback products (ActiveDrive.feedback, src/network/active-drive.ts)
 * gives the same bits as with the dense products, on every backend and build: random small networks with two
 * hidden layers of hard-sigmoid or rectified units (which sit at exactly 0), every connection fed back tied
 * (with a gain), mostly-zero inputs, a free and a nudged phase. Analytic property: leaving out terms x·w = ±0
 * in the dense kernel's grouping changes no bit (IEEE 754-2019 §6.3; see src/kernels/active.ts).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { buildNetwork } from "../../src/index.js";
import { typescriptBackend } from "../../src/kernels/index.js";
import type { KernelBackend } from "../../src/kernels/backend.js";
import { ACTIVE_FEEDBACK_CROSSOVER, ACTIVE_PRODUCT_CROSSOVER } from "../../src/kernels/active.js";
import { activeProductCounts, setActiveFeedbackCrossover, setActiveProductCrossover } from "../../src/network/active-drive.js";
import { settleBothWays } from "../helpers/active-settle.js";
import { check } from "../helpers/property.js";
import { wasmBackends } from "../kernels-wasm/backends.js";

const backends: readonly KernelBackend[] = [typescriptBackend, ...wasmBackends];
const always = { typescript: { wide: 2, narrow: 2 }, "wasm-simd": { wide: 2, narrow: 2 }, "wasm-relaxed-simd": { wide: 2, narrow: 2 } };
const never = { typescript: { wide: 0, narrow: 0 }, "wasm-simd": { wide: 0, narrow: 0 }, "wasm-relaxed-simd": { wide: 0, narrow: 0 } };
const feedbackAlways = { typescript: 2, "wasm-simd": 2, "wasm-relaxed-simd": 2 };
const feedbackNever = { typescript: 0, "wasm-simd": 0, "wasm-relaxed-simd": 0 };

const caseArb = fc.record({
  batch: fc.integer({ min: 1, max: 9 }),
  sizes: fc.tuple(fc.integer({ min: 1, max: 30 }), fc.integer({ min: 1, max: 37 }), fc.integer({ min: 1, max: 37 }), fc.integer({ min: 1, max: 6 })),
  unit: fc.constantFrom("hard-sigmoid", "relu"),
  energy: fc.boolean(),
  gain: fc.constantFrom(1, 0.5, 0.25),
  zeros: fc.double({ min: 0, max: 1, noNaN: true }),
  seed: fc.integer({ min: 1, max: 2 ** 30 }),
  dtype: fc.constantFrom("float32" as const, "float64" as const),
});

type Case = typeof caseArb extends fc.Arbitrary<infer C> ? C : never;

function settleBoth(be: KernelBackend, t: Case): string[][] {
  const [nIn, h1, h2, nOut] = t.sizes;
  const unit = { kind: t.unit };
  const tied = { kind: "tied", gain: t.energy ? 1 : t.gain } as const;
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
        { from: "in", to: "h1", feedback: tied, init: { kind: "glorot-uniform" } },
        { from: "h1", to: "h2", feedback: tied, init: { kind: "glorot-uniform" } },
        { from: "h2", to: "out", feedback: tied, init: { kind: "glorot-uniform" } },
      ],
      dynamics: t.energy ? { kind: "energy", dt: 0.5, maxSteps: 6, tolerance: 1e-12, clip: true } : { kind: "rate", dt: 0.5, maxSteps: 6, tolerance: 1e-12 },
    },
    { backend: be },
  );
  return settleBothWays(net, t.batch, t.seed, t.zeros, (on) => {
    setActiveProductCrossover(on ? always : never);
    setActiveFeedbackCrossover(on ? feedbackAlways : feedbackNever);
  });
}

describe("settling with activity-sparse tied-feedback products", () => {
  for (const be of backends) {
    it(`${be.name}: the same bits as the dense products (two hidden layers, tied feedback with a gain)`, () => {
      activeProductCounts.feedbackActive = 0;
      activeProductCounts.reused = 0;
      try {
        check(
          fc.property(caseArb, (t) => {
            const [active, dense] = settleBoth(be, t);
            expect(active).toEqual(dense);
          }),
          30,
        );
      } finally {
        setActiveProductCrossover(ACTIVE_PRODUCT_CROSSOVER);
        setActiveFeedbackCrossover(ACTIVE_FEEDBACK_CROSSOVER);
      }
      // the active feedback path did run; on TypeScript (blocks of one entry) a layer listed for its feedback is not listed again for its forward product
      expect(activeProductCounts.feedbackActive).toBeGreaterThan(0);
      if (be.name === "typescript") expect(activeProductCounts.reused).toBeGreaterThan(0);
    });
  }
});
