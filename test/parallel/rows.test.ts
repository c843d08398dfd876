import fc from "fast-check";
import { describe, it, expect } from "vitest";
import {
  buildNetwork,
  createRule,
  createRandom,
  ParameterDelta,
  EbbflowError,
  wasmSimdSupported,
  type NetworkSpecInput,
  type RuleConfigInput,
} from "../../src/index.js";
import { ParallelRule } from "../../src/node/index.js";
import { check } from "../helpers/property.js";
import { EPS32 } from "../helpers/tolerance.js";
import { build, deltaValues, expectAgree, kernelsUnderTest, parameters, refusal } from "./common.js";

// The reference for every check below is the one-thread rule (`createRule(net, rule).step`), whose changes
// are checked against published values and exact gradients in test/rules. A worker count changes only the
// order of the sums over the batch, so the results agree within a few float32 roundings of the largest
// term; the settling stop rule is set below float32 resolution so that slices and the whole batch settle
// for the same number of steps.

function layered(sizes: readonly number[], extra: Partial<NetworkSpecInput> = {}, dtype: "float32" | "float64" = "float32", seed = 5): NetworkSpecInput {
  const names = sizes.map((_, i) => (i === 0 ? "in" : i === sizes.length - 1 ? "out" : `h${i}`));
  return {
    dtype,
    seed,
    layers: sizes.map((size, i) => ({ name: names[i]!, size, role: i === 0 ? "input" : i === sizes.length - 1 ? "output" : "hidden" })),
    connections: sizes.slice(1).map((_, i) => ({ from: names[i]!, to: names[i + 1]!, feedback: { kind: "tied", gain: 1 } })),
    dynamics: { dt: 0.5, maxSteps: 60, tolerance: 1e-12 },
    ...extra,
  } as NetworkSpecInput;
}

/** Inputs uniform in [0, 1), targets uniform in [0.1, 0.9] (values of our own invention). */
function batchOf(patterns: number, inputSize: number, targetSize: number, seed: number) {
  const rng = createRandom(seed).child("batch");
  const inputs = Float64Array.from({ length: patterns * inputSize }, () => rng.uniform());
  const targets = Float64Array.from({ length: patterns * targetSize }, () => 0.1 + 0.8 * rng.uniform());
  return { inputs: { in: inputs }, targets: { out: targets } };
}

const contrastRules: readonly RuleConfigInput[] = [
  { rule: "eqprop", beta: 0.4, rate: 0.3 },
  { rule: "eqprop", beta: 0.4, rate: 0.3, mode: "symmetric" },
  { rule: "chl", rate: 0.3 },
  { rule: "generec", rate: 0.3 },
  { rule: "generec", rate: 0.3, variant: "symmetric" },
  { rule: "generec", rate: 0.3, variant: "midpoint" },
  { rule: "generec", rate: 0.3, variant: "symmetric-midpoint" },
  { rule: "xie-seung", rate: 0.3, gamma: 0.5 },
];

