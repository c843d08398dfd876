/**
 * Data sets for training: the {@link Dataset} type, CSV and JSON readers,
 * seeded splits and k-fold cross-validation, generated tasks (XOR, parity,
 * random associations) and input scaling. Browser-safe: no Node built-ins
 * (file loading and the packaged Iris and MNIST sets live in `ebbflow/node`).
 * @module
 */
export { createDataset, oneHot, subset, type DataBlock, type Dataset, type DatasetOptions } from "./dataset.js";
export { parseCsvDataset, type CsvDatasetOptions } from "./csv.js";
export { parseJsonDataset, datasetToJson } from "./json.js";
export { trainTestSplit, kFold, type DatasetSplit, type SplitOptions } from "./split.js";
export { xorDataset, parityDataset, randomAssociation, orientedBarsDataset, type BinaryCoding, type OrientedBarsOptions, type RandomAssociationOptions } from "./generators.js";
export { fitScaler, type Scaler, type ScalerKind } from "./scaling.js";
export { createLayeredDataset, layerValues, type LayerRows, type LayeredValues } from "./layered.js";
