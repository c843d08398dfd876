import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { createRandom, RandomStream, fillUniform, fillNormal, fillGlorotUniform, fillGlorotNormal, initialize, EbbflowError } from "../../src/index.js";
import { check } from "../helpers/property.js";

const draw = (s: RandomStream, n: number) => Array.from({ length: n }, () => s.uniform());

describe("seeded random streams", () => {
  it("same seed, same bits; another seed, other numbers", () => {
    check(
      fc.property(fc.oneof(fc.integer(), fc.string()), (seed) => {
        expect(draw(createRandom(seed), 20)).toEqual(draw(createRandom(seed), 20));
        expect(draw(createRandom(seed).child("a"), 5)).not.toEqual(draw(createRandom(`${String(seed)}x`).child("a"), 5));
      }),
      50,
    );
  });

  it("a named sub-stream depends only on its name: drawing from another consumer first never shifts it", () => {
    const root = createRandom(7);
    const alone = draw(root.child("weights"), 10);
    const other = createRandom(7);
    draw(other, 1000);
    draw(other.child("shuffle"), 1000);
    expect(draw(other.child("weights"), 10)).toEqual(alone);
    expect(draw(root.child("weights"), 10)).not.toEqual(draw(root.child("shuffle"), 10));
  });

  it("saving and restoring a stream continues the same sequence bit for bit (also through JSON)", () => {
    check(
      fc.property(fc.integer(), fc.integer({ min: 0, max: 50 }), (seed, skip) => {
        const s = createRandom(seed).child("x");
        for (let i = 0; i < skip; i++) s.normal();
        const saved = JSON.parse(JSON.stringify(s.saveState()));
        const expected = [s.uniform(), s.normal(), s.normal(), s.int(10)];
        const r = RandomStream.fromState(saved);
        expect([r.uniform(), r.normal(), r.normal(), r.int(10)]).toEqual(expected);
      }),
      30,
    );
  });

  it("uniform numbers lie in [0, 1) with mean near 1/2; int(n) in [0, n); permutations are permutations", () => {
    const s = createRandom(3);
    const u = draw(s, 20000);
    expect(Math.min(...u)).toBeGreaterThanOrEqual(0);
    expect(Math.max(...u)).toBeLessThan(1);
    // mean of U(0,1) is 1/2 with standard error sqrt(1/12/n) ≈ 0.002 (common practice: 5 standard errors)
    expect(Math.abs(u.reduce((a, b) => a + b, 0) / u.length - 0.5)).toBeLessThan(0.01);
    const p = Array.from(s.permutation(50)).sort((a, b) => a - b);
    expect(p).toEqual(Array.from({ length: 50 }, (_, i) => i));
    for (let i = 0; i < 1000; i++) {
      const k = s.int(7);
      expect(k >= 0 && k < 7 && Number.isInteger(k)).toBe(true);
    }
  });

  it("normal numbers have mean 0 and variance 1 (Box & Muller 1958), within 5 standard errors", () => {
    const s = createRandom(11);
    const n = 40000;
    const x = Array.from({ length: n }, () => s.normal());
    const mean = x.reduce((a, b) => a + b, 0) / n;
    const v = x.reduce((a, b) => a + (b - mean) ** 2, 0) / (n - 1);
    expect(Math.abs(mean)).toBeLessThan(5 / Math.sqrt(n));
    // the variance of the sample variance of N(0,1) is 2/(n-1)
    expect(Math.abs(v - 1)).toBeLessThan(5 * Math.sqrt(2 / (n - 1)));
  });
});

describe("weight initialisers", () => {
  it("Glorot uniform stays within ±sqrt(6/(fanIn + fanOut)) with variance 2/(fanIn + fanOut) (Glorot & Bengio 2010)", () => {
    const w = fillGlorotUniform(new Float64Array(50000), createRandom(1), 300, 100);
    const limit = Math.sqrt(6 / 400);
    expect(Math.max(...w.map(Math.abs))).toBeLessThanOrEqual(limit);
    const v = w.reduce((a, b) => a + b * b, 0) / w.length;
    expect(Math.abs(v - 2 / 400) / (2 / 400)).toBeLessThan(0.03);
  });

  it("Glorot normal has variance 2/(fanIn + fanOut); normal and uniform honour their parameters", () => {
    const g = fillGlorotNormal(new Float64Array(50000), createRandom(2), 50, 150);
    expect(Math.abs(g.reduce((a, b) => a + b * b, 0) / g.length / (2 / 200) - 1)).toBeLessThan(0.03);
    const n = fillNormal(new Float32Array(50000), createRandom(3), 2, 0.5);
    expect(Math.abs(n.reduce((a, b) => a + b, 0) / n.length - 2)).toBeLessThan(0.02);
    const u = fillUniform(new Float64Array(1000), createRandom(4), -3, -1);
    expect(u.every((v) => v >= -3 && v < -1)).toBe(true);
    expect(Array.from(initialize(new Float64Array(3), { kind: "constant", value: 0.25 }, createRandom(1), 1, 1))).toEqual([0.25, 0.25, 0.25]);
  });

  it("bad parameters are refused with the parameter's name", () => {
    const bad = (f: () => unknown, path: string) => {
      try {
        f();
        throw new Error("no error");
      } catch (e) {
        expect(e).toBeInstanceOf(EbbflowError);
        expect((e as EbbflowError).path).toBe(path);
      }
    };
    bad(() => createRandom(Number.NaN), "seed");
    bad(() => fillUniform(new Float64Array(2), createRandom(1), 1, 0), "hi");
    bad(() => fillNormal(new Float64Array(2), createRandom(1), 0, -1), "std");
    bad(() => fillGlorotUniform(new Float64Array(2), createRandom(1), 0, 3), "fanIn");
  });
});
