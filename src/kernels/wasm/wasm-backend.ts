/**
 * The WebAssembly SIMD backend: one WebAssembly memory holding a packing
 * workspace, an arena of arrays handed out by `allocate`, and free space used
 * as scratch by calls with ordinary arrays.
 *
 * Memory layout (byte offsets):
 * ```
 * [0, 64)                      header (32-bit words): a tag, the arena's end
 *                              `top` (advanced atomically), the arena's start,
 *                              the page limit and the constant table's place
 * [64, work)                   table of vector constants read by the kernels
 *                              (written once by the backend that creates the
 *                              memory, read-only afterwards)
 * [work, work + workspace)      gemm packing workspace of the creating backend
 * [arenaStart, top)            arena: allocate() bumps `top`, 16-byte aligned
 * [top, memory size)           free: room for allocate without growth, and
 *                              scratch of the creating backend's slow path
 *                              during one call (until it calls share())
 * ```
 *
 * Several backends, on several threads, can compute on one memory: `share()`
 * returns a handle to post to a worker, and a backend created there with the
 * option `attach` instantiates the kernels on the same memory. Every backend
 * on the memory allocates from the one arena (the header's `top` is advanced
 * with a compare-exchange, so concurrent allocations never overlap), and each
 * keeps its own gemm workspace and slow-path scratch inside the arena (an
 * attached backend reserves both when it is created; the creating backend
 * moves its scratch there when it calls `share()`).
 * @module
 */
import { EbbflowError, fail, issueText, requireInteger } from "../../errors/index.js";
import type { Dtype, FloatArray } from "../../types/index.js";
import * as ts from "../index.js";
import type { ReadonlyFloatArray } from "../types.js";
import { checkAllocation, type KernelBackend } from "./backend.js";
import { MAX_PAGES, PAGE_BYTES, createMemory, instantiate, isSharedBuffer, type WasmBuild, type WasmMemory, type WasmModule } from "./platform.js";
import { createRateStep, createUnitFill } from "./units.js";

/** The exports of assembly/index.ts (byte offsets and element counts). */
interface KernelExports {
  gemmWorkspaceBytes(): number;
  constantTableAddress(): number;
  constantTableBytes(): number;
  writeConstantTable(): void;
  relaxed(): number;
  gemmF32(c: number, a: number, b: number, m: number, n: number, k: number, tA: number, tB: number, alpha: number, beta: number, work: number): void;
  gemmF64(c: number, a: number, b: number, m: number, n: number, k: number, tA: number, tB: number, alpha: number, beta: number, work: number): void;
  gemvF32(y: number, a: number, x: number, rows: number, cols: number, trans: number, alpha: number, beta: number): void;
  gemvF64(y: number, a: number, x: number, rows: number, cols: number, trans: number, alpha: number, beta: number): void;
  gerF32(out: number, x: number, y: number, m: number, n: number, alpha: number): void;
  gerF64(out: number, x: number, y: number, m: number, n: number, alpha: number): void;
  binaryF32(op: number, out: number, a: number, b: number, n: number): void;
  binaryF64(op: number, out: number, a: number, b: number, n: number): void;
  axpyF32(out: number, a: number, alpha: number, n: number): void;
  axpyF64(out: number, a: number, alpha: number, n: number): void;
  axpbyF32(out: number, a: number, b: number, alpha: number, beta: number, n: number): void;
  axpbyF64(out: number, a: number, b: number, alpha: number, beta: number, n: number): void;
  scaleF32(out: number, a: number, alpha: number, n: number): void;
  scaleF64(out: number, a: number, alpha: number, n: number): void;
  fillF32(out: number, value: number, n: number): void;
  fillF64(out: number, value: number, n: number): void;
  copyBytes(out: number, a: number, bytes: number): void;
  maxAbsDiffF32(a: number, b: number, n: number): number;
  maxAbsDiffF64(a: number, b: number, n: number): number;
  maxAbsF32(a: number, n: number): number;
  maxAbsF64(a: number, n: number): number;
  allFiniteF32(a: number, n: number): number;
  allFiniteF64(a: number, n: number): number;
  dotF32(a: number, b: number, n: number): number;
  dotF64(a: number, b: number, n: number): number;
  addRowVectorF32(out: number, bias: number, rows: number, cols: number): void;
  addRowVectorF64(out: number, bias: number, rows: number, cols: number): void;
  sumRowsF32(out: number, a: number, rows: number, cols: number, alpha: number, beta: number): void;
  sumRowsF64(out: number, a: number, rows: number, cols: number, alpha: number, beta: number): void;
  unitFillF32(code: number, gain: number, offset: number, out: number, x: number, n: number): void;
  unitFillF64(code: number, gain: number, offset: number, out: number, x: number, n: number): void;
  rateStepF32(code: number, gain: number, offset: number, x: number, nx: number, t: number, beta: number, dt: number, bound: number, n: number): number;
  rateStepF64(code: number, gain: number, offset: number, x: number, nx: number, t: number, beta: number, dt: number, bound: number, n: number): number;
}

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

