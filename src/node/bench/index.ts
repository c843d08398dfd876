/**
 * Benchmarks across CPUs (Node only).
 * @module
 */
export * from "./machine.js";
export * from "./workload.js";
