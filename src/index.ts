/**
 * ebbflow: biologically constrained, error-driven learning in settling
 * bidirectional networks, with local rules verified against exact gradients.
 * @module
 */
export * from "./errors/index.js";
export * from "./limits/index.js";
export * from "./types/index.js";
export * from "./random/index.js";
export * from "./units/index.js";
export * from "./traces/index.js";
export * from "./curves/index.js";
export * from "./kernels/index.js";
export * from "./network/index.js";
export * from "./config/index.js";
export * from "./rules/index.js";
export * from "./verify/index.js";
export * from "./train/index.js";
export { touchStripDataset, TOUCH_PATTERNS } from "./demo/touchStrip.js";
export * from "./kernels/wasm/index.js";
export * from "./sweep/index.js";
