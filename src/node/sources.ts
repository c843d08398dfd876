/**
 * Data sources by name (Node only): built-in sets, the open data sets, and CSV/JSON files.
 * @module
 */
import { EbbflowError, issueText } from "../errors/index.js";
import type { Dataset } from "../train/data/index.js";
import { parityDataset, xorDataset, trainTestSplit, fitScaler } from "../train/data/index.js";
import { touchStripDataset } from "../demo/touchStrip.js";
import { irisDataset, digitsDataset, loadDataset } from "./data.js";

/**
 * Resolves a data source and splits it: built-in sets and files; `touch-strip`, `xor`, `parity:N`, `iris`, `digits[:N]`, or a `.csv`/`.json` path.
 * @category Data
 */
export async function resolveData(source: string, options: { testFraction: number; seed: number | string; targetColumns?: readonly (number | string)[] | undefined; oneHot?: boolean | undefined; scale?: boolean | undefined; low?: number | undefined }): Promise<{ train: Dataset; test: Dataset | undefined }> {
  let ds: Dataset;
  const [name, arg] = source.split(":");
  if (name === "xor") ds = xorDataset();
  else if (name === "touch-strip") ds = touchStripDataset(options.low !== undefined ? { low: options.low, high: 1 - options.low } : {});
  else if (name === "parity") ds = parityDataset(Number(arg ?? 3));
  else if (name === "iris") ds = await irisDataset();
  else if (name === "digits" || name === "mnist") ds = await digitsDataset(arg !== undefined ? { count: Number(arg) } : {});
  else if (/\.(csv|json)$/i.test(source)) ds = await loadDataset(source, { ...(options.targetColumns !== undefined ? { targetColumns: options.targetColumns as readonly string[] } : {}), oneHot: options.oneHot });
  else throw new EbbflowError(issueText("unknown_name", "--data", "touch-strip, xor, parity:N, iris, digits (or mnist), digits:N, or a .csv/.json file", JSON.stringify(source)));
  if (options.testFraction <= 0) return { train: options.scale ? fitScaler(ds).apply(ds) : ds, test: undefined };
  const { train, test } = trainTestSplit(ds, options.testFraction, options.seed);
  if (!options.scale) return { train, test };
  const scaler = fitScaler(train);
  return { train: scaler.apply(train), test: scaler.apply(test) };
}
