/**
 * Signalling between the main thread and the training workers through one shared Int32Array, so that
 * a batch costs no message at all: the main thread publishes a job (its number and parameters) and wakes
 * the workers; each worker settles its slice, meets the others at a barrier, writes its rows, and the
 * last one to finish wakes the main thread (which waits with `Atomics.waitAsync`, never blocking its
 * event loop). Workers spin briefly before sleeping: the next job, and the other slices at the barrier,
 * usually come within a fraction of a millisecond, and waking a sleeping thread costs about a tenth of a
 * millisecond on common systems.
 * @module
 */

/** Word indices of the control array. */
export const JOB = 0;
export const STOP = 1;
export const READY = 2;
export const DONE = 3;
export const FINISHED = 4;
export const SLICES = 5;
export const LAYOUT = 6;
export const MODE = 7;
export const ARRIVED = 8;
export const ABORTED = 9;
/** First of the per-worker status words. */
export const STATUS = 10;

/** Job modes (word MODE). */
export const MODE_ROWS_PARAMETERS = 0;
export const MODE_ROWS_DELTA = 1;
export const MODE_SLICES = 2;

/** Worker statuses (words STATUS + worker). */
export const PENDING = 0;
export const DONE_OK = 1;
export const REFUSED = 2;
export const ABORTED_JOB = 3;
export const FAILED = 4;

/** Added to the arrival count by an abort, so that a worker about to sleep on the old count wakes at once. */
const ABORT_JUMP = 1 << 20;
/** How long a worker spins before sleeping (ms). */
const SPIN_MS = 0.5;
/**
 * Longest sleep before a waiter looks at the word again (ms). Every wait is re-checked at least this
 * often, so a wake-up that is lost (a notify the engine does not deliver) costs at most this long
 * instead of hanging the batch. (One CI run timed out in a multi-worker test while these waits had no
 * bound; the cause was not reproduced.)
 */
const RECHECK_MS = 20;

/** Bytes of the control array for `workers` workers, with the job's scale (a float64) after the words. */
export function controlBytes(workers: number): number {
  return 8 * Math.ceil(((STATUS + workers) * 4) / 8) + 8;
}

/** Views of a control buffer: the words, and the float64 scale of the current job. */
export function controlViews(buffer: SharedArrayBuffer, workers: number): { words: Int32Array; scale: Float64Array } {
  const wordsBytes = 8 * Math.ceil(((STATUS + workers) * 4) / 8);
  return { words: new Int32Array(buffer, 0, STATUS + workers), scale: new Float64Array(buffer, wordsBytes, 1) };
}

/** Waits until `words[index]` differs from `seen` (spinning first); returns the new value. */
export function waitForChange(words: Int32Array, index: number, seen: number): number {
  const until = performance.now() + SPIN_MS;
  do {
    for (let i = 0; i < 256; i++) {
      const v = Atomics.load(words, index);
      if (v !== seen) return v;
    }
  } while (performance.now() < until);
  for (;;) {
    Atomics.wait(words, index, seen, RECHECK_MS);
    const v = Atomics.load(words, index);
    if (v !== seen) return v;
  }
}

/** The words of one job as a worker reads them. */
export interface JobWords {
  readonly slices: number;
  readonly layout: number;
  readonly mode: number;
  readonly scale: number;
}

/**
 * The words of job `job` (the value a worker last saw in JOB), or null when that job is already done:
 * the main thread rewrites the words for the next job once a job is done, so words read after that
 * belong to the next job. They are read first and DONE last: if DONE was not yet `job` then, they were
 * read while the job ran and are its own. (A worker that sits out a job, having fewer slices than
 * workers, may wake only after the next job's words were written; taking them for this job would make
 * it run the next job twice.)
 */
export function readJob(words: Int32Array, scale: Float64Array, job: number): JobWords | null {
  const slices = Atomics.load(words, SLICES);
  const layout = Atomics.load(words, LAYOUT);
  const mode = Atomics.load(words, MODE);
  const s = scale[0] as number;
  if (Atomics.load(words, DONE) === job) return null;
  return { slices, layout, mode, scale: s };
}

/** Releases every worker waiting in {@link arrive}: they return false. Safe from any thread, at any time. */
export function abortBatch(words: Int32Array): void {
  Atomics.store(words, ABORTED, 1);
  Atomics.add(words, ARRIVED, ABORT_JUMP);
  Atomics.notify(words, ARRIVED);
}

/**
 * Counts this worker in and waits until `parties` workers have arrived. Returns true when all arrived,
 * false when the job was aborted (a worker failed).
 */
export function arrive(words: Int32Array, parties: number): boolean {
  let seen = Atomics.add(words, ARRIVED, 1) + 1;
  if (seen === parties) {
    Atomics.notify(words, ARRIVED);
    return Atomics.load(words, ABORTED) === 0;
  }
  const until = performance.now() + SPIN_MS;
  while (seen < parties && performance.now() < until) {
    for (let i = 0; i < 256 && seen < parties; i++) seen = Atomics.load(words, ARRIVED);
  }
  for (;;) {
    if (Atomics.load(words, ABORTED) !== 0) return false;
    if (seen >= parties) return true;
    Atomics.wait(words, ARRIVED, seen, RECHECK_MS);
    seen = Atomics.load(words, ARRIVED);
  }
}

/** Marks this worker's job finished; the last of `parties` wakes the main thread. */
export function finish(words: Int32Array, worker: number, status: number, job: number, parties: number): void {
  Atomics.store(words, STATUS + worker, status);
  if (Atomics.add(words, FINISHED, 1) + 1 === parties) {
    Atomics.store(words, DONE, job);
    Atomics.notify(words, DONE);
  }
}

interface AtomicsWithWaitAsync {
  waitAsync(array: Int32Array, index: number, value: number, timeout?: number): { async: false; value: string } | { async: true; value: Promise<string> };
}

/**
 * Resolves when `words[index]` equals `target` (the main thread's side: `Atomics.waitAsync`, so the event
 * loop keeps running), or rejects with `failed`'s reason.
 */
export async function whenEqual(words: Int32Array, index: number, target: number, failed: Promise<never>): Promise<void> {
  const A = Atomics as unknown as AtomicsWithWaitAsync;
  for (;;) {
    const v = Atomics.load(words, index);
    if (v === target) return;
    const w = A.waitAsync(words, index, v, RECHECK_MS);
    if (w.async) await Promise.race([w.value, failed]);
  }
}
