/**
 * The WebAssembly SIMD backend: the kernels of `generated/kernels.ts` (one wrapper per kernel,
 * generated from the declaration assembly/layout.mjs) on a memory laid out by `arena.ts`, with
 * ordinary arrays copied through scratch by `staging.ts`.
 * @module
 */
import type { Dtype, FloatArray } from "../../types/index.js";
import type { KernelBackend } from "../backend.js";
import type { ReadonlyFloatArray } from "../types.js";
import { createArena } from "./arena.js";
import { wasmKernels } from "./generated/kernels.js";
import type { WasmBuild, WasmModule } from "./platform.js";
import { createStaging } from "./staging.js";
import { createSparseKernels } from "./sparse.js";
import { createActiveKernels } from "./active.js";
import { createEnergyStep, createRateStep, createUnitFill } from "./units.js";

/**
 * Options of a WASM kernel backend (all sizes in bytes).
 * @category Kernels
 */
export interface WasmBackendOptions {
  /**
   * Room for `allocate` reserved when the memory is created (default 4 MiB).
   * Allocating past it grows the memory, which detaches every view handed out
   * before (see {@link WasmKernelBackend.refresh}).
   */
  readonly arenaBytes?: number | undefined;
  /**
   * Free space kept beyond the arena for the copies of the slow path (default
   * 4 MiB): calls whose ordinary (non-arena) arrays do not fit in the free
   * space run the TypeScript kernel instead. Growth keeps this much free.
   */
  readonly scratchBytes?: number | undefined;
  /** Upper bound of the memory (default: none, that is 4 GiB for 32-bit WebAssembly). */
  readonly maximumBytes?: number | undefined;
  /**
   * Relaxed-SIMD fused multiply-adds: `"auto"` (default) uses them when the
   * engine validates that build, `false` never, `true` requires them (loading
   * throws `unsupported` otherwise).
   */
  readonly relaxed?: boolean | "auto" | undefined;
  /**
   * Compute on an existing memory instead of creating one: the handle another
   * backend's {@link WasmKernelBackend.share} returned (possibly posted from
   * another thread). The new backend allocates from the same arena, reserves
   * its own gemm workspace and `scratchBytes` of slow-path scratch there, and
   * grows the same memory; `arenaBytes` and `maximumBytes` are ignored (the
   * memory's creator chose them).
   */
  readonly attach?: WasmSharedMemory | undefined;
}

/**
 * A WASM backend's memory as a handle for other threads: plain data that
 * survives `postMessage` (a shared `WebAssembly.Memory` is cloned by
 * reference, so both threads see the same bytes). Pass it as the option
 * `attach` of `loadWasmKernelsSync` in the worker.
 * @category Kernels
 */
export interface WasmSharedMemory {
  /** The shared `WebAssembly.Memory` the kernels run on. */
  readonly memory: object;
  /** The build of the backend that shared it (`"relaxed"` for relaxed SIMD). */
  readonly build: "simd" | "relaxed";
}

/**
 * A {@link KernelBackend} running the WebAssembly SIMD kernels on arrays in
 * its own WebAssembly memory.
 *
 * **Fast path:** every array argument is a view into this backend's memory
 * (returned by `allocate` or `refresh`, or a subarray of one) and all share
 * one dtype: the kernel receives byte offsets and runs on the data in place.
 *
 * **Slow path:** any other array (an ordinary typed array, a view into
 * another memory) is copied into scratch space beyond the arena before the
 * call, and the output copied back after it; arrays the kernel does not read
 * (the output when `beta = 0`, the inputs when `alpha = 0`) are not copied in.
 * Arguments of mixed dtypes, and calls whose copies do not fit in the free
 * memory, run the TypeScript kernel. `copy` and `fill` on ordinary arrays
 * always run the TypeScript kernel (a copy through scratch would only add
 * work).
 *
 * **Growth:** the memory grows only inside `allocate` (when the arena is
 * full), `reserve` and `share` (here or in a backend attached to the same
 * memory). The memory is shared, so growth detaches nothing: views handed
 * out before keep working, `generation` counts the growths this backend has
 * seen and `refresh` returns a view on the current buffer. Kernels given a
 * detached view (possible only with an unshared memory) throw
 * `invalid_parameter` naming the argument instead of computing on nothing.
 *
 * **Threads:** `share()` returns a handle to post to a worker; there
 * `loadWasmKernelsSync({ attach: handle })` runs the kernels on the same
 * memory, and `arrayAt` gives that thread its views of arrays allocated here.
 * Each backend has its own gemm workspace and scratch, so backends on
 * different threads may compute at the same time on disjoint outputs.
 * @category Kernels
 */
