import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { createDataset, oneHot, subset, xorDataset } from "../../src/train/data/index.js";
import { check } from "../helpers/property.js";
import { expectError } from "./errors.js";

/** Random matrix of finite doubles: n rows of width w. */
const matrix = (n: fc.Arbitrary<number>, w: fc.Arbitrary<number>): fc.Arbitrary<number[][]> =>
  fc.tuple(n, w).chain(([rows, width]) => fc.array(fc.array(fc.double({ noNaN: true, noDefaultInfinity: true }), { minLength: width, maxLength: width }), { minLength: rows, maxLength: rows }));

describe("createDataset", () => {
  it("lays rows out row-major (row = example) and keeps the values exactly", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 8 }).chain((n) => fc.tuple(matrix(fc.constant(n), fc.integer({ min: 1, max: 5 })), matrix(fc.constant(n), fc.integer({ min: 1, max: 4 })))), ([x, y]) => {
        const ds = createDataset("m", x, y);
        expect(ds.size).toBe(x.length);
        expect(ds.inputSize).toBe(x[0]!.length);
        expect(ds.targetSize).toBe(y[0]!.length);
        for (let i = 0; i < ds.size; i++) {
          for (let j = 0; j < ds.inputSize; j++) expect(Object.is(ds.inputs[i * ds.inputSize + j], x[i]![j])).toBe(true);
          for (let j = 0; j < ds.targetSize; j++) expect(Object.is(ds.targets[i * ds.targetSize + j], y[i]![j])).toBe(true);
        }
      }),
    );
  });

  it("flat Float64Array input equals the row form and is copied, not aliased", () => {
    const flat = new Float64Array([1, 2, 3, 4, 5, 6]);
    const ds = createDataset("flat", flat, new Float64Array([0, 1, 1]), { inputSize: 2, targetSize: 1 });
    const rows = createDataset("rows", [[1, 2], [3, 4], [5, 6]], [[0], [1], [1]]);
    expect(Array.from(ds.inputs)).toEqual(Array.from(rows.inputs));
    flat[0] = 99;
    expect(ds.inputs[0]).toBe(1);
    expect(Object.isFrozen(ds)).toBe(true);
  });

  it("names the row and column of a non-finite value: inputs[r][c]", () => {
    expectError(() => createDataset("d", [[1, 2], [3, 4], [5, Number.NaN]], [[0], [1], [0]]), "invalid_parameter", "inputs[2][1]");
    expectError(() => createDataset("d", [[1], [2]], [[0], [Infinity]]), "invalid_parameter", "targets[1][0]");
    expectError(() => createDataset("d", new Float64Array([1, 2, 3, -Infinity]), new Float64Array([0, 1]), { inputSize: 2, targetSize: 1 }), "invalid_parameter", "inputs[1][1]");
    expectError(() => createDataset("d", [[1, "2" as unknown as number]], [[0]]), "invalid_parameter", "inputs[0][1]");
  });

  it("reports rows of the wrong width and unequal example counts as shape_mismatch", () => {
    expectError(() => createDataset("d", [[1, 2], [3]], [[0], [1]]), "shape_mismatch", "inputs[1]");
    expectError(() => createDataset("d", [[1], [2], [3]], [[0], [1]]), "shape_mismatch", "targets");
    expectError(() => createDataset("d", new Float64Array(5), new Float64Array(2), { inputSize: 2, targetSize: 1 }), "shape_mismatch", "inputs");
    expectError(() => createDataset("d", [[1, 2]], [[0]], { inputSize: 3 }), "shape_mismatch", "inputs[0]");
  });

  it("rejects bad parameters with the parameter name as path", () => {
    expectError(() => createDataset("", [[1]], [[0]]), "invalid_parameter", "name");
    expectError(() => createDataset("d", new Float64Array(2), new Float64Array(1), { targetSize: 1 }), "invalid_parameter", "inputsSize");
    expectError(() => createDataset("d", [], [], {}), "invalid_parameter", "inputsSize");
    expectError(() => createDataset("d", [[1]], [[0]], { inputSize: 0 }), "invalid_parameter", "inputSize");
    expectError(() => createDataset("d", [[1]], [[0]], { targetSize: 1.5 }), "invalid_parameter", "targetSize");
    expectError(() => createDataset("d", [[1], [2]], [[1, 0], [0, 1]], { classNames: ["a", "b"] }), "invalid_parameter", "classNames");
    expectError(() => createDataset("d", [[1], [2]], [[1, 0], [0, 1]], { labels: [0, 1], classNames: ["a", "a"] }), "invalid_parameter", "classNames[1]");
    expectError(() => createDataset("d", [[1], [2]], [[1, 0], [0, 1]], { labels: [0, 1], classNames: ["a"] }), "shape_mismatch", "classNames");
    expectError(() => createDataset("d", [[1], [2]], [[0], [1]], { inputNames: ["x", "y"] }), "shape_mismatch", "inputNames");
  });

  it("accepts an empty set only when the widths are given", () => {
    const ds = createDataset("empty", [], [], { inputSize: 3, targetSize: 2 });
    expect([ds.size, ds.inputSize, ds.targetSize, ds.inputs.length]).toEqual([0, 3, 2, 0]);
  });

  it("labels must point at the unique largest target of their row", () => {
    const ok = createDataset("soft", [[0], [1]], [[0.9, 0.1], [0.1, 0.9]], { labels: [0, 1], classNames: ["a", "b"] });
    expect(Array.from(ok.labels!)).toEqual([0, 1]);
    expect(ok.classNames).toEqual(["a", "b"]);
    expectError(() => createDataset("d", [[0], [1]], [[1, 0], [0, 1]], { labels: [0, 0] }), "shape_mismatch", "labels[1]");
    expectError(() => createDataset("d", [[0], [1]], [[1, 1], [0, 1]], { labels: [0, 1] }), "shape_mismatch", "labels[0]");
    expectError(() => createDataset("d", [[0], [1]], [[1, 0], [0, 1]], { labels: [0, 2] }), "invalid_parameter", "labels[1]");
    expectError(() => createDataset("d", [[0], [1]], [[1, 0], [0, 1]], { labels: [0] }), "shape_mismatch", "labels");
  });
});

