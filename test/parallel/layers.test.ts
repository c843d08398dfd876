import fc from "fast-check";
import { describe, it, expect } from "vitest";
import { createRule, createRandom, ParameterDelta, type NetworkSpecInput, type RuleConfigInput } from "../../src/index.js";
import { ParallelRule } from "../../src/node/index.js";
import { check } from "../helpers/property.js";
import { build, deltaValues, expectAgree, kernelsUnderTest, parameters, refusal } from "./common.js";

// Several input and output layers, and targets observed on some patterns only, on worker threads. The
// reference is the one-thread rule, whose handling of unobserved targets is checked against twin networks
// and the masked exact gradient in test/verify/partial-clamping.test.ts. A worker count changes only the
// order of the sums over the batch (and each slice's own stop rule, set below float32 resolution here), so
// the results agree within a few float32 roundings of the largest term, as in rows.test.ts.

interface Sizes {
  readonly a: number;
  readonly b: number;
  readonly h: number;
  readonly p: number;
  readonly q: number;
}

/** Two input layers (a, b) → h → two output layers (p, q), and b → q directly; tied feedback. */
function twoByTwo(s: Sizes, dtype: "float32" | "float64", seed: number, extra: Partial<NetworkSpecInput> = {}): NetworkSpecInput {
  return {
    dtype,
    seed,
    layers: [
      { name: "a", size: s.a, role: "input" },
      { name: "b", size: s.b, role: "input" },
      { name: "h", size: s.h, role: "hidden" },
      { name: "p", size: s.p, role: "output" },
      { name: "q", size: s.q, role: "output" },
    ],
    connections: [
      { from: "a", to: "h", feedback: { kind: "tied", gain: 1 } },
      { from: "b", to: "h", feedback: { kind: "tied", gain: 1 } },
      { from: "h", to: "p", feedback: { kind: "tied", gain: 1 } },
      { from: "h", to: "q", feedback: { kind: "tied", gain: 1 } },
      { from: "b", to: "q", feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.5, maxSteps: 60, tolerance: 1e-12 },
    ...extra,
  } as NetworkSpecInput;
}

/**
 * A batch of `B` patterns: inputs uniform in [0, 1), targets in [0.1, 0.9] (values of our own invention);
 * each output layer observed in a pattern with probability ½ (a NaN row where not).
 */
function maskedBatch(s: Sizes, B: number, seed: number) {
  const rng = createRandom(seed).child("batch");
  const values = (n: number, lo: number, span: number) => Float64Array.from({ length: B * n }, () => lo + span * rng.uniform());
  const inputs = { a: values(s.a, 0, 1), b: values(s.b, 0, 1) };
  const full = { p: values(s.p, 0.1, 0.8), q: values(s.q, 0.1, 0.8) };
  const observed = { p: Array.from({ length: B }, () => rng.uniform() < 0.5), q: Array.from({ length: B }, () => rng.uniform() < 0.5) };
  const targets = {
    p: full.p.map((v, k) => (observed.p[Math.floor(k / s.p)] ? v : Number.NaN)),
    q: full.q.map((v, k) => (observed.q[Math.floor(k / s.q)] ? v : Number.NaN)),
  };
  return { inputs, targets, full, observed };
}

const rowRules: readonly RuleConfigInput[] = [
  { rule: "eqprop", beta: 0.4, rate: 0.3 },
  { rule: "eqprop", beta: 0.4, rate: 0.3, mode: "symmetric" },
  { rule: "chl", rate: 0.3 },
  { rule: "generec", rate: 0.3 },
  { rule: "generec", rate: 0.3, variant: "symmetric-midpoint" },
  { rule: "xie-seung", rate: 0.3, gamma: 0.5 },
];
const sliceRules: readonly RuleConfigInput[] = [
  { rule: "backprop", rate: 0.3 },
  { rule: "calcium", rate: 0.3, threshold: "error" },
];

const sizesArb = fc.record({ a: fc.integer({ min: 1, max: 4 }), b: fc.integer({ min: 1, max: 3 }), h: fc.integer({ min: 1, max: 5 }), p: fc.integer({ min: 1, max: 3 }), q: fc.integer({ min: 1, max: 2 }) });

describe("multi-core training with several input and output layers and unobserved targets", () => {
  it("row and slice splits on 1 to 3 workers equal one thread within float32 tolerance (random nets, masks and batch sizes, both kernels)", async () => {
    await check(
      fc.asyncProperty(
        fc.constantFrom(...kernelsUnderTest),
        fc.constantFrom(...rowRules, ...sliceRules),
        sizesArb,
        fc.array(fc.integer({ min: 1, max: 7 }), { minLength: 3, maxLength: 3 }),
        fc.integer({ min: 1, max: 3 }),
        fc.constantFrom("float32" as const, "float64" as const),
        fc.integer({ min: 0, max: 1000 }),
        async (kernels, rule, sizes, patterns, workers, dtype, seed) => {
          const spec = twoByTwo(sizes, dtype, seed);
          const batches = patterns.map((B, i) => maskedBatch(sizes, B, seed + i));
          const one = build(spec, kernels);
          const par = await ParallelRule.create(build(spec, kernels), rule, workers);
          try {
            expect(par.split).toBe(sliceRules.includes(rule) ? "slices" : "rows");
            const reference = createRule(one, rule);
            const first = { inputs: batches[0]!.inputs, targets: batches[0]!.targets };
            const d1 = reference.computeDelta(first, new ParameterDelta(one));
            const d2 = await par.computeDelta(first);
            expectAgree(deltaValues(d2), deltaValues(d1), Math.max(...deltaValues(d1).map(Math.abs)), "change");
            for (const { inputs, targets } of batches) {
              reference.step({ inputs, targets });
              await par.step({ inputs, targets });
            }
            const expected = parameters(one);
            expectAgree(parameters(par.net), expected, Math.max(...expected.map(Math.abs)), "parameters after 3 steps");
          } finally {
            await par.close();
          }
        },
      ),
      6,
    );
  });

  it.each(kernelsUnderTest)("the same worker count gives the same bits with masked batches; an `observed` mask and NaN rows give the same bits (%s kernels)", async (kernels) => {
    const sizes: Sizes = { a: 6, b: 3, h: 5, p: 3, q: 2 };
    // the row split on both kernels, the slice split on the TypeScript kernels
    for (const rule of kernels === "typescript" ? [rowRules[1]!, sliceRules[0]!] : [rowRules[1]!]) {
      const train = async (par: ParallelRule, viaMask: boolean) => {
        for (let s = 0; s < 3; s++) {
          const m = maskedBatch(sizes, 9, s);
          await par.step(viaMask ? { inputs: m.inputs, targets: m.full, observed: { p: m.observed.p, q: m.observed.q.map(Number) } } : { inputs: m.inputs, targets: m.targets });
        }
        return parameters(par.net);
      };
      // two instances trained side by side (their threads compete for the cores: timing differs, bits must not)
      const pars = await Promise.all([0, 1].map(() => ParallelRule.create(build(twoByTwo(sizes, "float32", 3), kernels), rule, 2)));
      try {
        const [a, b] = await Promise.all(pars.map((p, i) => train(p, i === 1)));
        expect(b).toEqual(a);
      } finally {
        await Promise.all(pars.map((p) => p.close()));
      }
    }
  });

  it("predictive coding (slice split) with linear outputs not observed for some patterns equals one thread", async () => {
    const sizes: Sizes = { a: 3, b: 2, h: 4, p: 2, q: 2 };
    const base = twoByTwo(sizes, "float64", 6);
    const spec = { ...base, layers: base.layers!.map((l) => (l.role === "output" ? { ...l, unit: { kind: "linear" } } : l.role === "hidden" ? { ...l, unit: { kind: "tanh" } } : l)), connections: base.connections!.map(({ feedback: _f, ...c }) => c) } as NetworkSpecInput;
    const rule: RuleConfigInput = { rule: "predictive-coding", rate: 0.2, outputVariance: 4, dt: 0.2, maxSteps: 5000, tolerance: 1e-13 };
    const one = build(spec, "typescript");
    const reference = createRule(one, rule);
    const par = await ParallelRule.create(build(spec, "typescript"), rule, 2);
    try {
      expect(par.split).toBe("slices");
      for (let s = 0; s < 3; s++) {
        const m = maskedBatch(sizes, 7, 20 + s);
        reference.step({ inputs: m.inputs, targets: m.targets });
        await par.step({ inputs: m.inputs, targets: m.full, observed: m.observed });
      }
      // float64; each slice's inference stops by its own rule (tolerance 1e-13), so agreement is to about that
      parameters(par.net).forEach((v, i) => expect(Math.abs(v - parameters(one)[i]!)).toBeLessThan(1e-10));
    } finally {
      await par.close();
    }
  });

  it("a layer observed in no pattern may leave out its targets (`observed: false`); bad batches are refused with the layer named", async () => {
    const sizes: Sizes = { a: 3, b: 2, h: 4, p: 2, q: 1 };
    const spec = twoByTwo(sizes, "float64", 4);
    const m = maskedBatch(sizes, 5, 1);
    const one = build(spec, "typescript");
    const reference = createRule(one, { rule: "chl", rate: 0.5 }).computeDelta({ inputs: m.inputs, targets: { p: m.targets.p, q: new Float64Array(5).fill(Number.NaN) } }, new ParameterDelta(one));
    const par = await ParallelRule.create(build(spec, "typescript"), { rule: "chl", rate: 0.5 }, 2);
    try {
      const got = await par.computeDelta({ inputs: m.inputs, targets: { p: m.targets.p }, observed: { q: false } });
      expectAgree(deltaValues(got), deltaValues(reference), Math.max(...deltaValues(reference).map(Math.abs)), "q observed nowhere");
      const before = parameters(par.net);
      const halfNaN = Float64Array.from(m.full.p);
      halfNaN[1] = Number.NaN;
      expect(await refusal(par.step({ inputs: m.inputs, targets: { p: halfNaN, q: m.full.q } }))).toEqual(["shape_mismatch", "targets.p[1]"]);
      expect(await refusal(par.step({ inputs: { a: m.inputs.a }, targets: m.targets }))).toEqual(["shape_mismatch", "inputs.b"]);
      expect(await refusal(par.step({ inputs: m.inputs, targets: { p: m.targets.p } }))).toEqual(["shape_mismatch", "targets.q"]);
      expect(await refusal(par.step({ inputs: m.inputs, targets: m.full, observed: { h: true } }))).toEqual(["unknown_name", "observed.h"]);
      expect(parameters(par.net)).toEqual(before);
    } finally {
      await par.close();
    }
  });
});