describe("multi-core training, row split (each worker adds the whole batch's change for its rows, in place)", () => {
  it("EqProp (one-sided, symmetric), CHL, Xie–Seung and GeneRec take the row split (their descriptors' contrast forms); constrained connections and other rules the slice split", async () => {
    const cases: [NetworkSpecInput, RuleConfigInput, "rows" | "slices"][] = [
      [layered([5, 4, 3]), { rule: "eqprop", beta: 0.3, rate: 0.1 }, "rows"],
      [layered([5, 4, 3]), { rule: "eqprop", beta: 0.3, rate: 0.1, mode: "symmetric" }, "rows"],
      [layered([5, 4, 3]), { rule: "chl", rate: 0.1 }, "rows"],
      [layered([5, 4, 3]), { rule: "generec", rate: 0.1, variant: "midpoint" }, "rows"],
      [layered([5, 4, 3]), { rule: "backprop", rate: 0.1 }, "slices"],
      [layered([5, 4, 3]), { rule: "xie-seung", rate: 0.1 }, "rows"],
      [layered([5, 3], { connections: [{ from: "in", to: "out", sign: "excitatory", feedback: { kind: "tied", gain: 1 } }] }), { rule: "eqprop", beta: 0.3, rate: 0.1 }, "slices"],
      [layered([5, 3], { connections: [{ from: "in", to: "out", sign: "excitatory", bounds: "soft", feedback: { kind: "tied", gain: 1 } }] }), { rule: "chl", rate: 0.1 }, "slices"],
    ];
    for (const [spec, rule, split] of cases) {
      const par = await ParallelRule.create(buildNetwork(spec), rule, 1);
      try {
        expect(par.split, JSON.stringify(rule)).toBe(split);
      } finally {
        await par.close();
      }
    }
  });

  it("training on 1 to 3 workers equals one thread within float32 tolerance, for random small networks and batches of changing size, both kernels", async () => {
    await check(
      fc.asyncProperty(
        fc.constantFrom(...kernelsUnderTest),
        fc.constantFrom(...contrastRules),
        fc.array(fc.integer({ min: 1, max: 6 }), { minLength: 2, maxLength: 4 }),
        fc.array(fc.integer({ min: 1, max: 7 }), { minLength: 3, maxLength: 3 }),
        fc.integer({ min: 1, max: 3 }),
        fc.constantFrom("float32" as const, "float64" as const),
        fc.integer({ min: 0, max: 1000 }),
        async (kernels, rule, sizes, patterns, workers, dtype, seed) => {
          const spec = layered(sizes, {}, dtype, seed);
          const batches = patterns.map((p, i) => batchOf(p, sizes[0]!, sizes.at(-1)!, seed + i));
          const one = build(spec, kernels);
          const par = await ParallelRule.create(build(spec, kernels), rule, workers);
          try {
            expect(par.split).toBe("rows");
            const reference = createRule(one, rule);
            const d1 = reference.computeDelta(batches[0]!, new ParameterDelta(one));
            const d2 = await par.computeDelta(batches[0]!);
            expectAgree(deltaValues(d2), deltaValues(d1), Math.max(...deltaValues(d1).map(Math.abs)), "change");
            // batch sizes change from step to step (fewer patterns than workers included)
            for (const batch of batches) {
              reference.step(batch);
              await par.step(batch);
            }
            const expected = parameters(one);
            expectAgree(parameters(par.net), expected, Math.max(...expected.map(Math.abs)), "parameters after 3 steps");
          } finally {
            await par.close();
          }
        },
      ),
      12,
    );
  });

  it.each(kernelsUnderTest)("the same seed and worker count give the same bits over several steps (%s kernels)", async (kernels) => {
    for (const rule of [contrastRules[1]!, contrastRules[6]!]) {
      for (const workers of [2, 3]) {
        // two instances trained side by side (their threads compete for the cores: timing differs, bits must not)
        const train = async (par: ParallelRule) => {
          for (let s = 0; s < 4; s++) await par.step(batchOf(11, 10, 3, s));
          return parameters(par.net);
        };
        const pars = await Promise.all([0, 1].map(() => ParallelRule.create(build(layered([10, 7, 3]), kernels), rule, workers)));
        try {
          const [a, b] = await Promise.all(pars.map(train));
          expect(b).toEqual(a);
        } finally {
          await Promise.all(pars.map((p) => p.close()));
        }
      }
    }
  });

  it.each(kernelsUnderTest)("a sign-constrained connection and backprop use the slice split and equal one thread (%s kernels)", async (kernels) => {
    const constrained = layered([6, 5, 3], {
      connections: [
        { from: "in", to: "h1", sign: "excitatory", feedback: { kind: "tied", gain: 1 } },
        { from: "h1", to: "out", feedback: { kind: "tied", gain: 1 } },
      ],
    });
    const cases: [NetworkSpecInput, RuleConfigInput][] = [
      [constrained, { rule: "chl", rate: 2 }],
      [constrained, { rule: "eqprop", beta: 0.5, rate: 2 }],
      [layered([6, 5, 3]), { rule: "backprop", rate: 0.5 }],
    ];
    for (const [spec, rule] of cases) {
      const one = build(spec, kernels);
      const reference = createRule(one, rule);
      const par = await ParallelRule.create(build(spec, kernels), rule, 2);
      try {
        expect(par.split).toBe("slices");
        for (let s = 0; s < 4; s++) {
          const batch = batchOf(9, 6, 3, s);
          reference.step(batch);
          await par.step(batch);
        }
        const expected = parameters(one);
        expectAgree(parameters(par.net), expected, Math.max(...expected.map(Math.abs)), JSON.stringify(rule));
        if (spec === constrained) expect(Array.from(par.net.connections[0]!.weights).every((w) => w >= 0)).toBe(true);
      } finally {
        await par.close();
      }
    }
  });

  it.skipIf(!wasmSimdSupported())("several instances on WebAssembly kernels, stepping at the same time, each match their own one-thread run (no shared memory is overwritten)", async () => {
    const specs = [layered([8, 6, 3], {}, "float32", 1), layered([7, 9, 4, 2], {}, "float64", 2), layered([5, 2], {}, "float32", 3)];
    const rules: RuleConfigInput[] = [contrastRules[0]!, contrastRules[2]!, { rule: "backprop", rate: 0.2 }];
    const refs = specs.map((s, i) => {
      const net = build(s, "wasm");
      return { net, rule: createRule(net, rules[i]!) };
    });
    const pars = await Promise.all(specs.map((s, i) => ParallelRule.create(build(s, "wasm"), rules[i]!, 2)));
    try {
      for (let step = 0; step < 3; step++) {
        const batches = specs.map((_, i) => batchOf(6 + i, refs[i]!.net.layers[0]!.size, refs[i]!.net.layers.at(-1)!.size, 10 * step + i));
        refs.forEach((r, i) => r.rule.step(batches[i]!));
        await Promise.all(pars.map((p, i) => p.step(batches[i]!)));
      }
      pars.forEach((p, i) => {
        const expected = parameters(refs[i]!.net);
        expectAgree(parameters(p.net), expected, Math.max(...expected.map(Math.abs)), `instance ${i}`);
      });
    } finally {
      await Promise.all(pars.map((p) => p.close()));
    }
  });

  it.each(kernelsUnderTest)("a non-finite update is refused with the one-thread error, every parameter unchanged (%s kernels)", async (kernels) => {
    const spec = layered([6, 5, 3]);
    const rule: RuleConfigInput = { rule: "eqprop", beta: 0.01, rate: 3e38 };
    const batch = batchOf(8, 6, 3, 1);
    let expected: EbbflowError | undefined;
    try {
      createRule(build(spec, kernels), rule).step(batch);
    } catch (e) {
      expected = e as EbbflowError;
    }
    expect(expected).toBeInstanceOf(EbbflowError);
    expect(expected!.code).toBe("non_finite_update");
    const par = await ParallelRule.create(build(spec, kernels), rule, 2);
    try {
      const before = parameters(par.net);
      const e = await par.step(batch).then(
        () => expect.fail("expected non_finite_update"),
        (x: unknown) => x as EbbflowError,
      );
      expect(e).toBeInstanceOf(EbbflowError);
      expect([e.code, e.path]).toEqual([expected!.code, expected!.path]);
      expect(parameters(par.net)).toEqual(before);
    } finally {
      await par.close();
    }
  });

  it.each(kernelsUnderTest)("a finite update that the bound cannot prove finite goes through the checked update and equals one thread (%s kernels)", async (kernels) => {
    // one connection from the input: |ΔW| ≤ (rate/β)·(max|a+| + max|a−|)·max|x| exceeds the float32 range,
    // while the contrast a+ − a− keeps the actual change near 1e37
    const spec = layered([5, 3]);
    const rule: RuleConfigInput = { rule: "eqprop", beta: 0.1, rate: 1e38 };
    const batch = batchOf(8, 5, 3, 4);
    const one = build(spec, kernels);
    createRule(one, rule).step(batch);
    const expected = parameters(one);
    expect(expected.every(Number.isFinite)).toBe(true);
    expect(Math.max(...expected.map(Math.abs))).toBeGreaterThan(1e30);
    const par = await ParallelRule.create(build(spec, kernels), rule, 2);
    try {
      await par.step(batch);
      parameters(par.net).forEach((v, i) => expect(Math.abs(v - expected[i]!)).toBeLessThanOrEqual(64 * EPS32 * Math.abs(expected[i]!) + 1e-6));
    } finally {
      await par.close();
    }
  });

  it.each(kernelsUnderTest)("a slice that diverges fails the step with the settler's error, releases the other slices, and the next batch trains (%s kernels)", async (kernels) => {
    const spec = layered([4, 3, 2], { layers: [
      { name: "in", size: 4, role: "input" },
      { name: "h1", size: 3, role: "hidden", unit: { kind: "linear" } },
      { name: "out", size: 2, role: "output" },
    ] } as Partial<NetworkSpecInput>);
    const rule: RuleConfigInput = { rule: "chl", rate: 0.1 };
    const par = await ParallelRule.create(build(spec, kernels), rule, 2);
    try {
      const bad = batchOf(6, 4, 2, 1);
      const x = Float64Array.from(bad.inputs.in);
      x.fill(1e9, 0, 4); // pattern 0 only (the first slice): its linear hidden units exceed the divergence bound
      const e = await par.step({ inputs: { in: x }, targets: bad.targets }).then(
        () => expect.fail("expected divergence"),
        (z: unknown) => z as EbbflowError,
      );
      expect(e).toBeInstanceOf(EbbflowError);
      expect(e.code).toBe("divergence");
      const good = batchOf(6, 4, 2, 2);
      const one = build(spec, kernels);
      createRule(one, rule).step(good);
      await par.step(good);
      const expected = parameters(one);
      expectAgree(parameters(par.net), expected, Math.max(...expected.map(Math.abs)), "after the failed batch");
    } finally {
      await par.close();
    }
  });

  it("a learning-rate factor scales the change as in one thread; a non-finite factor, a second batch in flight and a closed rule are refused", async () => {
    const spec = layered([6, 4, 3]);
    const rule: RuleConfigInput = { rule: "chl", rate: 0.5 };
    const batch = batchOf(7, 6, 3, 3);
    const one = build(spec, "typescript");
    createRule(one, rule).step(batch, 0.25);
    const par = await ParallelRule.create(build(spec, "typescript"), rule, 2);
    try {
      await par.step(batch, 0.25);
      const expected = parameters(one);
      expectAgree(parameters(par.net), expected, Math.max(...expected.map(Math.abs)), "scaled step");
      expect(await refusal(par.step(batch, Number.NaN))).toEqual(["invalid_parameter", "scale"]);
      const first = par.step(batch);
      expect(await refusal(par.step(batch))).toEqual(["unsupported", "batch"]);
      await first;
    } finally {
      await par.close();
    }
    expect(await refusal(par.step(batch))).toEqual(["unsupported", "rule"]);
  });

  // EqProp's caps on the settling steps of each phase (freeSteps, nudgedSteps)
  const capped: RuleConfigInput = { rule: "eqprop", beta: 0.4, rate: 0.3, freeSteps: 15, nudgedSteps: 4 };
  it("EqProp with caps on the free and nudged settling steps equals one thread (the workers settle each phase as the rule does)", async () => {
    for (const kernels of kernelsUnderTest) {
      for (const mode of ["one-sided", "symmetric"] as const) {
        const rule: RuleConfigInput = { ...capped, mode };
        const spec = layered([7, 5, 3], { dynamics: { dt: 0.5, maxSteps: 60, tolerance: 1e-30 } });
        const one = build(spec, kernels);
        const reference = createRule(one, rule);
        const par = await ParallelRule.create(build(spec, kernels), rule, 2);
        try {
          for (let s = 0; s < 3; s++) {
            const batch = batchOf(9, 7, 3, s);
            reference.step(batch);
            await par.step(batch);
          }
          const expected = parameters(one);
          expectAgree(parameters(par.net), expected, Math.max(...expected.map(Math.abs)), `${kernels} ${mode}`);
        } finally {
          await par.close();
        }
      }
    }
  });
});
