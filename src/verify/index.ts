/**
 * Exact gradients and gradient-agreement reports.
 * @module
 */
export * from "./linalg.js";
export * from "./gradient.js";
export * from "./agreement.js";
