/**
 * A benchmark runs each precision in its own worker thread (one kernel seeing both array types slows
 * down by 20–40% in V8); this is the main-thread side of such a worker: start it, then ask for rows.
 */
import { Worker } from "node:worker_threads";
import type { Dtype } from "../src/index.js";

export class PrecisionWorker<Row, Hello> {
  private constructor(private readonly worker: Worker) {}

  /** Starts `script` (a module that checks `workerData.tag`) for `dtype`; resolves with its first message. */
  static async start<Row, Hello>(script: URL, tag: string, dtype: Dtype): Promise<{ runner: PrecisionWorker<Row, Hello>; hello: Hello }> {
    const runner = new PrecisionWorker<Row, Hello>(new Worker(script, { workerData: { tag, dtype } }));
    const hello = await runner.next<Hello>();
    return { runner, hello };
  }

  private next<R>(): Promise<R> {
    return new Promise((resolve, reject) => {
      const onError = (e: Error) => reject(e);
      this.worker.once("error", onError);
      this.worker.once("message", (value: R) => {
        this.worker.off("error", onError);
        resolve(value);
      });
    });
  }

  /** Runs case `index` in the worker and resolves with its row. */
  run(index: number): Promise<Row> {
    const reply = this.next<Row>();
    this.worker.postMessage(index);
    return reply;
  }

  stop(): Promise<number> {
    return this.worker.terminate();
  }
}
