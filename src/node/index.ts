/**
 * Node-only parts of ebbflow (files). Import from `ebbflow/node`.
 * @module
 */
export * from "./files.js";
export * from "./checkpoint.js";
export { runFolderFiles, ensureFolder, acquireRunLock, cleanTemporaryFiles, claimRunFolder, isFolderBusy, inspectResults, configHashOf, configDifferences, findRunStart, restoreTrainer, driveRun, type RunFolderFiles, type RunLock, type RunFolderMode, type ResultsInspection, type ConfigChange, type RunStart, type RunStartOptions, type DriveOptions, type DriveResult, type HistoryReference } from "./run/index.js";
export { ioErrorText, ioFail } from "./io.js";
export * from "./data.js";
export * from "./plot.js";
export * from "./parallel/index.js";
export * from "./bench/index.js";
export * from "./sweep/index.js";
export * from "./sources.js";
export * from "./export.js";
export { loadPlugins, resolvePlugin } from "./plugins.js";
export * from "./fixed-split.js";
export * from "./record.js";