/** Where an allocation lives, to re-create its view after growth. */
interface Allocation {
  readonly byteOffset: number;
  readonly length: number;
  readonly dtype: Dtype;
}

const GUARD_BYTES = 64;
const ALIGN = 16;
const MIB = 1 << 20;

function alignUp(x: number): number {
  return Math.ceil(x / ALIGN) * ALIGN;
}

function sizeOption(path: string, v: number | undefined, dflt: number): number {
  if (v === undefined) return dflt;
  return requireInteger(path, v, 0);
}

/** Words of the header in bytes [0, GUARD_BYTES), as a Uint32Array. */
const HEADER_TAG = 0;
const HEADER_TOP = 1;
const HEADER_ARENA = 2;
const HEADER_PAGES = 3;
const HEADER_TABLE = 4;
const HEADER_TABLE_BYTES = 5;
/** "ebb1": marks a memory laid out by this backend (and the header's version). */
const TAG = 0x65626231;

/** The memory of an `attach` handle, checked: a shared WebAssembly memory laid out by this backend. */
function attachedMemory(handle: WasmSharedMemory): WasmMemory {
  const m = (handle as { memory?: unknown } | null | undefined)?.memory as WasmMemory | undefined;
  const b: unknown = m !== null && typeof m === "object" ? (m as { buffer?: unknown }).buffer : undefined;
  if (!isSharedBuffer(b) || (b as ArrayBufferLike).byteLength < GUARD_BYTES || new Uint32Array(b as ArrayBufferLike, 0, 1)[0] !== TAG) {
    fail("invalid_parameter", "attach", "the handle returned by share() of a WebAssembly kernel backend", handle);
  }
  return m as WasmMemory;
}

