/**
 * Benchmarks across CPUs (Node only).
 * @module
 */
export * from "./machine.js";
export { benchNetwork, formatBench, runBench, type BenchFigure, type BenchOptions, type BenchReport, type KernelFigure } from "./workload.js";
export { describePeerWorkload, peerWorkload, type PeerWorkload } from "./peer-workload.js";
