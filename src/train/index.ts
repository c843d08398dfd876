/**
 * Data sets, metrics, schedules and the training loop.
 * @module
 */
export * from "./data/index.js";
export * from "./metrics.js";
export * from "./loss.js";
export * from "./schedule.js";
export * from "./loop.js";
export * from "./optimizer.js";
export * from "./state.js";
