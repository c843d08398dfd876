/**
 * Data sources by name (Node only): built-in sets, the open data sets, and CSV/JSON files.
 * @module
 */
import { EbbflowError, fail, issueText } from "../errors/index.js";
import { loadSplitByColumn, splitByIndexFiles, splitFirstLast, type FixedSplit } from "./fixed-split.js";
import type { Dataset } from "../train/data/index.js";
import { parityDataset, xorDataset, trainTestSplit, fitScaler } from "../train/data/index.js";
import { touchStripDataset } from "../demo/touchStrip.js";
import { irisDataset, digitsDataset, loadDataset } from "./data.js";

/**
 * Resolves a data source and splits it: built-in sets and files; `touch-strip`, `xor`, `parity:N`, `iris`, `digits[:N]`, or a `.csv`/`.json` path.
 * The split is seeded (`testFraction`) or fixed (`split`: index files, a CSV column of `train`/`test`, or the first and last rows).
 * @category Data
 */
export async function resolveData(
  source: string,
  options: { testFraction: number; seed: number | string; targetColumns?: readonly (number | string)[] | undefined; oneHot?: boolean | undefined; scale?: boolean | undefined; low?: number | undefined; split?: FixedSplit | undefined },
): Promise<{ train: Dataset; test: Dataset | undefined }> {
  const split = options.split;
  if (split !== undefined) {
    // a fixed split (index files or a column) instead of the seeded one
    if (options.testFraction > 0) fail("invalid_config", "data.split", "no testFraction beside a fixed split", `testFraction ${options.testFraction}`);
    let parts: { train: Dataset; test: Dataset };
    if ("column" in split) {
      if (!/\.(csv|tsv)$/i.test(source)) fail("invalid_config", "data.split.column", "a CSV or TSV file as the data source (the column is one of its columns)", source);
      parts = await loadSplitByColumn(source, split.column, { ...(options.targetColumns !== undefined ? { targetColumns: options.targetColumns as readonly string[] } : {}), oneHot: options.oneHot });
    } else if ("first" in split) parts = splitFirstLast(await loadSource(source, options), split.first, split.last);
    else parts = await splitByIndexFiles(await loadSource(source, options), split.train, split.test);
    if (!options.scale) return parts;
    const scaler = fitScaler(parts.train);
    return { train: scaler.apply(parts.train), test: scaler.apply(parts.test) };
  }
  const ds = await loadSource(source, options);
  if (options.testFraction <= 0) return { train: options.scale ? fitScaler(ds).apply(ds) : ds, test: undefined };
  const { train, test } = trainTestSplit(ds, options.testFraction, options.seed);
  if (!options.scale) return { train, test };
  const scaler = fitScaler(train);
  return { train: scaler.apply(train), test: scaler.apply(test) };
}

/** Loads a data source by name or path, whole. */
async function loadSource(source: string, options: { targetColumns?: readonly (number | string)[] | undefined; oneHot?: boolean | undefined; low?: number | undefined }): Promise<Dataset> {
  let ds: Dataset;
  const [name, arg] = source.split(":");
  if (name === "xor") ds = xorDataset();
  else if (name === "touch-strip") ds = touchStripDataset(options.low !== undefined ? { low: options.low, high: 1 - options.low } : {});
  else if (name === "parity") ds = parityDataset(Number(arg ?? 3));
  else if (name === "iris") ds = await irisDataset();
  else if (name === "digits" || name === "mnist") ds = await digitsDataset(arg !== undefined ? { count: Number(arg) } : {});
  else if (/\.(csv|json)$/i.test(source)) ds = await loadDataset(source, { ...(options.targetColumns !== undefined ? { targetColumns: options.targetColumns as readonly string[] } : {}), oneHot: options.oneHot });
  else throw new EbbflowError(issueText("unknown_name", "--data", "touch-strip, xor, parity:N, iris, digits (or mnist), digits:N, or a .csv/.json file", JSON.stringify(source)));
  return ds;
}
