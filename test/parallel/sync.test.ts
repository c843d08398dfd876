import { describe, expect, it } from "vitest";
import { DONE, JOB, LAYOUT, MODE, SLICES, controlBytes, controlViews, readJob } from "../../src/node/parallel/sync.js";

// The control words are rewritten by the main thread for job N + 1 as soon as job N is done. A worker
// that sat out job N (fewer slices than workers) and wakes late must not read job N + 1's words as job
// N's: it would then run job N + 1 twice (seen in CI as a wrong update and as a hang). These tests put
// the words in the states the main thread leaves them in and check what a worker reads.
function control(workers: number) {
  return controlViews(new SharedArrayBuffer(controlBytes(workers)), workers);
}

describe("worker job words", () => {
  it("while a job runs, a worker reads that job's words", () => {
    const { words, scale } = control(2);
    Atomics.store(words, SLICES, 1);
    Atomics.store(words, LAYOUT, 7);
    Atomics.store(words, MODE, 2);
    scale[0] = 0.25;
    Atomics.store(words, JOB, 5);
    Atomics.store(words, DONE, 4);
    expect(readJob(words, scale, 5)).toEqual({ slices: 1, layout: 7, mode: 2, scale: 0.25 });
  });

  it("once the job is done, its words are not taken for it, even before the next job number is published", () => {
    const { words, scale } = control(2);
    // job 5 (one slice) is done; the main thread has written job 6's words but not yet its number
    Atomics.store(words, JOB, 5);
    Atomics.store(words, DONE, 5);
    Atomics.store(words, SLICES, 2);
    Atomics.store(words, LAYOUT, 8);
    expect(readJob(words, scale, 5)).toBeNull();
    // and once job 6 is published, a worker that saw 6 reads it
    Atomics.store(words, JOB, 6);
    expect(readJob(words, scale, 6)).toEqual({ slices: 2, layout: 8, mode: 0, scale: 0 });
  });
});
