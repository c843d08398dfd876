/**
 * Layers, connections, the settling engine and phases.
 * @module
 */
export * from "./spec.js";
export * from "./network.js";
export * from "./settle.js";
export * from "./clip.js";
