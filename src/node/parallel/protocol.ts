/**
 * What the main thread and the training workers exchange. Each worker runs one long task (its job loop)
 * for the life of a `ParallelRule`; batches are signalled through shared memory (see sync.ts), and
 * the few things that are not numbers (batch layouts, failures) go through a MessagePort per worker.
 * @module
 */
import type { MessagePort } from "node:worker_threads";
import type { Issue } from "../../errors/index.js";
import type { NetworkSpec } from "../../network/spec.js";
import type { AnyRuleConfig } from "../../rules/registry.js";
import type { WasmSharedMemory } from "../../kernels/wasm/wasm-backend.js";

/**
 * Where an array lives in shared memory: a SharedArrayBuffer, an offset and a length; without `buffer`
 * the array lies in the session's shared WebAssembly memory (at `byteOffset` of it).
 */
export interface SharedArray {
  readonly buffer?: SharedArrayBuffer | undefined;
  readonly byteOffset: number;
  readonly length: number;
}

/** What a worker needs to build its copy of the network: sent once, with its job loop. */
export interface SessionSetup {
  /** The network's declaration, without explicit weight values (the parameters are shared). */
  readonly spec: NetworkSpec;
  readonly rule: AnyRuleConfig;
  /** Modules defining rules of the user's own (the registry's plugins), imported by every worker. */
  readonly plugins: readonly string[];
  /** "wasm": the worker attaches WebAssembly kernels to `memory`, where every shared array lives. */
  readonly kernels: "typescript" | "wasm";
  readonly memory?: WasmSharedMemory | undefined;
  /** Parameter arrays in allocation order (see `parameterBuffers`), of the network's dtype. */
  readonly parameters: readonly SharedArray[];
  /** Slice split: per worker, its change arrays in the same order as the parameters. */
  readonly slots: readonly (readonly SharedArray[])[];
  /** Row split into a change (computeDelta): the change arrays, weights per connection and biases per layer. */
  readonly delta: { readonly weights: readonly SharedArray[]; readonly biases: readonly SharedArray[] };
  /** Number of workers (sizes the control array). */
  readonly workers: number;
}

/** Shared arrays of one batch size (the network's dtype unless said otherwise). */
export interface BatchLayout {
  /** Identifies the layout in the control word LAYOUT. */
  readonly id: number;
  /** Patterns in the batch (B). */
  readonly batch: number;
  /** Slices the batch is split into: min(workers, B); worker i takes slice i. */
  readonly slices: number;
  /** Per layer index: an input layer's values, B×m (null for the other layers). */
  readonly inputs: readonly (SharedArray | null)[];
  /** Per layer index: an output layer's targets, B×n, a row of NaN where the pattern's targets are not observed (null for the other layers). */
  readonly targets: readonly (SharedArray | null)[];
  /** Row split only: `[phase][layer]` activities B×n of sending layers (else null). */
  readonly byPattern: readonly (readonly (SharedArray | null)[])[];
  /** Row split only: `[phase][layer]` activities n×B of every non-input layer (else null). */
  readonly byUnit: readonly (readonly (SharedArray | null)[])[];
  /** Row split only: float64 maxima per slice, for the finiteness proof. */
  readonly stats: SharedArrayBuffer;
}

/** The one task of a worker: its job loop, until the control word STOP is set. */
export interface LoopTask {
  readonly setup: SessionSetup;
  /** This worker's index: it takes slice `worker` of every batch. */
  readonly worker: number;
  /** The control array (see sync.ts). */
  readonly control: SharedArrayBuffer;
  /** Layouts arrive here; failures leave from here. */
  readonly port: MessagePort;
}

/** Main thread to worker: a new batch layout (posted before the first job that uses it). */
export interface LayoutMessage {
  readonly kind: "layout";
  readonly layout: BatchLayout;
}

/** Worker to main thread: why job `job` failed (the issues of an EbbflowError, or another error's text). */
export interface FailureMessage {
  readonly kind: "failure";
  readonly job: number;
  readonly issues?: readonly Issue[] | undefined;
  readonly message?: string | undefined;
}
