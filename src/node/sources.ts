/**
 * Data sources by name (Node only): built-in sets, the open data sets, and CSV/JSON files.
 * @module
 */
import { EbbflowError, fail, issueText } from "../errors/index.js";
import { loadSplitByColumn, splitByIndexFiles, splitFirstLast, type FixedSplit } from "./fixed-split.js";
import type { Dataset } from "../train/data/index.js";
import { orientedBarsDataset, parityDataset, xorDataset, trainTestSplit, fitScaler } from "../train/data/index.js";
import { touchStripDataset } from "../demo/touchStrip.js";
import { textureMemoryDataset } from "../demo/textureMemory.js";
import { isSequenceDataset, splitSequences, withSequences } from "../train/data/sequences.js";
import { irisDataset, digitsDataset, loadDataset } from "./data.js";

/** CSV column groups per layer name (see `CsvDatasetOptions.targetLayers` and `inputLayers`). @category Data */
export interface LayerColumns {
  readonly targetLayers?: Readonly<Record<string, readonly (number | string)[]>> | undefined;
  readonly inputLayers?: Readonly<Record<string, readonly (number | string)[]>> | undefined;
}

/** The column groups that are given, as loader options. */
function layerColumns(o: LayerColumns): LayerColumns {
  return { ...(o.targetLayers !== undefined ? { targetLayers: o.targetLayers } : {}), ...(o.inputLayers !== undefined ? { inputLayers: o.inputLayers } : {}) };
}

/**
 * Resolves a data source and splits it: built-in sets and files; `touch-strip`, `xor`, `parity:N`, `oriented-bars[:N]`, `iris`, `digits[:N]`, or a `.csv`/`.json` path.
 * The split is seeded (`testFraction`) or fixed (`split`: index files, a CSV column of `train`/`test`, or the first and last rows).
 * @category Data
 */
export async function resolveData(
  source: string,
  options: { testFraction: number; seed: number | string; targetColumns?: readonly (number | string)[] | undefined; oneHot?: boolean | undefined; scale?: boolean | undefined; low?: number | undefined; split?: FixedSplit | undefined; sequenceColumn?: number | string | undefined } & LayerColumns,
): Promise<{ train: Dataset; test: Dataset | undefined }> {
  const split = options.split;
  if (split !== undefined) {
    // a fixed split (index files or a column) instead of the seeded one
    if (options.testFraction > 0) fail("invalid_config", "data.split", "no testFraction beside a fixed split", `testFraction ${options.testFraction}`);
    let parts: { train: Dataset; test: Dataset };
    if ("column" in split) {
      if (!/\.(csv|tsv)$/i.test(source)) fail("invalid_config", "data.split.column", "a CSV or TSV file as the data source (the column is one of its columns)", source);
      parts = await loadSplitByColumn(source, split.column, { ...(options.targetColumns !== undefined ? { targetColumns: options.targetColumns as readonly string[] } : {}), oneHot: options.oneHot, ...layerColumns(options) });
    } else if ("first" in split) parts = splitFirstLast(await loadSource(source, options), split.first, split.last);
    else parts = await splitByIndexFiles(await loadSource(source, options), split.train, split.test);
    if (!options.scale) return parts;
    const scaler = fitScaler(parts.train);
    return { train: scaler.apply(parts.train), test: scaler.apply(parts.test) };
  }
  const ds = await loadSource(source, options);
  // scaling keeps a sequence data set's sequences
  const scaled = (s: { apply(d: Dataset): Dataset }, d: Dataset): Dataset => (isSequenceDataset(d) ? withSequences(s.apply(d), d.sequenceStarts) : s.apply(d));
  if (options.testFraction <= 0) return { train: options.scale ? scaled(fitScaler(ds), ds) : ds, test: undefined };
  // sequences are held out whole
  const { train, test } = isSequenceDataset(ds) ? splitSequences(ds, options.testFraction, options.seed) : trainTestSplit(ds, options.testFraction, options.seed);
  if (!options.scale) return { train, test };
  const scaler = fitScaler(train);
  return { train: scaled(scaler, train), test: scaled(scaler, test) };
}

/** Loads a data source by name or path, whole. */
async function loadSource(source: string, options: { targetColumns?: readonly (number | string)[] | undefined; oneHot?: boolean | undefined; low?: number | undefined; sequenceColumn?: number | string | undefined } & LayerColumns): Promise<Dataset> {
  let ds: Dataset;
  const [name, arg] = source.split(":");
  if (name === "xor") ds = xorDataset();
  else if (name === "touch-strip") ds = touchStripDataset(options.low !== undefined ? { low: options.low, high: 1 - options.low } : {});
  else if (name === "parity") ds = parityDataset(Number(arg ?? 3));
  else if (name === "oriented-bars") ds = orientedBarsDataset(arg !== undefined ? { size: Number(arg) } : {});
  else if (name === "texture-memory") ds = textureMemorySource(source);
  else if (name === "iris") ds = await irisDataset();
  else if (name === "digits" || name === "mnist") ds = await digitsDataset(arg !== undefined ? { count: Number(arg) } : {});
  else if (/\.(csv|json)$/i.test(source)) ds = await loadDataset(source, { ...(options.targetColumns !== undefined ? { targetColumns: options.targetColumns as readonly string[] } : {}), oneHot: options.oneHot, ...layerColumns(options), ...(options.sequenceColumn !== undefined ? { sequenceColumn: options.sequenceColumn } : {}) });
  else throw new EbbflowError(issueText("unknown_name", "--data", "touch-strip, xor, parity:N, oriented-bars[:N], texture-memory[:lag[:low]], iris, digits (or mnist), digits:N, or a .csv/.json file", JSON.stringify(source)));
  return ds;
}

/** `texture-memory[:lag[:low]]`: 64 sequences of 8 patterns (seed 1), the report `lag` patterns back (default 2), "no" as `low` (default 0). */
function textureMemorySource(source: string): Dataset {
  const [, lagText, lowText] = source.split(":");
  const lag = lagText === undefined ? 2 : Number(lagText);
  const low = lowText === undefined ? 0 : Number(lowText);
  if (!Number.isInteger(lag) || lag < 0 || lag > 7) fail("invalid_config", "data.source", "texture-memory:LAG with an integer lag in [0, 7]", source);
  if (!(low >= 0 && low < 0.5)) fail("invalid_config", "data.source", "texture-memory:LAG:LOW with a low target in [0, 0.5)", source);
  return textureMemoryDataset({ sequences: 64, length: 8, seed: 1, lag, low });
}
