import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { createDataset, datasetToJson, parseJsonDataset, xorDataset } from "../../src/train/data/index.js";
import { check } from "../helpers/property.js";
import { expectError } from "./errors.js";

// The format is ebbflow's own (documented in src/train/data/json.ts); JSON syntax itself is RFC 8259.

describe("parseJsonDataset: the format", () => {
  it("reads inputs, targets, labels, class and input names", () => {
    const text = JSON.stringify({
      name: "four corners",
      inputs: [[0, 0], [0, 1], [1, 0], [1, 1]],
      targets: [[1, 0], [0, 1], [0, 1], [1, 0]],
      labels: [0, 1, 1, 0],
      classNames: ["same", "different"],
      inputNames: ["left", "right"],
    });
    const ds = parseJsonDataset(text, "corners.json");
    expect(ds.name).toBe("four corners");
    expect([ds.size, ds.inputSize, ds.targetSize]).toEqual([4, 2, 2]);
    expect(Array.from(ds.labels!)).toEqual([0, 1, 1, 0]);
    expect(ds.classNames).toEqual(["same", "different"]);
    expect(ds.inputNames).toEqual(["left", "right"]);
  });

  it("labels alone give one-hot targets; classNames set the class count", () => {
    const a = parseJsonDataset('{"inputs": [[0], [1], [2]], "labels": [1, 0, 1]}', "a.json");
    expect(a.name).toBe("a.json");
    expect(Array.from(a.targets)).toEqual([0, 1, 1, 0, 0, 1]);
    const b = parseJsonDataset('{"inputs": [[0], [1]], "labels": [1, 0], "classNames": ["x", "y", "z"]}', "b.json");
    expect(b.targetSize).toBe(3);
    expect(Array.from(b.targets)).toEqual([0, 1, 0, 1, 0, 0]);
  });

  it("one-hot targets with classNames give labels", () => {
    const ds = parseJsonDataset('{"inputs": [[0], [1]], "targets": [[0, 1], [1, 0]], "classNames": ["off", "on"]}', "c.json");
    expect(Array.from(ds.labels!)).toEqual([1, 0]);
  });

  it("writing and reading back gives the same set, value for value", () => {
    const cell = fc.double({ noNaN: true, noDefaultInfinity: true });
    const sets = fc
      .record({ n: fc.integer({ min: 1, max: 6 }), w: fc.integer({ min: 1, max: 4 }), k: fc.integer({ min: 2, max: 4 }) })
      .chain(({ n, w, k }) =>
        fc.record({
          k: fc.constant(k),
          x: fc.array(fc.array(cell, { minLength: w, maxLength: w }), { minLength: n, maxLength: n }),
          lab: fc.array(fc.nat({ max: k - 1 }), { minLength: n, maxLength: n }),
          labelled: fc.boolean(),
          indent: fc.integer({ min: 0, max: 2 }),
        }),
      );
    check(
      fc.property(sets, ({ k, x, lab, labelled, indent }) => {
        const targets = lab.map((l) => Array.from({ length: k }, (_, c) => (c === l ? 1 : 0)));
        const ds = createDataset("round trip", x, targets, labelled ? { labels: lab, classNames: Array.from({ length: k }, (_, c) => `c${c}`) } : {});
        const back = parseJsonDataset(datasetToJson(ds, indent), "rt.json");
        expect(back.name).toBe(ds.name);
        // JSON has no negative zero: -0 comes back as 0, every other double exactly
        expect(Array.from(back.inputs)).toEqual(Array.from(ds.inputs).map((v) => (v === 0 ? 0 : v)));
        expect(Array.from(back.targets)).toEqual(Array.from(ds.targets));
        expect(back.labels === undefined ? undefined : Array.from(back.labels)).toEqual(ds.labels === undefined ? undefined : Array.from(ds.labels));
        expect(back.classNames).toEqual(ds.classNames);
      }),
    );
  });

  it("the XOR set is written as documented", () => {
    expect(datasetToJson(xorDataset())).toBe('{"name":"xor","inputs":[[0,0],[0,1],[1,0],[1,1]],"targets":[[0],[1],[1],[0]]}');
  });
});