/** Creates the backend on a compiled build (the loader picks the build). */
export function createWasmBackend(module: WasmModule, build: WasmBuild, options: WasmBackendOptions = {}): WasmKernelBackend {
  const scratchBytes = sizeOption("scratchBytes", options.scratchBytes, 4 * MIB);
  const attach = options.attach;
  let memory: WasmMemory;
  let X: KernelExports;
  let maxPages: number;
  /** This backend's gemm packing workspace. */
  let work: number;
  if (attach === undefined) {
    const arenaReserve = sizeOption("arenaBytes", options.arenaBytes, 4 * MIB);
    const maximumBytes = options.maximumBytes === undefined ? undefined : requireInteger("maximumBytes", options.maximumBytes, PAGE_BYTES);
    maxPages = maximumBytes === undefined ? MAX_PAGES : Math.min(MAX_PAGES, Math.floor(maximumBytes / PAGE_BYTES));
    // one page to instantiate on, then grown to the layout before any view exists
    memory = createMemory(1, maximumBytes === undefined ? undefined : maxPages);
    X = instantiate(module, memory) as unknown as KernelExports;
    const table = X.constantTableAddress();
    if (table < GUARD_BYTES) fail("unsupported", "kernels", `a constant table at or above byte ${GUARD_BYTES}`, table);
    work = alignUp(table + X.constantTableBytes());
    const arenaStart = alignUp(work + X.gemmWorkspaceBytes());
    const initialPages = Math.ceil((arenaStart + arenaReserve + scratchBytes) / PAGE_BYTES);
    if (initialPages > maxPages) {
      if (maximumBytes !== undefined) {
        fail("invalid_parameter", "maximumBytes", `at least ${initialPages * PAGE_BYTES} (workspace + arenaBytes + scratchBytes)`, maximumBytes);
      }
      fail("invalid_parameter", "arenaBytes", `at most ${maxPages * PAGE_BYTES - arenaStart - scratchBytes} (4 GiB of memory minus workspace and scratch)`, arenaReserve);
    }
    try {
      memory.grow(initialPages - 1);
    } catch (e) {
      fail("unsupported", "memory", `the engine to provide ${initialPages * PAGE_BYTES} bytes of WebAssembly memory`, String(e));
    }
    X.writeConstantTable();
    const h = new Uint32Array(memory.buffer, 0, GUARD_BYTES / 4);
    h[HEADER_TOP] = arenaStart;
    h[HEADER_ARENA] = arenaStart;
    h[HEADER_PAGES] = maxPages;
    h[HEADER_TABLE] = table;
    h[HEADER_TABLE_BYTES] = X.constantTableBytes();
    Atomics.store(h, HEADER_TAG, TAG);
  } else {
    memory = attachedMemory(attach);
    X = instantiate(module, memory) as unknown as KernelExports;
    const h = new Uint32Array(memory.buffer, 0, GUARD_BYTES / 4);
    // the constant table was written by the memory's creator; these kernels must read it at the same place
    if (X.constantTableAddress() !== h[HEADER_TABLE] || X.constantTableBytes() !== h[HEADER_TABLE_BYTES]) {
      fail("unsupported", "attach", `kernels with the constant table at [${h[HEADER_TABLE]}, +${h[HEADER_TABLE_BYTES]})`, `[${X.constantTableAddress()}, +${X.constantTableBytes()})`);
    }
    maxPages = h[HEADER_PAGES] as number;
    work = 0; // reserved in the arena below, once the allocator exists
  }

  let buf = memory.buffer;
  let heap32 = new Float32Array(buf);
  let heap64 = new Float64Array(buf);
  /** The header; a view on the first buffer stays valid through growth (the memory is shared). */
  const header = new Uint32Array(buf, 0, GUARD_BYTES / 4);
  const arenaStart = header[HEADER_ARENA] as number;
  let generation = 0;
  /** Start of this backend's own scratch region in the arena, or -1 while it stages at the arena's end. */
  let scratchStart = -1;
  const registry = new WeakMap<object, Allocation>();
  /**
   * Buffers of earlier generations that still alias this memory: with a shared WebAssembly memory,
   * growth does not detach earlier views, so arrays allocated before a growth stay on the fast path.
   */
  const earlier = new Set<ArrayBufferLike>();
  const own = (b: ArrayBufferLike): boolean => b === buf || (earlier.size > 0 && earlier.has(b));

  /** Takes the memory's current buffer when it is longer than ours (grown here or by another thread). */
  function adopt(): void {
    const cur = memory.buffer;
    if (cur.byteLength <= buf.byteLength) return;
    if (isSharedBuffer(buf)) earlier.add(buf); // by tag: the SharedArrayBuffer global is hidden on pages without cross-origin isolation
    buf = cur;
    heap32 = new Float32Array(buf);
    heap64 = new Float64Array(buf);
    generation++;
  }

  /** Grows the memory to hold `needEnd` bytes: by at least half its size, so growth stays rare. */
  function grow(needEnd: number): void {
    if (needEnd <= buf.byteLength) return;
    adopt(); // another backend on this memory may have grown it already
    if (needEnd <= buf.byteLength) return;
    const need = Math.ceil(needEnd / PAGE_BYTES);
    if (need > maxPages) {
      fail("unsupported", "memory", `at most ${maxPages * PAGE_BYTES} bytes of WebAssembly memory`, `${need * PAGE_BYTES} bytes needed`);
    }
    const have = buf.byteLength / PAGE_BYTES;
    const target = Math.min(maxPages, Math.max(need, Math.ceil(have * 1.5)));
    try {
      memory.grow(target - have);
    } catch {
      // the engine may refuse the headroom (or another thread grew the memory meanwhile); try the bare need
      try {
        const now = memory.buffer.byteLength / PAGE_BYTES;
        if (now < need) memory.grow(need - now);
      } catch (e) {
        fail("unsupported", "memory", "the engine to grow the WebAssembly memory", `${need * PAGE_BYTES} bytes refused (${String(e)})`);
      }
    }
    adopt();
  }

  /**
   * Hands out `bytes` of the arena (16-byte aligned) and keeps `keepFree` bytes free beyond them. The
   * arena's end lives in the header and advances by compare-exchange, so backends on other threads never
   * receive overlapping ranges. Returns the start.
   */
  function bump(bytes: number, keepFree: number): number {
    for (;;) {
      const start = Atomics.load(header, HEADER_TOP);
      const end = alignUp(start + bytes);
      if (end + keepFree > maxPages * PAGE_BYTES || end >= 2 ** 32) {
        fail("unsupported", "memory", `at most ${maxPages * PAGE_BYTES} bytes of WebAssembly memory`, `${end + keepFree} bytes needed`);
      }
      grow(start + bytes + keepFree);
      if (Atomics.compareExchange(header, HEADER_TOP, start, end) === start) return start;
    }
  }

  /** Bytes of the free space this backend keeps beyond the arena when it grows: its scratch, until it has its own region. */
  const keepFree = (): number => (scratchStart < 0 ? scratchBytes : 0);

  if (attach !== undefined) {
    // an attached backend never stages at the arena's end (another thread's allocations go there)
    work = bump(X.gemmWorkspaceBytes(), 0);
    scratchStart = bump(scratchBytes, 0);
  }

  function viewOf(a: Allocation): FloatArray {
    const v = a.dtype === "float32" ? new Float32Array(buf, a.byteOffset, a.length) : new Float64Array(buf, a.byteOffset, a.length);
    registry.set(v, a);
    return v;
  }

  // ---- slow path: staging of ordinary arrays in the free space ----

  const stagedSrc: (ReadonlyFloatArray | null)[] = [null, null, null, null];
  const stagedOff = [0, 0, 0, 0];
  let stagedCount = 0;
  let cursor = 0;

  /** Throws when an argument is a view detached by memory growth (it would read as empty). */
  function requireLive(x: ReadonlyFloatArray, len: number, path: string): void {
    if (len > 0 && !own(x.buffer) && x.buffer.byteLength === 0) {
      throw new EbbflowError(
        issueText(
          "invalid_parameter",
          path,
          "a live array (arena views from before a memory growth are detached: call refresh())",
          `a detached ${x instanceof Float32Array ? "Float32Array" : "Float64Array"} (memory generation is now ${generation})`,
        ),
      );
    }
  }

  /** End of the scratch space of the current call. */
  let scratchEnd = 0;

  function begin(): void {
    stagedCount = 0;
    stagedSrc[0] = stagedSrc[1] = stagedSrc[2] = stagedSrc[3] = null;
    if (scratchStart < 0) {
      cursor = Atomics.load(header, HEADER_TOP);
      scratchEnd = buf.byteLength;
    } else {
      cursor = scratchStart;
      scratchEnd = scratchStart + scratchBytes;
    }
  }

  /**
   * Byte offset of `x`'s first `len` elements in the memory: the array itself
   * when it lives there, else a scratch copy (filled when `read`); -1 when
   * the scratch space is too small.
   */
  function stage(x: ReadonlyFloatArray, len: number, read: boolean): number {
    if (own(x.buffer)) return x.byteOffset;
    for (let q = 0; q < stagedCount; q++) if (stagedSrc[q] === x) return stagedOff[q]!;
    const off = alignUp(cursor);
    const bytes = len * x.BYTES_PER_ELEMENT;
    if (off + bytes > scratchEnd) return -1;
    cursor = off + bytes;
    if (read && len > 0) {
      const src = x.length <= len ? x : x.subarray(0, len);
      if (x instanceof Float32Array) heap32.set(src as Float32Array, off >> 2);
      else heap64.set(src as Float64Array, off >> 3);
    }
    stagedSrc[stagedCount] = x;
    stagedOff[stagedCount] = off;
    stagedCount++;
    return off;
  }

  /** Copies the first `len` results back into `out` when it was staged. */
  function unstage(out: FloatArray, off: number, len: number): void {
    if (own(out.buffer) || len <= 0) return;
    const n = Math.min(len, out.length);
    if (out instanceof Float32Array) out.set(heap32.subarray(off >> 2, (off >> 2) + n));
    else out.set(heap64.subarray(off >> 3, (off >> 3) + n));
  }

  /** 4 when all are Float32Array, 8 when all are Float64Array, 0 when mixed. */
  function width(a: ReadonlyFloatArray, b: ReadonlyFloatArray, c: ReadonlyFloatArray): number {
    if (a instanceof Float32Array) return b instanceof Float32Array && c instanceof Float32Array ? 4 : 0;
    return b instanceof Float64Array && c instanceof Float64Array ? 8 : 0;
  }

  // ---- kernels ----

  function gemm<T extends FloatArray>(
    out: T,
    a: ReadonlyFloatArray,
    b: ReadonlyFloatArray,
    m: number,
    n: number,
    k: number,
    transA: boolean,
    transB: boolean,
    alpha: number,
    beta: number,
  ): T {
    if (m <= 0 || n <= 0) return out;
    const w = width(out, a, b);
    if (w !== 0 && own(out.buffer) && own(a.buffer) && own(b.buffer)) {
      (w === 4 ? X.gemmF32 : X.gemmF64)(out.byteOffset, a.byteOffset, b.byteOffset, m, n, k, transA ? 1 : 0, transB ? 1 : 0, alpha, beta, work);
      return out;
    }
    const useAB = alpha !== 0 && k > 0;
    requireLive(out, m * n, "out");
    if (useAB) {
      requireLive(a, m * k, "a");
      requireLive(b, k * n, "b");
    }
    if (w === 0) return ts.gemm(out, a, b, m, n, k, transA, transB, alpha, beta);
    begin();
    const po = stage(out, m * n, beta !== 0);
    const pa = useAB ? stage(a, m * k, true) : 0;
    const pb = useAB ? stage(b, k * n, true) : 0;
    if (po < 0 || pa < 0 || pb < 0) return ts.gemm(out, a, b, m, n, k, transA, transB, alpha, beta);
    (w === 4 ? X.gemmF32 : X.gemmF64)(po, pa, pb, m, n, k, transA ? 1 : 0, transB ? 1 : 0, alpha, beta, work);
    unstage(out, po, m * n);
    return out;
  }

  function gemv<T extends FloatArray>(
    out: T,
    a: ReadonlyFloatArray,
    x: ReadonlyFloatArray,
    rows: number,
    cols: number,
    trans: boolean,
    alpha: number,
    beta: number,
  ): T {
    const w = width(out, a, x);
    if (w !== 0 && own(out.buffer) && own(a.buffer) && own(x.buffer)) {
      (w === 4 ? X.gemvF32 : X.gemvF64)(out.byteOffset, a.byteOffset, x.byteOffset, rows, cols, trans ? 1 : 0, alpha, beta);
      return out;
    }
    const len = Math.max(0, trans ? cols : rows);
    const inner = Math.max(0, trans ? rows : cols);
    const useAX = alpha !== 0 && inner > 0 && len > 0;
    requireLive(out, len, "out");
    if (useAX) {
      requireLive(a, rows * cols, "a");
      requireLive(x, inner, "x");
    }
    if (w === 0) return ts.gemv(out, a, x, rows, cols, trans, alpha, beta);
    begin();
    const po = stage(out, len, beta !== 0);
    const pa = useAX ? stage(a, rows * cols, true) : 0;
    const px = useAX ? stage(x, inner, true) : 0;
    if (po < 0 || pa < 0 || px < 0) return ts.gemv(out, a, x, rows, cols, trans, alpha, beta);
    (w === 4 ? X.gemvF32 : X.gemvF64)(po, pa, px, rows, cols, trans ? 1 : 0, alpha, beta);
    unstage(out, po, len);
    return out;
  }

  function ger<T extends FloatArray>(out: T, x: ReadonlyFloatArray, y: ReadonlyFloatArray, m: number, n: number, alpha: number): T {
    if (alpha === 0 || m <= 0 || n <= 0) return out;
    const w = width(out, x, y);
    if (w !== 0 && own(out.buffer) && own(x.buffer) && own(y.buffer)) {
      (w === 4 ? X.gerF32 : X.gerF64)(out.byteOffset, x.byteOffset, y.byteOffset, m, n, alpha);
      return out;
    }
    requireLive(out, m * n, "out");
    requireLive(x, m, "x");
    requireLive(y, n, "y");
    if (w === 0) return ts.ger(out, x, y, m, n, alpha);
    begin();
    const po = stage(out, m * n, true);
    const px = stage(x, m, true);
    const py = stage(y, n, true);
    if (po < 0 || px < 0 || py < 0) return ts.ger(out, x, y, m, n, alpha);
    (w === 4 ? X.gerF32 : X.gerF64)(po, px, py, m, n, alpha);
    unstage(out, po, m * n);
    return out;
  }

  /** add, sub, mul: op 0, 1, 2. */
  function binary<T extends FloatArray>(op: number, out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number): T {
    if (n <= 0) return out;
    const w = width(out, a, b);
    if (w !== 0 && own(out.buffer) && own(a.buffer) && own(b.buffer)) {
      (w === 4 ? X.binaryF32 : X.binaryF64)(op, out.byteOffset, a.byteOffset, b.byteOffset, n);
      return out;
    }
    requireLive(out, n, "out");
    requireLive(a, n, "a");
    requireLive(b, n, "b");
    const fallback = op === 0 ? ts.add : op === 1 ? ts.sub : ts.mul;
    if (w === 0) return fallback(out, a, b, n);
    begin();
    const pa = stage(a, n, true);
    const pb = stage(b, n, true);
    const po = stage(out, n, false);
    if (po < 0 || pa < 0 || pb < 0) return fallback(out, a, b, n);
    (w === 4 ? X.binaryF32 : X.binaryF64)(op, po, pa, pb, n);
    unstage(out, po, n);
    return out;
  }

  function axpby<T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, alpha: number, beta: number, n: number = out.length): T {
    if (n <= 0) return out;
    const w = width(out, a, b);
    if (w !== 0 && own(out.buffer) && own(a.buffer) && own(b.buffer)) {
      (w === 4 ? X.axpbyF32 : X.axpbyF64)(out.byteOffset, a.byteOffset, b.byteOffset, alpha, beta, n);
      return out;
    }
    requireLive(out, n, "out");
    requireLive(a, n, "a");
    requireLive(b, n, "b");
    if (w === 0) return ts.axpby(out, a, b, alpha, beta, n);
    begin();
    const pa = stage(a, n, true);
    const pb = stage(b, n, true);
    const po = stage(out, n, false);
    if (po < 0 || pa < 0 || pb < 0) return ts.axpby(out, a, b, alpha, beta, n);
    (w === 4 ? X.axpbyF32 : X.axpbyF64)(po, pa, pb, alpha, beta, n);
    unstage(out, po, n);
    return out;
  }

  function axpy<T extends FloatArray>(out: T, a: ReadonlyFloatArray, alpha: number, n: number = out.length): T {
    if (n <= 0) return out;
    const w = width(out, a, a);
    if (w !== 0 && own(out.buffer) && own(a.buffer)) {
      (w === 4 ? X.axpyF32 : X.axpyF64)(out.byteOffset, a.byteOffset, alpha, n);
      return out;
    }
    requireLive(out, n, "out");
    requireLive(a, n, "a");
    if (w === 0) return ts.axpy(out, a, alpha, n);
    begin();
    const po = stage(out, n, true);
    const pa = stage(a, n, true);
    if (po < 0 || pa < 0) return ts.axpy(out, a, alpha, n);
    (w === 4 ? X.axpyF32 : X.axpyF64)(po, pa, alpha, n);
    unstage(out, po, n);
    return out;
  }

  function scale<T extends FloatArray>(out: T, a: ReadonlyFloatArray, alpha: number, n: number = out.length): T {
    if (n <= 0) return out;
    const w = width(out, a, a);
    if (w !== 0 && own(out.buffer) && own(a.buffer)) {
      (w === 4 ? X.scaleF32 : X.scaleF64)(out.byteOffset, a.byteOffset, alpha, n);
      return out;
    }
    requireLive(out, n, "out");
    requireLive(a, n, "a");
    if (w === 0) return ts.scale(out, a, alpha, n);
    begin();
    const pa = stage(a, n, true);
    const po = stage(out, n, false);
    if (po < 0 || pa < 0) return ts.scale(out, a, alpha, n);
    (w === 4 ? X.scaleF32 : X.scaleF64)(po, pa, alpha, n);
    unstage(out, po, n);
    return out;
  }

  function fill<T extends FloatArray>(out: T, value: number, n: number = out.length): T {
    if (n <= 0) return out;
    if (own(out.buffer)) {
      (out instanceof Float32Array ? X.fillF32 : X.fillF64)(out.byteOffset, value, n);
      return out;
    }
    requireLive(out, n, "out");
    return ts.fill(out, value, n);
  }

  function copy<T extends FloatArray>(out: T, a: ReadonlyFloatArray, n: number = out.length): T {
    if (n <= 0 || (out as ReadonlyFloatArray) === a) return out;
    if (width(out, a, a) !== 0 && own(out.buffer) && own(a.buffer)) {
      X.copyBytes(out.byteOffset, a.byteOffset, n * out.BYTES_PER_ELEMENT);
      return out;
    }
    requireLive(out, n, "out");
    requireLive(a, n, "a");
    return ts.copy(out, a, n);
  }

  function maxAbsDiff(a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = a.length): number {
    if (n <= 0) return 0;
    const w = width(a, b, b);
    if (w !== 0 && own(a.buffer) && own(b.buffer)) return (w === 4 ? X.maxAbsDiffF32 : X.maxAbsDiffF64)(a.byteOffset, b.byteOffset, n);
    requireLive(a, n, "a");
    requireLive(b, n, "b");
    if (w === 0) return ts.maxAbsDiff(a, b, n);
    begin();
    const pa = stage(a, n, true);
    const pb = stage(b, n, true);
    if (pa < 0 || pb < 0) return ts.maxAbsDiff(a, b, n);
    return (w === 4 ? X.maxAbsDiffF32 : X.maxAbsDiffF64)(pa, pb, n);
  }

  function maxAbs(a: ReadonlyFloatArray, n: number = a.length): number {
    if (n <= 0) return 0;
    const f32 = a instanceof Float32Array;
    if (own(a.buffer)) return (f32 ? X.maxAbsF32 : X.maxAbsF64)(a.byteOffset, n);
    requireLive(a, n, "a");
    begin();
    const pa = stage(a, n, true);
    if (pa < 0) return ts.maxAbs(a, n);
    return (f32 ? X.maxAbsF32 : X.maxAbsF64)(pa, n);
  }

  function allFinite(a: ReadonlyFloatArray, n: number = a.length): boolean {
    if (n <= 0) return true;
    const f32 = a instanceof Float32Array;
    if (own(a.buffer)) return (f32 ? X.allFiniteF32 : X.allFiniteF64)(a.byteOffset, n) === 1;
    requireLive(a, n, "a");
    begin();
    const pa = stage(a, n, true);
    if (pa < 0) return ts.allFinite(a, n);
    return (f32 ? X.allFiniteF32 : X.allFiniteF64)(pa, n) === 1;
  }

  function dot(a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = a.length): number {
    if (n <= 0) return 0;
    const w = width(a, b, b);
    if (w !== 0 && own(a.buffer) && own(b.buffer)) return (w === 4 ? X.dotF32 : X.dotF64)(a.byteOffset, b.byteOffset, n);
    requireLive(a, n, "a");
    requireLive(b, n, "b");
    if (w === 0) return ts.dot(a, b, n);
    begin();
    const pa = stage(a, n, true);
    const pb = stage(b, n, true);
    if (pa < 0 || pb < 0) return ts.dot(a, b, n);
    return (w === 4 ? X.dotF32 : X.dotF64)(pa, pb, n);
  }

  function sumSquares(a: ReadonlyFloatArray, n: number = a.length): number {
    return dot(a, a, n);
  }

  function addRowVector<T extends FloatArray>(out: T, bias: ReadonlyFloatArray, rows: number, cols: number): T {
    if (rows <= 0 || cols <= 0) return out;
    const w = width(out, bias, bias);
    if (w !== 0 && own(out.buffer) && own(bias.buffer)) {
      (w === 4 ? X.addRowVectorF32 : X.addRowVectorF64)(out.byteOffset, bias.byteOffset, rows, cols);
      return out;
    }
    requireLive(out, rows * cols, "out");
    requireLive(bias, cols, "bias");
    if (w === 0) return ts.addRowVector(out, bias, rows, cols);
    begin();
    const po = stage(out, rows * cols, true);
    const pb = stage(bias, cols, true);
    if (po < 0 || pb < 0) return ts.addRowVector(out, bias, rows, cols);
    (w === 4 ? X.addRowVectorF32 : X.addRowVectorF64)(po, pb, rows, cols);
    unstage(out, po, rows * cols);
    return out;
  }

  function sumRows<T extends FloatArray>(out: T, a: ReadonlyFloatArray, rows: number, cols: number, alpha: number, beta: number): T {
    if (cols <= 0) return out;
    const w = width(out, a, a);
    if (w !== 0 && own(out.buffer) && own(a.buffer)) {
      (w === 4 ? X.sumRowsF32 : X.sumRowsF64)(out.byteOffset, a.byteOffset, rows, cols, alpha, beta);
      return out;
    }
    const useA = alpha !== 0 && rows > 0;
    requireLive(out, cols, "out");
    if (useA) requireLive(a, rows * cols, "a");
    if (w === 0) return ts.sumRows(out, a, rows, cols, alpha, beta);
    begin();
    const po = stage(out, cols, beta !== 0);
    const pa = useA ? stage(a, rows * cols, true) : 0;
    if (po < 0 || pa < 0) return ts.sumRows(out, a, rows, cols, alpha, beta);
    (w === 4 ? X.sumRowsF32 : X.sumRowsF64)(po, pa, rows, cols, alpha, beta);
    unstage(out, po, cols);
    return out;
  }

  const backend: WasmKernelBackend = {
    name: build === "relaxed" ? "wasm-relaxed-simd" : "wasm-simd",
    get generation() {
      return generation;
    },
    get arenaBytes() {
      return Atomics.load(header, HEADER_TOP) - arenaStart;
    },
    get freeBytes() {
      adopt();
      return buf.byteLength - Atomics.load(header, HEADER_TOP);
    },
    allocate(dtype: Dtype, n: number): FloatArray {
      checkAllocation(dtype, n);
      const bytes = n * (dtype === "float32" ? 4 : 8);
      const start = bump(bytes, keepFree());
      // the free space may hold slow-path scratch copies of an earlier call: hand out zeros
      if (bytes > 0) new Uint8Array(buf, start, bytes).fill(0);
      return viewOf({ byteOffset: start, length: n, dtype });
    },
    reserve(bytes: number): void {
      requireInteger("bytes", bytes, 0);
      grow(Atomics.load(header, HEADER_TOP) + bytes + keepFree());
    },
    isArenaView(array: ReadonlyFloatArray): boolean {
      return own(array.buffer);
    },
    refresh<T extends FloatArray>(view: T): T {
      const a = registry.get(view);
      if (a === undefined) {
        fail("invalid_parameter", "view", "an array returned by allocate() or refresh() of this backend", view);
      }
      if (own(view.buffer)) return view;
      return viewOf(a) as T;
    },
    share(): WasmSharedMemory {
      // from now on other threads allocate at the arena's end: move this backend's scratch into its own region
      if (scratchStart < 0) scratchStart = bump(scratchBytes, 0);
      return { memory, build };
    },
    arrayAt(dtype: Dtype, byteOffset: number, length: number): FloatArray {
      checkAllocation(dtype, length);
      const width = dtype === "float32" ? 4 : 8;
      const end = typeof byteOffset === "number" ? byteOffset + length * width : Number.NaN;
      if (!Number.isInteger(byteOffset) || byteOffset % width !== 0 || byteOffset < arenaStart || !(end <= Atomics.load(header, HEADER_TOP))) {
        fail("invalid_parameter", "byteOffset", `a multiple of ${width} with the ${length} elements inside the arena handed out so far [${arenaStart}, ${Atomics.load(header, HEADER_TOP)})`, byteOffset);
      }
      if (end > buf.byteLength) adopt(); // allocated after this backend last looked at the memory's size
      return viewOf({ byteOffset, length, dtype });
    },
    gemm,
    gemv,
    ger,
    add: <T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = out.length): T => binary(0, out, a, b, n),
    sub: <T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = out.length): T => binary(1, out, a, b, n),
    mul: <T extends FloatArray>(out: T, a: ReadonlyFloatArray, b: ReadonlyFloatArray, n: number = out.length): T => binary(2, out, a, b, n),
    axpy,
    axpby,
    scale,
    fill,
    copy,
    maxAbsDiff,
    allFinite,
    maxAbs,
    dot,
    sumSquares,
    addRowVector,
    sumRows,
    unitFill: createUnitFill(X, own),
    rateStep: createRateStep(X, own),
  };
  return backend;
}