export interface WasmKernelBackend extends KernelBackend {
  /** `"wasm-relaxed-simd"` when the relaxed-SIMD build runs, else `"wasm-simd"`. */
  readonly name: "wasm-simd" | "wasm-relaxed-simd";
  /** Number of times the memory has grown; views from an earlier generation are detached. */
  readonly generation: number;
  /** Bytes handed out by `allocate` so far, by every backend on this memory (with alignment padding and the workspaces of attached backends). */
  readonly arenaBytes: number;
  /** Bytes between the end of the arena and the end of the memory. */
  readonly freeBytes: number;
  /**
   * Grows the memory now, if needed, so that `bytes` more can be allocated
   * without growth (and the scratch room stays free).
   * @throws {@link EbbflowError} `invalid_parameter` (path `bytes`) for a
   * negative or non-integer size, `unsupported` when the memory cannot grow.
   */
  reserve(bytes: number): void;
  /** Whether `array` lies in this backend's current memory (a live arena view). */
  isArenaView(array: ReadonlyFloatArray): boolean;
  /**
   * A view of the same allocation in the current memory: after growth, the
   * replacement of a view returned by `allocate` or `refresh` (the data is
   * preserved). A live view is returned as is.
   * @throws {@link EbbflowError} `invalid_parameter` (path `view`) for an
   * array that did not come from `allocate`/`refresh` of this backend.
   */
  refresh<T extends FloatArray>(view: T): T;
  /**
   * The handle of this backend's memory, to attach backends on other threads
   * to it (option `attach`). From the first call on, this backend's slow-path
   * scratch lives in a region of the arena reserved for it (`scratchBytes`),
   * so that allocations by the other backends never meet its scratch copies.
   * @throws {@link EbbflowError} `unsupported` when the memory cannot grow to
   * hold that region.
   */
  share(): WasmSharedMemory;
  /**
   * A view of `length` elements at `byteOffset` of this memory: how another
   * thread's backend sees an array allocated on this memory (its
   * `byteOffset`, `length` and dtype posted to it). The view is an arena view
   * of this backend (fast path, `refresh` works on it).
   * @throws {@link EbbflowError} `invalid_parameter` (path `byteOffset`) when
   * the range is not aligned to the element size or not inside the arena
   * handed out so far; (paths `dtype`, `n`) as `allocate`.
   */
  arrayAt(dtype: Dtype, byteOffset: number, length: number): FloatArray;
}

/** Creates the backend on a compiled build (the loader picks the build). */
export function createWasmBackend(module: WasmModule, build: WasmBuild, options: WasmBackendOptions = {}): WasmKernelBackend {
  const arena = createArena(module, build, options);
  const kernels = wasmKernels(arena.X, createStaging(arena), arena.work);
  const { own } = arena;
  const backend: WasmKernelBackend = {
    name: build === "relaxed" ? "wasm-relaxed-simd" : "wasm-simd",
    get generation() {
      return arena.generation;
    },
    get arenaBytes() {
      return arena.arenaBytes;
    },
    get freeBytes() {
      return arena.freeBytes;
    },
    allocate: arena.allocate,
    reserve: arena.reserve,
    isArenaView: (array: ReadonlyFloatArray): boolean => own(array.buffer),
    refresh: arena.refresh,
    share: arena.share,
    arrayAt: arena.arrayAt,
    ...kernels,
    sumSquares: (a: ReadonlyFloatArray, n: number = a.length): number => kernels.dot(a, a, n),
    unitFill: createUnitFill(arena.X, own),
    rateStep: createRateStep(arena.X, own),
    energyStep: createEnergyStep(arena.X, own),
    sparse: createSparseKernels(arena.X, own, arena.allocate),
    active: createActiveKernels(arena.X, own, arena.allocate, kernels.gemm),
  };
  return backend;
}
