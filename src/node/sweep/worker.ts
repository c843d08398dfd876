/**
 * The worker-thread entry of the local sweep runner: one task = one run. Piscina loads the compiled file
 * (`dist/node/sweep/worker.js`) in each thread and calls the default export.
 * @module
 */
import { executeRun, type RunReport, type RunTask } from "./execute.js";

/**
 * Executes one run in a worker thread.
 * @param task - The run to execute.
 * @returns Its report (errors are returned, not thrown).
 * @category Sweeps
 */
export default async function runInWorker(task: RunTask): Promise<RunReport> {
  return executeRun(task);
}
