/**
 * Node-only parts of ebbflow (files). Import from `ebbflow/node`.
 * @module
 */
export * from "./files.js";
export * from "./checkpoint.js";
export * from "./data.js";
export * from "./plot.js";
export * from "./parallel/index.js";
export * from "./bench/index.js";
export * from "./sweep/index.js";
export * from "./sources.js";
export * from "./export.js";
export { loadPlugins, resolvePlugin } from "./plugins.js";
export * from "./fixed-split.js";
