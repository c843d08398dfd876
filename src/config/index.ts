/**
 * Model files: declaration plus parameters, bit-exact encoding.
 * @module
 */
export * from "./encoding.js";
export * from "./modelFile.js";
export * from "./experiment.js";
