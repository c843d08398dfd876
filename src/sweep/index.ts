/**
 * Sweeps over seeds and configurations: the sweep file, its expansion into runs with stable ids, and
 * summaries across seeds (mean, standard deviation, Student-t confidence intervals). Pure JavaScript, no
 * Node built-ins; running sweeps (worker threads, a Slurm cluster) lives in `ebbflow/node`.
 * @module
 */
export * from "./hash.js";
export * from "./paths.js";
export * from "./schema.js";
export * from "./expand.js";
export * from "./stats.js";
export * from "./summary.js";
export * from "./plan.js";
