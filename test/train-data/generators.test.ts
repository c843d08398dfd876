import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { parityDataset, randomAssociation, xorDataset } from "../../src/train/data/index.js";
import { check } from "../helpers/property.js";
import { expectError } from "./errors.js";

/** Binomial coefficient C(n, k) (exact for the small arguments used here). */
function binomial(n: number, k: number): number {
  let r = 1;
  for (let i = 1; i <= k; i++) r = (r * (n - k + i)) / i;
  return r;
}

/** Row i of a flat array of the given width. */
const row = (a: Float64Array, i: number, w: number): number[] => Array.from(a.subarray(i * w, (i + 1) * w));

describe("xorDataset", () => {
  it("is the exclusive-or truth table (Minsky & Papert 1969): 00→0, 01→1, 10→1, 11→0", () => {
    const ds = xorDataset();
    expect(ds.name).toBe("xor");
    expect([0, 1, 2, 3].map((i) => row(ds.inputs, i, 2))).toEqual([[0, 0], [0, 1], [1, 0], [1, 1]]);
    expect(Array.from(ds.targets)).toEqual([0, 1, 1, 0]);
  });

  it("uses the given values for off and on bits", () => {
    const ds = xorDataset({ low: -1, high: 1 });
    expect(Array.from(ds.inputs)).toEqual([-1, -1, -1, 1, 1, -1, 1, 1]);
    expect(Array.from(ds.targets)).toEqual([-1, 1, 1, -1]);
    expectError(() => xorDataset({ low: 1, high: 1 }), "invalid_parameter", "high");
    expectError(() => xorDataset({ low: Number.NaN }), "invalid_parameter", "low");
    expectError(() => xorDataset({ high: Infinity }), "invalid_parameter", "high");
  });
});

describe("parityDataset", () => {
  it("holds every n-bit pattern once, in binary counting order, with target = (number of on bits) mod 2", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 10 }), (bits) => {
        const ds = parityDataset(bits);
        expect(ds.size).toBe(2 ** bits);
        for (let p = 0; p < ds.size; p++) {
          const r = row(ds.inputs, p, bits);
          // reading the row as a binary number (first input most significant) gives its index
          expect(r.reduce((acc, b) => 2 * acc + b, 0)).toBe(p);
          expect(ds.targets[p]).toBe(r.reduce((a, b) => a + b, 0) % 2);
        }
      }),
      10,
    );
  });

  it("exactly half of the patterns are odd: sum over odd k of C(n, k) = 2^(n−1)", () => {
    for (let bits = 1; bits <= 12; bits++) {
      const t = parityDataset(bits).targets;
      expect(t.reduce((a, b) => a + b, 0)).toBe(2 ** (bits - 1));
    }
  });

  it("the 2-bit case equals XOR, and 3-bit parity is 0,1,1,0,1,0,0,1", () => {
    expect(Array.from(parityDataset(2).targets)).toEqual(Array.from(xorDataset().targets));
    expect(Array.from(parityDataset(3).targets)).toEqual([0, 1, 1, 0, 1, 0, 0, 1]);
  });

  it("rejects bit counts outside [1, 16]", () => {
    for (const b of [0, 17, 2.5, -1, Number.NaN]) expectError(() => parityDataset(b), "invalid_parameter", "bits");
  });
});

