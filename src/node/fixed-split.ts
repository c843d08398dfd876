/**
 * Fixed train/test splits (Node only): by index files, or by a column of a CSV file that says `train` or
 * `test` on every row. A fixed split replaces the seeded `testFraction` split.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import type { FixedSplit } from "../config/split-schema.js";
import { fail } from "../errors/index.js";
import { subset, type Dataset } from "../train/data/dataset.js";
import type { DatasetSplit } from "../train/data/split.js";
export type { FixedSplit } from "../config/split-schema.js";
import { loadDataset, type LoadDatasetOptions } from "./data.js";

/**
 * Reads an index file: 0-based row numbers below `size`, without repeats.
 * @throws `EbbflowError` `io_error` naming the file, `parse_error` naming the offending entry.
 * @category Data
 */
export async function readIndexFile(file: string, size: number): Promise<Int32Array> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return fail("io_error", file, "a readable index file", (e as Error).message);
  }
  const t = text.trim();
  let tokens: unknown[];
  if (t.startsWith("[")) {
    try {
      tokens = JSON.parse(t) as unknown[];
    } catch (e) {
      return fail("parse_error", file, "a JSON array of row indices", (e as Error).message);
    }
    if (!Array.isArray(tokens)) return fail("parse_error", file, "a JSON array of row indices", typeof tokens);
  } else tokens = t === "" ? [] : t.split(/[\s,]+/).map((s) => (/^\d+$/.test(s) ? Number(s) : s));
  const seen = new Set<number>();
  const out = new Int32Array(tokens.length);
  tokens.forEach((v, i) => {
    if (typeof v !== "number" || !Number.isInteger(v) || v < 0 || v >= size) fail("parse_error", `${file}[${i}]`, `a row index in [0, ${size - 1}]`, v);
    if (seen.has(v)) fail("parse_error", `${file}[${i}]`, "each row once", `row ${v} again`);
    seen.add(v);
    out[i] = v;
  });
  if (out.length === 0) fail("parse_error", file, "at least one row index", "none");
  return out;
}

/**
 * Splits a data set by two index files (a row in both is refused).
 * @category Data
 */
export async function splitByIndexFiles(ds: Dataset, trainFile: string, testFile: string): Promise<DatasetSplit> {
  const train = await readIndexFile(trainFile, ds.size);
  const test = await readIndexFile(testFile, ds.size);
  const inTrain = new Set(train);
  for (let i = 0; i < test.length; i++) if (inTrain.has(test[i] as number)) fail("invalid_config", `${testFile}[${i}]`, "rows not in the training indices", `row ${test[i]}`);
  return { train: subset(ds, train, `${ds.name}/train`), test: subset(ds, test, `${ds.name}/test`) };
}

/**
 * Loads a CSV file split by one of its columns: each row's value there is `train` or `test`; the column is
 * not an input. `options` are the file's load options (target columns, one-hot, ...).
 * @throws `EbbflowError` `invalid_config` at `data.split.column` for another value or a part left empty.
 * @category Data
 */
export async function loadSplitByColumn(file: string, column: string | number, options: LoadDatasetOptions): Promise<DatasetSplit> {
  const ignore = [...(options.ignoreColumns ?? [])];
  const ds = await loadDataset(file, { ...options, ignoreColumns: [...ignore, column] });
  // the column read as class labels, every other column skipped
  const membership = await loadDataset(file, { format: options.format, header: options.header, delimiter: options.delimiter, targetColumns: [column], oneHot: true, ignoreColumns: [...ignore, ...(options.targetColumns ?? []), ...Object.values(options.targetLayers ?? {}).flat()] });
  const names = membership.classNames ?? [];
  const labels = membership.labels;
  const other = names.filter((n) => n !== "train" && n !== "test");
  if (labels === undefined || other.length > 0) fail("invalid_config", "data.split.column", `"train" or "test" in every row of column ${JSON.stringify(column)}`, other.join(", "));
  const rows = (which: string) => {
    const k = names.indexOf(which);
    const idx: number[] = [];
    for (let i = 0; i < labels.length; i++) if (labels[i] === k) idx.push(i);
    if (idx.length === 0) fail("invalid_config", "data.split.column", `at least one "${which}" row`, "none");
    return idx;
  };
  return { train: subset(ds, rows("train"), `${ds.name}/train`), test: subset(ds, rows("test"), `${ds.name}/test`) };
}

/**
 * Splits a data set into its first `first` rows (training) and its last `last` rows (test), in the set's
 * fixed order (for the digits, the order described at `mnistDataset`, so `{ first: 8000, last: 2000 }` is
 * the same split as `mnistDataset({ train: 8000, test: 2000 })`).
 * @throws `EbbflowError` `invalid_config` at `data.split` when the parts overlap (first + last above the set's size).
 * @category Data
 */
export function splitFirstLast(ds: Dataset, first: number, last: number): DatasetSplit {
  if (first + last > ds.size) fail("invalid_config", "data.split", `first + last <= ${ds.size} (the rows of ${ds.name}; the parts may not overlap)`, `first ${first}, last ${last}`);
  const rows = (from: number, n: number) => Array.from({ length: n }, (_, i) => from + i);
  return { train: subset(ds, rows(0, first), `${ds.name}/train`), test: subset(ds, rows(ds.size - last, last), `${ds.name}/test`) };
}

/** Resolves the paths of an index-file split against a folder (a column or row-count split is unchanged). @category Data */
export function resolveSplitPaths(split: FixedSplit, baseDir: string): FixedSplit {
  return !("train" in split) ? split : { train: path.resolve(baseDir, split.train), test: path.resolve(baseDir, split.test) };
}
