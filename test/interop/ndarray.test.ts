/**
 * ndarray-layout views and ndarray-like inputs, checked against the general-purpose `ndarray` and
 * `ndarray-ops` packages (independent implementations of strided views: `get`, `transpose`, `lo`/`hi`/`step`,
 * `ops.assign`), and against the flat-array paths of the same functions (bit for bit).
 */
import ndarray from "ndarray";
import ops from "ndarray-ops";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  biasView, buildNetwork, createDataset, createRule, EbbflowError, feedbackView, flatBatch, ndView, recordView, rowMajorValues,
  Settler, stateView, weightView, type Network,
} from "../../src/index.js";
import { check } from "../helpers/property.js";

function strip(seed = 1): Network {
  return buildNetwork({
    seed,
    layers: [
      { name: "touch", size: 2, role: "input" },
      { name: "hidden", size: 3, role: "hidden" },
      { name: "texture", size: 1, role: "output" },
    ],
    connections: [
      { from: "touch", to: "hidden", feedback: { kind: "separate", learned: true } },
      { from: "hidden", to: "texture", feedback: { kind: "tied", gain: 0.5 } },
    ],
  });
}

const XOR_IN = [0, 0, 0, 1, 1, 0, 1, 1];
const XOR_OUT = [0, 1, 1, 0];

describe("views in the ndarray layout", () => {
  it("weights are [post, pre] on the network's own array: ndarray's get(i, j) is the weight from unit j to unit i", () => {
    const net = strip();
    const c = net.connection("touch", "hidden");
    const v = weightView(net, "touch->hidden");
    expect([v.shape, v.stride, v.offset, v.dtype]).toEqual([[3, 2], [2, 1], 0, "float64"]);
    expect(v.data).toBe(c.weights); // no copy
    const nd = ndarray(v.data, v.shape, v.stride, v.offset);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 2; j++) expect(nd.get(i, j)).toBe(c.weights[i * 2 + j]); // network.ts: weights[i * |from| + j]
    nd.set(2, 1, 0.25); // writes reach the network
    expect(c.weights[5]).toBe(0.25);
    const f = ndarray(feedbackView(net, "touch->hidden").data, [2, 3]);
    expect(f.shape).toEqual([2, 3]);
    expect(() => feedbackView(net, "hidden->texture")).toThrow(EbbflowError);
    expect(Array.from(biasView(net, "hidden").data)).toEqual(Array.from(net.layer("hidden").bias));
    expect(() => weightView(net, "touch->texture")).toThrow(/connection/);
  });

  it("states are [batch, units] and activity records [steps, batch, units], equal to the snapshot's arrays", () => {
    const net = strip();
    const settler = new Settler(net, 4);
    const snap = settler.settle({ phase: "free", inputs: { touch: XOR_IN }, record: true });
    const s = stateView(net, snap, "hidden");
    expect([s.shape, s.stride]).toEqual([[4, 3], [3, 1]]);
    expect(s.data).toBe(snap.activity[1]);
    const r = recordView(net, snap, "hidden");
    expect(r.shape).toEqual([snap.steps, 4, 3]);
    const nd = ndarray(r.data, r.shape, r.stride, r.offset);
    for (const step of [0, snap.steps - 1]) for (let b = 0; b < 4; b++) for (let u = 0; u < 3; u++) expect(nd.get(step, b, u)).toBe(snap.record![step]![1]![b * 3 + u]);
    const plain = settler.settle({ phase: "free", inputs: { touch: XOR_IN } });
    expect(() => recordView(net, plain, "hidden")).toThrow(/record/);
  });
});

