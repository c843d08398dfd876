/**
 * Multi-core training on worker threads.
 * @module
 */
export { ParallelRule } from "./pool.js";