describe("oneHot", () => {
  it("each row holds a single 1, at the label's column", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 12 }).chain((k) => fc.tuple(fc.constant(k), fc.array(fc.integer({ min: 0, max: k - 1 }), { maxLength: 30 }))), ([k, labels]) => {
        const y = oneHot(labels, k);
        expect(y.length).toBe(labels.length * k);
        labels.forEach((l, i) => {
          const row = Array.from(y.subarray(i * k, (i + 1) * k));
          expect(row.reduce((a, b) => a + b, 0)).toBe(1);
          expect(row[l]).toBe(1);
        });
      }),
    );
  });

  it("rejects labels out of range and a bad class count", () => {
    expectError(() => oneHot([0, 3], 3), "invalid_parameter", "labels[1]");
    expectError(() => oneHot([0, -1], 3), "invalid_parameter", "labels[1]");
    expectError(() => oneHot([0.5], 3), "invalid_parameter", "labels[0]");
    expectError(() => oneHot([0], 0), "invalid_parameter", "classes");
    expectError(() => oneHot([0], Number.NaN), "invalid_parameter", "classes");
  });
});

describe("subset", () => {
  it("row k of the subset is row indices[k] of the source, labels included", () => {
    const base = createDataset("b", [[0, 1], [2, 3], [4, 5], [6, 7]], [[1, 0], [0, 1], [1, 0], [0, 1]], { labels: [0, 1, 0, 1], classNames: ["p", "q"] });
    check(
      fc.property(fc.array(fc.integer({ min: 0, max: 3 }), { maxLength: 10 }), (idx) => {
        const s = subset(base, idx, "pick");
        expect(s.size).toBe(idx.length);
        expect(s.name).toBe("pick");
        idx.forEach((i, k) => {
          expect(Array.from(s.inputs.subarray(2 * k, 2 * k + 2))).toEqual(Array.from(base.inputs.subarray(2 * i, 2 * i + 2)));
          expect(Array.from(s.targets.subarray(2 * k, 2 * k + 2))).toEqual(Array.from(base.targets.subarray(2 * i, 2 * i + 2)));
          expect(s.labels![k]).toBe(base.labels![i]);
        });
        expect(s.classNames).toEqual(["p", "q"]);
      }),
    );
  });

  it("rejects indices outside [0, size)", () => {
    expectError(() => subset(xorDataset(), [0, 4]), "invalid_parameter", "indices[1]");
    expectError(() => subset(xorDataset(), [-1]), "invalid_parameter", "indices[0]");
    expectError(() => subset(xorDataset(), [1.5]), "invalid_parameter", "indices[0]");
    expectError(() => subset(xorDataset(), [0], ""), "invalid_parameter", "name");
  });
});
