/**
 * Running sweeps (Node only): sweep files on disk, one run executed with checkpoints, the local runner on
 * worker threads, the Slurm runner (one job array, status, resubmission) and summaries of a sweep folder.
 * @module
 */
export * from "./files.js";
export * from "./execute.js";
export * from "./local.js";
export * from "./slurm.js";
export * from "./summarize.js";
