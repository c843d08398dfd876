import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { createDataset, fitScaler, type ScalerKind } from "../../src/train/data/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";
import { expectError } from "./errors.js";

/** Column j of a flat n × w array. */
const column = (a: Float64Array, j: number, w: number): number[] => Array.from({ length: a.length / w }, (_, i) => a[i * w + j]!);

const matrices = fc
  .tuple(fc.integer({ min: 2, max: 20 }), fc.integer({ min: 1, max: 4 }))
  .chain(([n, w]) => fc.array(fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), { minLength: w, maxLength: w }), { minLength: n, maxLength: n }));

describe("fitScaler", () => {
  it("min-max maps every fitted column onto [0, 1], its minimum to 0 and maximum to 1 (constant columns to 0)", () => {
    check(
      fc.property(matrices, (x) => {
        const ds = createDataset("m", x, x.map(() => [0]));
        const s = fitScaler(ds, "min-max").apply(ds);
        for (let j = 0; j < ds.inputSize; j++) {
          const raw = column(ds.inputs, j, ds.inputSize);
          const v = column(s.inputs, j, ds.inputSize);
          const constant = Math.min(...raw) === Math.max(...raw);
          for (const u of v) expect(u >= -1e-12 && u <= 1 + 1e-12).toBe(true);
          if (constant) expect(v.every((u) => u === 0)).toBe(true);
          else {
            expectClose(Math.min(...v), 0, 1e-12, "min");
            expectClose(Math.max(...v), 1, 1e-12, "max");
          }
        }
      }),
    );
  });

  it("z-score gives each fitted column mean 0 and population standard deviation 1", () => {
    check(
      fc.property(matrices, (x) => {
        const ds = createDataset("z", x, x.map(() => [0]));
        const s = fitScaler(ds, "z-score").apply(ds);
        for (let j = 0; j < ds.inputSize; j++) {
          const v = column(s.inputs, j, ds.inputSize);
          const raw = column(ds.inputs, j, ds.inputSize);
          const spread = Math.max(...raw) - Math.min(...raw);
          if (spread === 0) continue;
          // subnormal spreads carry only a few significant bits (IEEE 754 gradual underflow)
          fc.pre(spread > 1e-290);
          // columns whose spread is tiny against their magnitude lose digits on subtraction (the mean's own rounding,
          // about 1e-16 of the magnitude, is then a visible fraction of the spread: [999999.9981407897, …886] gave 0.11)
          fc.pre(Math.max(...raw.map(Math.abs)) / spread < 1e6);
          const mean = v.reduce((a, b) => a + b, 0) / v.length;
          const sd = Math.sqrt(v.reduce((a, b) => a + (b - mean) ** 2, 0) / v.length);
          expectClose(mean, 0, 1e-9, "mean");
          expectClose(sd, 1, 1e-6, "sd");
        }
      }),
    );
  });

  it("applies the training statistics unchanged to other sets (no refit on test data)", () => {
    const train = createDataset("train", [[0, 5], [10, 5]], [[0], [1]]);
    const test = createDataset("test", [[20, 7], [-5, 5]], [[1], [0]]);
    const mm = fitScaler(train).apply(test);
    // min 0, range 10 in column 0; column 1 is constant (scale 1, offset 5)
    expect(Array.from(mm.inputs)).toEqual([2, 2, -0.5, 0]);
    expect(mm.name).toBe("test/scaled");
    expect(Array.from(mm.targets)).toEqual([1, 0]);
    const z = fitScaler(train, "z-score");
    // mean 5, population sd 5 in column 0; column 1 constant
    expect(Array.from(z.offset)).toEqual([5, 5]);
    expect(Array.from(z.divisor)).toEqual([5, 1]);
  });

  it("z-score statistics do not overflow or underflow for extreme but finite columns", () => {
    const big = fitScaler(createDataset("b", [[1e307], [3e307]], [[0], [1]]), "z-score");
    expectClose(big.offset[0]!, 2e307, 1e-15, "mean");
    expectClose(big.divisor[0]!, 1e307, 1e-15, "sd");
    const small = fitScaler(createDataset("s", [[1e-200], [3e-200]], [[0], [1]]), "z-score");
    expect(Math.abs(small.divisor[0]! / 1e-200 - 1)).toBeLessThan(1e-14);
  });

  it("applyRow writes into out, and out may be the row itself", () => {
    const s = fitScaler(createDataset("t", [[0, 2], [4, 6]], [[0], [1]]));
    const row = new Float64Array([2, 4]);
    const out = new Float64Array(2);
    expect(Array.from(s.applyRow(out, row))).toEqual([0.5, 0.5]);
    expect(s.applyRow(row, row)).toBe(row);
    expect(Array.from(row)).toEqual([0.5, 0.5]);
  });

  it("rejects an empty set, an unknown kind, a width mismatch and overflowing results", () => {
    const empty = createDataset("e", [], [], { inputSize: 1, targetSize: 1 });
    expectError(() => fitScaler(empty), "invalid_parameter", "ds.size");
    expectError(() => fitScaler(createDataset("a", [[1]], [[0]]), "robust" as ScalerKind), "unknown_name", "kind");
    const s = fitScaler(createDataset("a", [[1], [2]], [[0], [1]]));
    expectError(() => s.apply(createDataset("b", [[1, 2]], [[0]])), "shape_mismatch", "ds.inputSize");
    const tiny = fitScaler(createDataset("t", [[0], [1e-300]], [[0], [1]]));
    expectError(() => tiny.apply(createDataset("big", [[1e300]], [[0]])), "invalid_parameter", "big:inputs[0][0]");
    const wide = createDataset("wide", [[-1e308], [1e308]], [[0], [1]]);
    expectError(() => fitScaler(wide), "invalid_parameter", "wide:inputs");
    // the z-score spread of the same column stays finite: mean 0, sd 1e308
    expect(Array.from(fitScaler(wide, "z-score").apply(wide).inputs)).toEqual([-1, 1]);
  });
});
