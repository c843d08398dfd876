/**
 * Sparse storage in the network: a connection declared `storage: "sparse"` settles to the states of the
 * same network stored dense (the same products in another order: agreement to a few ulps of float64,
 * an analytic property of the kernels, see src/kernels/sparse.ts), on the TypeScript and WebAssembly
 * backends, with tied feedback through the transposed product; a contrast-form rule (CHL, Movellan 1990,
 * as the registry's form) changes only the stored entries of a masked sparse connection and keeps every
 * other weight exactly zero; model files round-trip the option (they hold the dense form).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { buildNetwork, createRule, Settler, type Connection, type NetworkSpecInput } from "../../src/index.js";
import { compressRows, expandRows, type SparseKernels } from "../../src/kernels/index.js";
import { chooseStorage, localMask, maskDensity, SPARSE_DENSITY_CROSSOVER } from "../../src/kernels/storage.js";
import { modelFromData, modelToData } from "../../src/config/modelFile.js";
import { builtinRegistry, FormRule, parseRule } from "../../src/rules/index.js";
import { EbbflowError } from "../../src/errors/index.js";
import { check } from "../helpers/property.js";
import { simd } from "../kernels-wasm/backends.js";

function spec(storage: "dense" | "sparse" | undefined, hidden: number, seed: number, tied: boolean): NetworkSpecInput {
  return {
    seed,
    layers: [
      { name: "in", size: 5, role: "input" },
      { name: "h", size: hidden, role: "hidden" },
      { name: "out", size: 3, role: "output" },
    ],
    connections: [
      { from: "in", to: "h", ...(storage ? { storage } : {}) },
      { from: "h", to: "out", ...(storage ? { storage } : {}), ...(tied ? { feedback: { kind: "tied" as const, gain: 1 } } : {}) },
    ],
    dynamics: { maxSteps: 40, tolerance: Number.MIN_VALUE },
  };
}

describe("sparse storage in the network", () => {
  it("settles to the dense network's states (free and clamped, tied feedback, TypeScript and WASM)", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 9 }), fc.integer({ min: 0, max: 1000 }), fc.integer({ min: 1, max: 4 }), fc.boolean(), fc.boolean(), (hidden, seed, B, tied, wasm) => {
        const backend = wasm ? simd : undefined;
        const dense = buildNetwork(spec("dense", hidden, seed, tied), { backend });
        const sparse = buildNetwork(spec("sparse", hidden, seed, tied), { backend });
        expect(sparse.connections.every((c) => c.sparse)).toBe(true);
        expect(dense.connections.every((c) => !c.sparse)).toBe(true);
        const inputs = { in: Array.from({ length: 5 * B }, (_, q) => Math.sin(seed + q)) };
        const targets = { out: Array.from({ length: 3 * B }, (_, q) => 0.5 + 0.4 * Math.cos(seed * q)) };
        for (const phase of ["free", "clamped"] as const) {
          const a = new Settler(dense, B).settle({ phase, inputs, targets: phase === "free" ? undefined : targets });
          const b = new Settler(sparse, B).settle({ phase, inputs, targets: phase === "free" ? undefined : targets });
          for (let l = 0; l < 3; l++) {
            const x = a.activity[l]!;
            const y = b.activity[l]!;
            for (let q = 0; q < x.length; q++) expect(Math.abs(x[q]! - y[q]!), `layer ${l}[${q}] ${phase}`).toBeLessThanOrEqual(1e-12);
          }
        }
      }),
      40,
    );
  });

  it("sees weight changes made between settlings (the compressed values are gathered afresh)", () => {
    const net = buildNetwork(spec("sparse", 4, 3, false));
    const twin = buildNetwork(spec("dense", 4, 3, false));
    const settler = new Settler(net, 1);
    const inputs = { in: [1, 0.5, -0.5, 0.25, 0] };
    const before = Float64Array.from(settler.settle({ phase: "free", inputs }).activity[2]!);
    net.connections[1]!.weights.fill(0);
    twin.connections[1]!.weights.fill(0);
    const after = settler.settle({ phase: "free", inputs }).activity[2]!;
    const want = new Settler(twin, 1).settle({ phase: "free", inputs }).activity[2]!;
    // all weights into the output are zero: the output no longer depends on the hidden layer
    for (let q = 0; q < 3; q++) expect(Math.abs(after[q]! - want[q]!)).toBeLessThanOrEqual(1e-15);
    expect(Math.abs(before[0]! - after[0]!)).toBeGreaterThan(1e-6);
  });

  it("a contrast-form rule changes only the stored entries of a masked sparse connection", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1000 }), fc.double({ min: 0.05, max: 0.6, noNaN: true }), (seed, density) => {
        const net = buildNetwork(spec("sparse", 6, seed, false));
        // install a random pattern on in->h (the pattern declaration does this in the built network)
        const c = net.connections[0] as Connection & { sparse: unknown };
        const mask = Uint8Array.from({ length: 30 }, (_, q) => (Math.sin(seed * 7 + q * 13) * 0.5 + 0.5 < density ? 1 : 0));
        const sp = compressRows(mask, 6, 5, "float64", c.weights, (net.kernels.sparse as SparseKernels).allocator);
        expandRows(c.weights, sp);
        (c as { sparse: unknown }).sparse = sp;
        const config = parseRule({ rule: "chl", rate: 0.5 });
        const form = builtinRegistry.rule("chl").contrast!(config as never, net)!;
        const rule = new FormRule(net, config, form);
        const before = Float64Array.from(c.weights);
        const batch = { inputs: { in: [1, 0, 0.5, -1, 0.25, 0, 1, 1, -0.5, 0.5] }, targets: { out: [1, 0, 1, 0, 1, 0] } };
        // the dense twin with the same (masked) weights: its first change agrees on the stored entries
        const twin = buildNetwork(spec("dense", 6, seed, false));
        twin.connections[0]!.weights.set(c.weights);
        new FormRule(twin, config, builtinRegistry.rule("chl").contrast!(config as never, twin)!).step(batch);
        rule.step(batch);
        for (let q = 0; q < 30; q++) if (mask[q]) expect(Math.abs(c.weights[q]! - twin.connections[0]!.weights[q]!), `stored weight ${q}`).toBeLessThanOrEqual(1e-12);
        for (let s = 0; s < 2; s++) rule.step(batch);
        let changed = 0;
        for (let q = 0; q < 30; q++) {
          if (!mask[q]) expect(c.weights[q], `off-pattern weight ${q}`).toBe(0);
          else if (c.weights[q] !== before[q]) changed++;
        }
        if (mask.some((v) => v === 1)) expect(changed).toBeGreaterThan(0);
      }),
      30,
    );
  });

  it("round-trips through a model file (dense form with zeros; the option is kept)", () => {
    const net = buildNetwork(spec("sparse", 4, 9, false));
    const back = modelFromData(JSON.parse(JSON.stringify(modelToData(net))));
    expect(back.spec.connections.map((c) => c.storage)).toEqual(["sparse", "sparse"]);
    expect(back.connections.every((c) => c.sparse)).toBe(true);
    net.connections.forEach((c, i) => expect(Array.from(back.connections[i]!.weights)).toEqual(Array.from(c.weights)));
  });

  it("chooses by density under auto and refuses an unknown storage with a typed error", () => {
    expect(chooseStorage("auto", SPARSE_DENSITY_CROSSOVER.float64, "float64")).toBe("sparse");
    expect(chooseStorage("auto", 0.15, "float32")).toBe("dense");
    expect(chooseStorage(undefined, 1, "float64")).toBe("dense");
    expect(chooseStorage("dense", 0.01, "float64")).toBe("dense");
    expect(chooseStorage("sparse", 1, "float32")).toBe("sparse");
    // a 3×3 field between 64×64 sheets: 36,100 stored entries of 4096² (hand count: 62² interior units see 9,
    // 4·62 edge units 6, 4 corners 4 → 34596 + 1488 + 16), density 0.2%: sparse
    const m = localMask(64, 64, 64, 64, 3, 1);
    expect(maskDensity(m) * m.length).toBe(36100);
    expect(chooseStorage("auto", maskDensity(m), "float32")).toBe("sparse");
    expect(() => buildNetwork({ ...spec(undefined, 2, 0, false), connections: [{ from: "in", to: "h", storage: "compressed" as never }, { from: "h", to: "out" }] })).toThrow(EbbflowError);
  });

  it("declared patterns: local, convolution and symmetric lateral connections stored sparse train as stored dense", () => {
    // a topographic net: 8×8 sheet → 6×6 map through local 3×3 fields (density 14%: "auto" stores it sparse in
    // float64), a convolution into a 2-channel map with tied feedback, a symmetric lateral pattern without self-weights
    const decl = (storage: "dense" | "auto", seed: number): NetworkSpecInput => ({
      seed,
      layers: [
        { name: "sheet", shape: [8, 8], role: "input" },
        { name: "map", shape: [6, 6], role: "hidden" },
        { name: "feat", shape: [5, 5, 2], role: "output" },
      ],
      connections: [
        { from: "sheet", to: "map", pattern: { kind: "local", kernel: 3 }, storage },
        { from: "map", to: "feat", pattern: { kind: "convolution", kernel: 2 }, feedback: { kind: "tied", gain: 0.5 }, storage },
        { from: "map", to: "map", pattern: { kind: "local", radius: 1, selfConnections: false, symmetric: true }, storage },
      ],
      dynamics: { maxSteps: 30, tolerance: Number.MIN_VALUE },
    });
    for (const rule of ["chl", "eqprop", "generec"]) {
      const seed = rule.length;
      const dense = buildNetwork(decl("dense", seed));
      const sparse = buildNetwork(decl("auto", seed));
      // the convolution runs as im2col products, the local patterns row-compressed
      expect(sparse.connections.map((c) => (c.convolution ? "convolution" : c.sparse ? "sparse" : "dense"))).toEqual(["sparse", "convolution", "sparse"]);
      expect(dense.connections.map((c) => Boolean(c.sparse))).toEqual([false, false, false]);
      const batch = {
        inputs: { sheet: Array.from({ length: 2 * 64 }, (_, q) => ((q * 7) % 11) / 11) },
        targets: { feat: Array.from({ length: 2 * 50 }, (_, q) => ((q * 3) % 5) / 5) },
      };
      const config = { rule, rate: 0.1, ...(rule === "eqprop" ? { beta: 0.5 } : {}) };
      const rd = createRule(dense, config as never);
      const rs = createRule(sparse, config as never);
      for (let s = 0; s < 3; s++) {
        rd.step(batch);
        rs.step(batch);
      }
      sparse.connections.forEach((c, i) => {
        const d = dense.connections[i]!.weights;
        for (let q = 0; q < d.length; q++) {
          expect(Math.abs(c.weights[q]! - d[q]!), `${rule} ${c.label}[${q}]`).toBeLessThanOrEqual(1e-10);
          if (!c.pattern.mask[q]) expect(c.weights[q]).toBe(0);
        }
      });
    }
  });

  it("a declared convolution runs as im2col products and settles as the dense masked product (random geometry, tied feedback)", () => {
    check(
      fc.property(
        fc.record({ h: fc.integer({ min: 2, max: 7 }), w: fc.integer({ min: 2, max: 7 }), c: fc.integer({ min: 1, max: 3 }), co: fc.integer({ min: 1, max: 3 }), k: fc.integer({ min: 1, max: 3 }), s: fc.integer({ min: 1, max: 2 }), p: fc.integer({ min: 0, max: 1 }) }),
        fc.integer({ min: 0, max: 1000 }),
        fc.boolean(),
        ({ h, w, c, co, k, s, p }, seed, wasm) => {
          fc.pre(h + 2 * p >= k && w + 2 * p >= k);
          const ho = Math.floor((h + 2 * p - k) / s) + 1;
          const wo = Math.floor((w + 2 * p - k) / s) + 1;
          const decl = (storage: "dense" | "auto"): NetworkSpecInput => ({
            seed,
            layers: [
              { name: "in", shape: [h, w, c], role: "input" },
              { name: "f", shape: [ho, wo, co], role: "hidden" },
              { name: "out", size: 2, role: "output" },
            ],
            connections: [
              { from: "in", to: "f", pattern: { kind: "convolution", kernel: k, stride: s, padding: p }, init: { kind: "normal", std: 0.5 }, storage },
              { from: "f", to: "out", feedback: { kind: "tied", gain: 1 } },
            ],
            dynamics: { maxSteps: 20, tolerance: Number.MIN_VALUE },
          });
          const backend = wasm ? simd : undefined;
          const a = buildNetwork(decl("dense"), { backend });
          const b = buildNetwork(decl("auto"), { backend });
          expect(b.connections[0]!.convolution, "convolution form").toBeTruthy();
          expect(a.connections[0]!.convolution ?? null).toBe(null);
          const inputs = { in: Array.from({ length: 2 * h * w * c }, (_, q) => Math.sin(q + seed)) };
          const targets = { out: [0.2, 0.8, 0.7, 0.1] };
          for (const phase of ["free", "clamped"] as const) {
            const x = new Settler(a, 2).settle({ phase, inputs, targets: phase === "free" ? undefined : targets });
            const y = new Settler(b, 2).settle({ phase, inputs, targets: phase === "free" ? undefined : targets });
            for (let l = 1; l < 3; l++) for (let q = 0; q < x.activity[l]!.length; q++) expect(Math.abs(x.activity[l]![q]! - y.activity[l]![q]!)).toBeLessThanOrEqual(1e-12);
          }
        },
      ),
      40,
    );
  });
});