describe("randomAssociation", () => {
  const sizes = fc.record({
    patterns: fc.integer({ min: 1, max: 30 }),
    inputSize: fc.integer({ min: 6, max: 24 }),
    targetSize: fc.integer({ min: 1, max: 12 }),
    seed: fc.oneof(fc.integer(), fc.string()),
  });

  it("every pattern has exactly the requested number of on units, all values 0 or 1, inputs distinct", () => {
    check(
      fc.property(sizes, fc.integer({ min: 1, max: 6 }), fc.integer({ min: 1, max: 12 }), (o, a, b) => {
        const activeTargets = Math.min(b, o.targetSize);
        fc.pre(binomial(o.inputSize, a) >= o.patterns);
        const ds = randomAssociation({ ...o, activeInputs: a, activeTargets });
        const keys = new Set<string>();
        for (let p = 0; p < o.patterns; p++) {
          const x = row(ds.inputs, p, o.inputSize);
          const y = row(ds.targets, p, o.targetSize);
          expect(x.every((v) => v === 0 || v === 1) && y.every((v) => v === 0 || v === 1)).toBe(true);
          expect(x.reduce((s, v) => s + v, 0)).toBe(a);
          expect(y.reduce((s, v) => s + v, 0)).toBe(activeTargets);
          keys.add(x.join(""));
        }
        expect(keys.size).toBe(o.patterns);
      }),
    );
  });

  it("is reproducible from the seed; another seed gives other patterns; the target size does not change the inputs", () => {
    check(
      fc.property(sizes, (o) => {
        fc.pre(binomial(o.inputSize, Math.max(1, Math.round(o.inputSize / 4))) >= o.patterns);
        const a = randomAssociation(o);
        const b = randomAssociation(o);
        expect(Array.from(a.inputs)).toEqual(Array.from(b.inputs));
        expect(Array.from(a.targets)).toEqual(Array.from(b.targets));
        const wider = randomAssociation({ ...o, targetSize: o.targetSize + 3 });
        expect(Array.from(wider.inputs)).toEqual(Array.from(a.inputs));
      }),
      30,
    );
    const o = { patterns: 20, inputSize: 16, targetSize: 8, seed: 1 };
    expect(Array.from(randomAssociation({ ...o, seed: 2 }).inputs)).not.toEqual(Array.from(randomAssociation(o).inputs));
  });

  it("defaults to round(size / 4) on units", () => {
    const ds = randomAssociation({ patterns: 3, inputSize: 16, targetSize: 10, seed: "d" });
    expect(row(ds.inputs, 0, 16).reduce((s, v) => s + v, 0)).toBe(4);
    expect(row(ds.targets, 0, 10).reduce((s, v) => s + v, 0)).toBe(3);
  });

  it("uses every unit about equally often (binomial spread, 5 standard deviations)", () => {
    // 2000 patterns, 5 of 20 on: each unit is on with probability 1/4, expected count 500, sd = sqrt(2000·¼·¾) ≈ 19.4
    const ds = randomAssociation({ patterns: 2000, inputSize: 20, targetSize: 4, activeInputs: 5, activeTargets: 1, seed: 11 });
    for (let j = 0; j < 20; j++) {
      let on = 0;
      for (let p = 0; p < 2000; p++) on += ds.inputs[p * 20 + j]!;
      expect(Math.abs(on - 500)).toBeLessThan(5 * Math.sqrt(2000 * 0.25 * 0.75));
    }
  });

  it("allows repeated inputs only when asked, and refuses more distinct patterns than C(n, k)", () => {
    expect(randomAssociation({ patterns: 10, inputSize: 4, targetSize: 1, activeInputs: 2, distinctInputs: false, seed: 3 }).size).toBe(10);
    // C(4, 2) = 6 distinct inputs exist
    expect(randomAssociation({ patterns: 6, inputSize: 4, targetSize: 1, activeInputs: 2, seed: 3 }).size).toBe(6);
    expectError(() => randomAssociation({ patterns: 7, inputSize: 4, targetSize: 1, activeInputs: 2, seed: 3 }), "invalid_parameter", "patterns");
  });

  it("rejects bad options by name", () => {
    const base = { patterns: 4, inputSize: 8, targetSize: 4, seed: 1 };
    expectError(() => randomAssociation({ ...base, patterns: 0 }), "invalid_parameter", "patterns");
    expectError(() => randomAssociation({ ...base, inputSize: 1.5 }), "invalid_parameter", "inputSize");
    expectError(() => randomAssociation({ ...base, targetSize: Number.NaN }), "invalid_parameter", "targetSize");
    expectError(() => randomAssociation({ ...base, activeInputs: 9 }), "invalid_parameter", "activeInputs");
    expectError(() => randomAssociation({ ...base, activeTargets: 0 }), "invalid_parameter", "activeTargets");
    expectError(() => randomAssociation({ ...base, seed: Infinity }), "invalid_parameter", "seed");
    expectError(() => randomAssociation({ ...base, distinctInputs: 1 as unknown as boolean }), "invalid_parameter", "distinctInputs");
  });
});
