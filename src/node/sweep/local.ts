/**
 * The local sweep runner: every unfinished run of a plan on a pool of worker threads (piscina), one run
 * per task, or one after another in this process. Finished runs are skipped and part-way runs resume from
 * their last checkpoint, so running the same sweep again after a crash or Ctrl-C loses nothing.
 * @module
 */
import { fileURLToPath } from "node:url";
import { Piscina } from "piscina";
import { requireInteger } from "../../errors/index.js";
import type { SweepPlan } from "../../sweep/expand.js";
import { executeRun, type RunReport, type RunTask } from "./execute.js";
import { readRunProgress, sweepFolder, writeSweepPlan } from "./files.js";

/** Options of {@link runSweepLocally}. @category Sweeps */
export interface LocalSweepOptions {
  /** The sweep folder (created). */
  readonly out: string;
  /** Worker threads (>= 1), or 0 to run one after another in this process. */
  readonly workers: number;
  /** Called after each run. */
  readonly onRunDone?: ((report: RunReport, done: number, total: number) => void) | undefined;
  /**
   * The compiled worker script (default: `worker.js` beside this module; when this module runs from its
   * TypeScript source, as under a test runner, the compiled `dist/node/sweep/worker.js`).
   */
  readonly workerFile?: string | URL | undefined;
}

/** Report of a local sweep. @category Sweeps */
export interface LocalSweepReport {
  readonly out: string;
  readonly runs: readonly RunReport[];
  readonly finished: number;
  readonly skipped: number;
  /** Runs another process was running (their folders were locked): left to it. */
  readonly busy: number;
  readonly failed: number;
}

/**
 * The compiled worker script: `./worker.js` beside this module, or, when this module is the TypeScript
 * source (Node 20 cannot run `.ts` workers), the compiled copy under `dist/`.
 * @returns The worker file's URL.
 * @category Sweeps
 */
export function defaultWorkerFile(): URL {
  const here = new URL(import.meta.url);
  return here.pathname.endsWith(".ts") ? new URL("../../../dist/node/sweep/worker.js", here) : new URL("./worker.js", here);
}

/**
 * Runs a sweep's unfinished runs locally (see the module notes). The plan is saved as `OUT/runs.json`.
 * @param plan - The sweep plan (from `loadSweepFile`).
 * @param options - Output folder, number of workers, progress callback.
 * @returns Every run's report, in index order.
 * @throws `EbbflowError` `invalid_parameter` (`workers`); `invalid_config` when the folder holds another sweep.
 * @category Sweeps
 */
export async function runSweepLocally(plan: SweepPlan, options: LocalSweepOptions): Promise<LocalSweepReport> {
  const workers = requireInteger("workers", options.workers, 0);
  const out = sweepFolder(options.out).dir;
  await writeSweepPlan(out, plan);
  const reports: RunReport[] = [];
  const pending: RunTask[] = [];
  for (const run of plan.runs) {
    const progress = await readRunProgress(out, run);
    if (progress.finished) reports.push({ index: run.index, id: run.id, status: "skipped", resumedFrom: 0, epochs: progress.epochs, stopped: progress.results?.end?.stopped });
    else pending.push({ dir: out, run, baseDir: plan.baseDir ?? process.cwd(), checkpointEvery: plan.checkpointEvery, plugins: plan.plugins });
  }
  const total = plan.runs.length;
  const note = (o: RunReport) => {
    reports.push(o);
    options.onRunDone?.(o, reports.length, total);
  };
  if (pending.length > 0 && workers === 0) {
    for (const task of pending) note(await executeRun(task));
  } else if (pending.length > 0) {
    const file = options.workerFile ?? defaultWorkerFile();
    const threads = Math.min(workers, pending.length);
    const pool = new Piscina<RunTask, RunReport>({ filename: typeof file === "string" ? file : fileURLToPath(file), minThreads: threads, maxThreads: threads, concurrentTasksPerWorker: 1, idleTimeout: 1000 });
    try {
      // a worker thread that dies (rather than a run that fails, which is returned) fails its run, not the sweep
      const lost = (task: RunTask, e: unknown): RunReport => ({
        index: task.run.index,
        id: task.run.id,
        status: "failed",
        resumedFrom: 0,
        epochs: 0,
        error: { code: "error", path: "", message: `worker thread: ${(e as Error)?.message ?? String(e)}`, at: new Date().toISOString() },
      });
      await Promise.all(pending.map((task) => pool.run(task).then(note, (e: unknown) => note(lost(task, e)))));
    } finally {
      await pool.destroy();
    }
  }
  reports.sort((a, b) => a.index - b.index);
  return {
    out,
    runs: reports,
    finished: reports.filter((o) => o.status === "finished").length,
    skipped: reports.filter((o) => o.status === "skipped").length,
    busy: reports.filter((o) => o.status === "busy").length,
    failed: reports.filter((o) => o.status === "failed").length,
  };
}
