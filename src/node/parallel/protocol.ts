/**
 * Messages between the main thread and the training workers.
 * @module
 */
import type { NetworkSpec } from "../../network/spec.js";
import type { RuleConfig } from "../../rules/config.js";

/** Where an array lives in shared memory: a buffer (a SharedArrayBuffer or a shared WebAssembly memory's buffer), an offset and a length. */
export interface SharedArray {
  readonly buffer: SharedArrayBuffer;
  readonly byteOffset: number;
  readonly length: number;
}

/** One slice of a mini-batch for one worker. */
export interface SliceTask {
  /** Identifies the network and rule (a worker builds them once per session). */
  readonly session: number;
  readonly spec: NetworkSpec;
  readonly rule: RuleConfig;
  /** Kernels the worker computes with: "wasm" builds the network in the worker's own WebAssembly memory and copies the shared parameters in once per batch. */
  readonly kernels: "typescript" | "wasm";
  /** Parameter arrays in allocation order (shared, never copied), of the network's dtype. */
  readonly parameters: readonly SharedArray[];
  /** This slice's change arrays in the same order as the parameters (shared, network's dtype): the slice's mean change. */
  readonly deltas: readonly SharedArray[];
  /** Inputs and targets of the whole batch (shared), B×N each, row = pattern. */
  readonly inputs: SharedArrayBuffer;
  readonly targets: SharedArrayBuffer;
  readonly inputName: string;
  readonly outputName: string;
  readonly inputSize: number;
  readonly targetSize: number;
  /** Index of this slice (its change arrays are `deltas`). */
  readonly slice: number;
  /** Rows [start, start + count) of the batch belong to this slice, of `total` rows. */
  readonly start: number;
  readonly count: number;
  readonly total: number;
}
