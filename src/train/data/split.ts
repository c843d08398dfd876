/**
 * Seeded train/test splits and k-fold cross-validation, stratified by class
 * label when the data set has labels.
 * @module
 */
import { refuseUnknownOptions } from "../../errors/options.js";
import { fail, requireInteger, requireOpenInterval } from "../../errors/index.js";
import { createRandom, type RandomStream } from "../../random/index.js";
import { gather, type Dataset } from "./dataset.js";

/**
 * A training part and a held-out test part of one data set.
 * @category Data
 */
export interface DatasetSplit {
  /** Examples to learn from. */
  readonly train: Dataset;
  /** Held-out examples to evaluate on. */
  readonly test: Dataset;
}

/**
 * Options of {@link trainTestSplit} and {@link kFold}.
 * @category Data
 */
export interface SplitOptions {
  /** Keep class proportions in every part (only for sets with labels). Default true. */
  readonly stratify?: boolean | undefined;
}

/** Groups example indices by class (ascending classes, indices ascending), or one group of all. */
function groups(ds: Dataset, stratify: boolean): Int32Array[] {
  if (!stratify || ds.labels === undefined) {
    const all = new Int32Array(ds.size);
    for (let i = 0; i < ds.size; i++) all[i] = i;
    return [all];
  }
  const labels = ds.labels;
  const counts = new Int32Array(ds.targetSize);
  for (let i = 0; i < ds.size; i++) counts[labels[i] as number]!++;
  const out = Array.from(counts, (c) => new Int32Array(c));
  const fill = new Int32Array(ds.targetSize);
  for (let i = 0; i < ds.size; i++) {
    const l = labels[i] as number;
    (out[l] as Int32Array)[fill[l]!++] = i;
  }
  return out.filter((g) => g.length > 0);
}

/** Reads the stratify flag. */
function stratifyOption(options: SplitOptions): boolean {
  refuseUnknownOptions(options, ["stratify"]);
  const s = options.stratify ?? true;
  if (typeof s !== "boolean") fail("invalid_parameter", "stratify", "true or false", s);
  return s;
}

/** The split stream of a seed: `createRandom(seed).child("split")`. */
function splitStream(seed: number | string): RandomStream {
  return createRandom(seed).child("split");
}

/** Sorts an index list ascending and returns it as an Int32Array. */
function sorted(indices: number[]): Int32Array {
  return Int32Array.from(indices).sort();
}

/**
 * Splits a data set into a training and a test part, seeded.
 *
 * The test part has `round(testFraction * n)` examples (at least 1, at most n − 1).
 * Stratified (the default when the set has labels): each class gives
 * `floor` or `ceil` of `testFraction × (its count)` examples, the rounding shared
 * out by largest remainder (ties to the lower class index), so every class's
 * share of the test part is within one example of its exact proportion.
 * Which examples are drawn comes from the stream `createRandom(seed).child("split")`:
 * each class's indices (in class order) are shuffled (Fisher–Yates) and the
 * first ones go to the test part. Both parts keep the original order of the
 * examples; the same seed always gives the same split.
 * @category Data
 * @param ds - The data set (at least 2 examples).
 * @param testFraction - Share of examples held out, in (0, 1).
 * @param seed - Seed of the split.
 * @param options - `stratify` (default true).
 * @returns `{ train, test }`, named `<name>/train` and `<name>/test`.
 * @throws {@link EbbflowError} `invalid_parameter` with path `testFraction` (outside (0, 1), or leaving a part empty), `ds.size`, `seed`.
 * @example
 * ```ts
 * const { train, test } = trainTestSplit(ds, 0.2, 42);
 * ```
 */
