/**
 * Messages between the main thread and the training workers.
 * @module
 */
import type { NetworkSpec } from "../../network/spec.js";
import type { RuleConfig } from "../../rules/config.js";

/** One slice of a mini-batch for one worker. */
export interface SliceTask {
  /** Identifies the network and rule (a worker builds them once per session). */
  readonly session: number;
  readonly spec: NetworkSpec;
  readonly rule: RuleConfig;
  /** Kernels the worker computes with: "wasm" builds the network in the worker's own WebAssembly memory and copies the shared parameters in once per batch. */
  readonly kernels: "typescript" | "wasm";
  /** Parameter arrays' buffers in allocation order (shared, never copied). */
  readonly parameters: readonly SharedArrayBuffer[];
  /** Per slice, the change arrays' buffers in the same order as the parameters (shared). */
  readonly deltas: readonly SharedArrayBuffer[];
  /** Inputs and targets of the whole batch (shared), B×N each, row = pattern. */
  readonly inputs: SharedArrayBuffer;
  readonly targets: SharedArrayBuffer;
  readonly inputName: string;
  readonly outputName: string;
  readonly inputSize: number;
  readonly targetSize: number;
  /** Rows [start, start + count) of the batch belong to this slice, of `total` rows. */
  readonly start: number;
  readonly count: number;
  readonly total: number;
}
