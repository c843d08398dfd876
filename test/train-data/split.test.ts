import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { createDataset, kFold, oneHot, trainTestSplit, type Dataset } from "../../src/train/data/index.js";
import { check } from "../helpers/property.js";
import { expectError } from "./errors.js";

/** A set whose single input is the example's index, so every part can be traced back to the source rows. */
function indexed(n: number, labels?: readonly number[], classes = 1): Dataset {
  const x = Array.from({ length: n }, (_, i) => [i]);
  if (labels === undefined) return createDataset("idx", x, x.map((r) => [r[0]! % 2]));
  const y = oneHot(labels, classes);
  return createDataset("idx", new Float64Array(x.flat()), y, { inputSize: 1, targetSize: classes, labels: [...labels] });
}

const ids = (ds: Dataset): number[] => Array.from(ds.inputs);

/** Labelled sets of 2..60 examples over 1..4 classes. */
const labelled = fc.integer({ min: 1, max: 4 }).chain((k) => fc.tuple(fc.constant(k), fc.array(fc.nat({ max: k - 1 }), { minLength: 2, maxLength: 60 })));
const seedArb = fc.oneof(fc.integer(), fc.string());

describe("trainTestSplit", () => {
  it("partitions the examples: disjoint, complete, original order, round(f·n) held out", () => {
    check(
      fc.property(labelled, fc.double({ min: 0.05, max: 0.95, noNaN: true }), seedArb, fc.boolean(), ([k, labels], f, seed, stratify) => {
        const n = labels.length;
        const nTest = Math.round(f * n);
        fc.pre(nTest >= 1 && nTest <= n - 1);
        const ds = indexed(n, labels, k);
        const { train, test } = trainTestSplit(ds, f, seed, { stratify });
        expect(test.size).toBe(nTest);
        const all = [...ids(train), ...ids(test)].sort((a, b) => a - b);
        expect(all).toEqual(Array.from({ length: n }, (_, i) => i));
        for (const part of [train, test]) {
          const v = ids(part);
          expect(v).toEqual([...v].sort((a, b) => a - b));
          v.forEach((i, r) => expect(part.labels![r]).toBe(labels[i]));
        }
        expect(train.name).toBe("idx/train");
        expect(test.name).toBe("idx/test");
      }),
    );
  });

  it("stratified: each class's test count is within one of f × its count", () => {
    check(
      fc.property(labelled, fc.double({ min: 0.05, max: 0.95, noNaN: true }), seedArb, ([k, labels], f, seed) => {
        const n = labels.length;
        const nTest = Math.round(f * n);
        fc.pre(nTest >= 1 && nTest <= n - 1);
        const { test } = trainTestSplit(indexed(n, labels, k), f, seed);
        for (let c = 0; c < k; c++) {
          const total = labels.filter((l) => l === c).length;
          const inTest = Array.from(test.labels!).filter((l) => l === c).length;
          expect(Math.abs(inTest - f * total)).toBeLessThanOrEqual(1);
        }
      }),
    );
  });

  it("is deterministic for a seed, and different seeds give different splits", () => {
    const ds = indexed(100);
    const a = trainTestSplit(ds, 0.3, 7);
    const b = trainTestSplit(ds, 0.3, 7);
    expect(ids(a.test)).toEqual(ids(b.test));
    // 100 choose 30 ≈ 2.9e25 possible test parts: distinct seeds colliding would be a defect
    const parts = new Set([7, 8, 9, "seven", "eight"].map((s) => ids(trainTestSplit(ds, 0.3, s).test).join(",")));
    expect(parts.size).toBe(5);
  });

  it("an unlabelled set is split without stratification", () => {
    const { train, test } = trainTestSplit(indexed(10), 0.2, 1);
    expect([train.size, test.size]).toEqual([8, 2]);
    expect(train.labels).toBeUndefined();
  });

  it("rejects fractions outside (0, 1), fractions leaving a part empty, tiny sets and bad seeds", () => {
    const ds = indexed(10);
    for (const f of [0, 1, -0.1, 1.5, Number.NaN, Infinity]) expectError(() => trainTestSplit(ds, f, 1), "invalid_parameter", "testFraction");
    expectError(() => trainTestSplit(ds, 0.01, 1), "invalid_parameter", "testFraction");
    expectError(() => trainTestSplit(ds, 0.99, 1), "invalid_parameter", "testFraction");
    expectError(() => trainTestSplit(indexed(1), 0.5, 1), "invalid_parameter", "ds.size");
    expectError(() => trainTestSplit(ds, 0.5, Number.NaN), "invalid_parameter", "seed");
    expectError(() => trainTestSplit(ds, 0.5, 1, { stratify: "yes" as unknown as boolean }), "invalid_parameter", "stratify");
  });
});

describe("kFold", () => {
  it("every example is in exactly one test fold; train is the complement; fold sizes differ by at most one", () => {
    check(
      fc.property(labelled, fc.integer({ min: 2, max: 10 }), seedArb, fc.boolean(), ([c, labels], k, seed, stratify) => {
        const n = labels.length;
        fc.pre(k <= n);
        const folds = kFold(indexed(n, labels, c), k, seed, { stratify });
        expect(folds).toHaveLength(k);
        const seen = new Array<number>(n).fill(0);
        for (const { train, test } of folds) {
          for (const i of ids(test)) seen[i]!++;
          expect([...ids(train), ...ids(test)].sort((a, b) => a - b)).toEqual(Array.from({ length: n }, (_, i) => i));
        }
        expect(seen.every((s) => s === 1)).toBe(true);
        const sizes = folds.map((f) => f.test.size);
        expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
      }),
    );
  });

  it("stratified: each class's count in a fold is within one of its count / k", () => {
    check(
      fc.property(labelled, fc.integer({ min: 2, max: 10 }), seedArb, ([c, labels], k, seed) => {
        fc.pre(k <= labels.length);
        for (const { test } of kFold(indexed(labels.length, labels, c), k, seed)) {
          for (let cls = 0; cls < c; cls++) {
            const total = labels.filter((l) => l === cls).length;
            const inFold = Array.from(test.labels!).filter((l) => l === cls).length;
            expect(Math.abs(inFold - total / k)).toBeLessThan(1);
          }
        }
      }),
    );
  });

  it("is deterministic for a seed and names its folds", () => {
    const ds = indexed(20);
    const a = kFold(ds, 4, "s").map((f) => ids(f.test));
    const b = kFold(ds, 4, "s").map((f) => ids(f.test));
    expect(a).toEqual(b);
    expect(kFold(ds, 4, "t").map((f) => ids(f.test))).not.toEqual(a);
    expect(kFold(ds, 4, "s")[1]!.test.name).toBe("idx/fold 2 of 4/test");
  });

  it("rejects k outside [2, n]", () => {
    const ds = indexed(5);
    expectError(() => kFold(ds, 1, 1), "invalid_parameter", "k");
    expectError(() => kFold(ds, 6, 1), "invalid_parameter", "k");
    expectError(() => kFold(ds, 2.5, 1), "invalid_parameter", "k");
  });
});