describe("parseJsonDataset: errors name the file and the value", () => {
  it("invalid JSON and a non-object top level are parse errors at the source", () => {
    expectError(() => parseJsonDataset("{inputs: [[1]]}", "bad.json"), "parse_error", "bad.json");
    expectError(() => parseJsonDataset("[[1, 2]]", "bad.json"), "parse_error", "bad.json");
    expectError(() => parseJsonDataset("null", "bad.json"), "parse_error", "bad.json");
  });

  it("a non-number value is reported at source:key[row][column]", () => {
    expectError(() => parseJsonDataset('{"inputs": [[1, 2], [3, "4"]], "targets": [[0], [1]]}', "v.json"), "parse_error", "v.json:inputs[1][1]");
    expectError(() => parseJsonDataset('{"inputs": [[1], [2]], "targets": [[0], [null]]}', "v.json"), "parse_error", "v.json:targets[1][0]");
  });

  it("rows of the wrong width and unequal lengths are shape mismatches", () => {
    expectError(() => parseJsonDataset('{"inputs": [[1, 2], [3]], "targets": [[0], [1]]}', "w.json"), "shape_mismatch", "w.json:inputs[1]");
    expectError(() => parseJsonDataset('{"inputs": [[1], [2]], "targets": [[0]]}', "w.json"), "shape_mismatch", "w.json:targets");
    expectError(() => parseJsonDataset('{"inputs": [[1], [2]], "labels": [0]}', "w.json"), "shape_mismatch", "w.json:labels");
    expectError(() => parseJsonDataset('{"inputs": [[1]], "targets": [[0]], "inputNames": ["a", "b"]}', "w.json"), "shape_mismatch", "w.json:inputNames");
    expectError(() => parseJsonDataset('{"inputs": [[1]], "targets": [[1, 0]], "classNames": ["a", "b", "c"]}', "w.json"), "shape_mismatch", "w.json:classNames");
  });

  it("unknown keys, missing targets and inconsistent labels are reported", () => {
    expectError(() => parseJsonDataset('{"inputs": [[1]], "target": [[0]]}', "k.json"), "parse_error", "k.json:target");
    expectError(() => parseJsonDataset('{"inputs": [[1]]}', "k.json"), "parse_error", "k.json:targets");
    expectError(() => parseJsonDataset('{"targets": [[1]]}', "k.json"), "parse_error", "k.json:inputs");
    expectError(() => parseJsonDataset('{"inputs": [], "targets": []}', "k.json"), "parse_error", "k.json:inputs");
    expectError(() => parseJsonDataset('{"inputs": [[1], [2]], "targets": [[1, 0], [1, 0]], "labels": [0, 1]}', "k.json"), "shape_mismatch", "k.json:labels[1]");
    expectError(() => parseJsonDataset('{"inputs": [[1]], "labels": [-1]}', "k.json"), "parse_error", "k.json:labels[0]");
    expectError(() => parseJsonDataset('{"inputs": [[1]], "labels": [2], "classNames": ["a", "b"]}', "k.json"), "parse_error", "k.json:labels[0]");
    expectError(() => parseJsonDataset('{"inputs": [[1]], "targets": [[0.5, 0.5]], "classNames": ["a", "b"]}', "k.json"), "parse_error", "k.json:targets[0]");
    expectError(() => parseJsonDataset('{"inputs": [[1]], "targets": [[1]], "classNames": ["a", "a"]}', "k.json"), "parse_error", "k.json:classNames[1]");
    expectError(() => parseJsonDataset('{"inputs": [[1]], "targets": [[1]], "name": ""}', "k.json"), "parse_error", "k.json:name");
  });

  it("collects several problems in one error", () => {
    const err = expectError(() => parseJsonDataset('{"inputs": [[1, "a"], [null, 2]], "targets": [[0], [1]], "extra": 1}', "m.json"), "parse_error", "m.json:extra");
    expect(err.issues.map((i) => i.path)).toEqual(["m.json:extra", "m.json:inputs[0][1]", "m.json:inputs[1][0]"]);
  });

  it("writing rejects an empty set and a bad indent", () => {
    const empty = createDataset("e", [], [], { inputSize: 1, targetSize: 1 });
    expectError(() => datasetToJson(empty), "invalid_parameter", "ds.size");
    expectError(() => datasetToJson(xorDataset(), -1), "invalid_parameter", "indent");
    expectError(() => parseJsonDataset("{}", ""), "invalid_parameter", "source");
  });
});