describe("ndarray-like inputs", () => {
  it("settle: a contiguous ndarray, a transposed (strided) one and a flat array give the same bits", () => {
    const net = strip();
    const settler = new Settler(net, 4);
    const flat = settler.settle({ phase: "clamped", inputs: { touch: XOR_IN }, targets: { texture: XOR_OUT } });
    const want = flat.activity.map((a) => Array.from(a));
    const nd = ndarray(Float64Array.from(XOR_IN), [4, 2]);
    const colMajor = ndarray(Float64Array.from([0, 0, 1, 1, 0, 1, 0, 1]), [2, 4]).transpose(1, 0); // same values, column-major storage
    for (const touch of [nd, colMajor]) {
      const s = settler.settle({ phase: "clamped", inputs: { touch }, targets: { texture: ndarray(Float64Array.from(XOR_OUT), [4, 1]) } });
      expect(s.activity.map((a) => Array.from(a))).toEqual(want);
    }
  });

  it("contiguous storage is read without a copy; other layouts match ndarray-ops' assign (property)", () => {
    const data = new Float64Array(12).map((_, i) => i);
    const view = rowMajorValues(ndarray(data, [3, 4]).hi(2, 4), "x") as Float64Array;
    expect(view.buffer).toBe(data.buffer); // a subarray: same storage
    const offset = rowMajorValues(ndarray(data, [3, 4]).lo(1, 0), "x") as Float64Array;
    expect([offset.buffer === data.buffer, offset.byteOffset, Array.from(offset.subarray(0, 2))]).toEqual([true, 32, [4, 5]]);
    return check(
      fc.property(
        fc.array(fc.integer({ min: 1, max: 4 }), { minLength: 1, maxLength: 3 }),
        fc.nat(),
        fc.array(fc.integer({ min: 1, max: 2 }), { minLength: 3, maxLength: 3 }),
        fc.array(fc.boolean(), { minLength: 3, maxLength: 3 }),
        (shape, rotation, steps, flips) => {
          const full = shape.map((n, d) => n * steps[d]!);
          const base = ndarray(new Float64Array(full.reduce((x, y) => x * y, 1)).map((_, i) => i * 0.5 - 3), full);
          // a strided, flipped, axis-permuted view of the base (ndarray's own view operations)
          let v = base.step(...shape.map((_, d) => (flips[d] ? -steps[d]! : steps[d]!)));
          expect(v.shape).toEqual(shape);
          const perm = shape.map((_, d) => (d + rotation) % shape.length);
          v = v.transpose(...perm);
          const expected = ndarray(new Float64Array(v.size), v.shape.slice());
          ops.assign(expected, v);
          const got = rowMajorValues(v, "v");
          expect(Array.from(got)).toEqual(Array.from(expected.data as Float64Array));
        },
      ),
      50,
    );
  });

  it("rule.step takes ndarray batches: the same update as with flat arrays, bit for bit (CHL, GeneRec, EqProp, backprop)", () => {
    const configs = [{ rule: "chl", rate: 0.2 }, { rule: "generec", rate: 0.2 }, { rule: "eqprop", beta: 0.1, rate: 0.5 }, { rule: "backprop", rate: 0.2 }] as const;
    for (const config of configs) {
      const a = strip(3);
      const b = strip(3);
      const ra = createRule(a, config);
      const rb = createRule(b, config);
      for (let epoch = 0; epoch < 5; epoch++) {
        ra.step({ inputs: { touch: XOR_IN }, targets: { texture: XOR_OUT } });
        rb.step({ inputs: { touch: ndarray(Float32Array.from(XOR_IN), [4, 2]) }, targets: { texture: ndView(Float64Array.from(XOR_OUT), [4, 1]) } });
      }
      for (let k = 0; k < a.connections.length; k++) expect(Array.from(b.connections[k]!.weights), config.rule).toEqual(Array.from(a.connections[k]!.weights));
      expect(Array.from(b.layer("hidden").bias), config.rule).toEqual(Array.from(a.layer("hidden").bias));
      expect(Array.from(a.connections[0]!.weights)).not.toEqual(Array.from(strip(3).connections[0]!.weights)); // it learned
    }
  });

  it("createDataset takes [examples, width] ndarrays (any strides) and equals the row-list form", () => {
    const rows = createDataset("xor", [[0, 0], [0, 1], [1, 0], [1, 1]], [[0], [1], [1], [0]]);
    const t = ndarray(Float64Array.from([0, 0, 1, 1, 0, 1, 0, 1]), [2, 4]).transpose(1, 0);
    const nd = createDataset("xor", t, ndarray(Float64Array.from(XOR_OUT), [4, 1]));
    expect([nd.size, nd.inputSize, nd.targetSize]).toEqual([4, 2, 1]);
    expect(Array.from(nd.inputs)).toEqual(Array.from(rows.inputs));
    expect(Array.from(nd.targets)).toEqual(Array.from(rows.targets));
    expect(() => createDataset("x", ndarray(new Float64Array(8), [4, 2]), ndarray(new Float64Array(4), [4, 1]), { inputSize: 3 })).toThrow(/inputs\.shape/);
  });

  it("wrong shapes and strides past the data are typed errors naming the entry", () => {
    const net = strip();
    const settler = new Settler(net, 4);
    const bad = (f: () => unknown) => {
      try {
        f();
      } catch (e) {
        return e instanceof EbbflowError ? [e.code, e.path] : ["not typed", String(e)];
      }
      return ["no error"];
    };
    expect(bad(() => settler.settle({ phase: "free", inputs: { touch: ndarray(new Float64Array(8), [2, 4]) } }))).toEqual(["shape_mismatch", "inputs.touch.shape"]);
    expect(bad(() => settler.settle({ phase: "free", inputs: { touch: { data: new Float64Array(7), shape: [4, 2], stride: [2, 1], offset: 0 } } }))).toEqual(["shape_mismatch", "inputs.touch.data"]);
    expect(bad(() => settler.settle({ phase: "free", inputs: { touch: { data: new Float64Array(8), shape: [4, 2], stride: [2], offset: 0 } } }))).toEqual(["shape_mismatch", "inputs.touch.stride"]);
    expect(bad(() => flatBatch(net, { inputs: { touch: ndarray(new Float64Array(8), [4, 2]) }, targets: { texture: ndarray(new Float64Array(8), [4, 2]) } }))).toEqual(["shape_mismatch", "targets.texture.shape"]);
  });
});