export function trainTestSplit(ds: Dataset, testFraction: number, seed: number | string, options: SplitOptions = {}): DatasetSplit {
  requireOpenInterval("testFraction", testFraction, 0, 1);
  requireInteger("ds.size", ds.size, 2);
  const stratify = stratifyOption(options);
  const rng = splitStream(seed);
  const n = ds.size;
  const nTest = Math.round(testFraction * n);
  if (nTest < 1 || nTest > n - 1) {
    fail("invalid_parameter", "testFraction", `a fraction leaving at least one example in each part (n = ${n})`, testFraction, `round(${testFraction} × ${n}) = ${nTest}`);
  }
  const gs = groups(ds, stratify);
  // largest-remainder apportionment of nTest over the groups
  const quotas = gs.map((g) => Math.floor(testFraction * g.length));
  let left = nTest - quotas.reduce((a, b) => a + b, 0);
  const order = gs.map((g, k) => k).sort((a, b) => {
    const ra = testFraction * (gs[a] as Int32Array).length - (quotas[a] as number);
    const rb = testFraction * (gs[b] as Int32Array).length - (quotas[b] as number);
    return rb - ra || a - b;
  });
  for (const k of order) {
    if (left <= 0) break;
    if ((quotas[k] as number) < (gs[k] as Int32Array).length) {
      quotas[k]!++;
      left--;
    }
  }
  const trainIdx: number[] = [];
  const testIdx: number[] = [];
  gs.forEach((g, k) => {
    const shuffled = rng.shuffle(Int32Array.from(g));
    const q = quotas[k] as number;
    for (let j = 0; j < shuffled.length; j++) (j < q ? testIdx : trainIdx).push(shuffled[j] as number);
  });
  return {
    train: gather(ds, sorted(trainIdx), `${ds.name}/train`),
    test: gather(ds, sorted(testIdx), `${ds.name}/test`),
  };
}

/**
 * k-fold cross-validation: k splits whose test parts are disjoint and together
 * hold every example exactly once; each split trains on the other k − 1 folds.
 *
 * Assignment, seeded by `createRandom(seed).child("split")`: each class's
 * indices (all indices when not stratified) are shuffled (Fisher–Yates) and
 * dealt to the folds in turn, the dealing continuing from class to class, so
 * fold sizes differ by at most one and (stratified) every class's count in a
 * fold is the floor or ceil of its count / k. Parts keep the original order.
 * @category Data
 * @param ds - The data set.
 * @param k - Number of folds, an integer in [2, ds.size].
 * @param seed - Seed of the assignment.
 * @param options - `stratify` (default true).
 * @returns k splits, named `<name>/fold i of k/train` and `.../test` (i from 1).
 * @throws {@link EbbflowError} `invalid_parameter` with path `k` or `seed`.
 * @example
 * ```ts
 * for (const { train, test } of kFold(ds, 5, "cv")) { ... }
 * ```
 */
export function kFold(ds: Dataset, k: number, seed: number | string, options: SplitOptions = {}): DatasetSplit[] {
  requireInteger("k", k, 2);
  if (k > ds.size) fail("invalid_parameter", "k", `an integer in [2, ${ds.size}] (at most one fold per example)`, k);
  const stratify = stratifyOption(options);
  const rng = splitStream(seed);
  const fold = new Int32Array(ds.size);
  let next = 0;
  for (const g of groups(ds, stratify)) {
    const shuffled = rng.shuffle(Int32Array.from(g));
    for (let j = 0; j < shuffled.length; j++) {
      fold[shuffled[j] as number] = next;
      next = (next + 1) % k;
    }
  }
  const out: DatasetSplit[] = [];
  for (let f = 0; f < k; f++) {
    const trainIdx: number[] = [];
    const testIdx: number[] = [];
    for (let i = 0; i < ds.size; i++) (fold[i] === f ? testIdx : trainIdx).push(i);
    const base = `${ds.name}/fold ${f + 1} of ${k}`;
    out.push({ train: gather(ds, Int32Array.from(trainIdx), `${base}/train`), test: gather(ds, Int32Array.from(testIdx), `${base}/test`) });
  }
  return out;
}
