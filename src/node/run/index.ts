/**
 * Run folders and the epoch driver shared by `ebbflow train` and the sweep runner.
 * @module
 */
export * from "./folder.js";
export * from "./results.js";
export * from "./identity.js";
export * from "./driver.js";
export * from "./history.js";
