/**
 * The memory of a WebAssembly backend and the arena in it.
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
import { fail, requireInteger } from "../../errors/index.js";
import type { Dtype, FloatArray } from "../../types/index.js";
import { checkAllocation } from "../backend.js";
import { CONSTANT_TABLE_BYTES, type KernelExports } from "./generated/layout.js";
import { MAX_PAGES, PAGE_BYTES, createMemory, instantiate, type WasmBuild, type WasmMemory, type WasmModule } from "./platform.js";
import type { WasmBackendOptions, WasmSharedMemory } from "./wasm-backend.js";

/** Where an allocation lives, to re-create its view after growth. */
interface Allocation {
  readonly byteOffset: number;
  readonly length: number;
  readonly dtype: Dtype;
}

const GUARD_BYTES = 64;
const ALIGN = 16;
const MIB = 1 << 20;

/** Rounds up to the arena's alignment (16 bytes). */
export function alignUp(x: number): number {
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
  if (typeof SharedArrayBuffer === "undefined" || !(b instanceof SharedArrayBuffer) || b.byteLength < GUARD_BYTES || new Uint32Array(b, 0, 1)[0] !== TAG) {
    fail("invalid_parameter", "attach", "the handle returned by share() of a WebAssembly kernel backend", handle);
  }
  return m as WasmMemory;
}

/**
 * A backend's view of its WebAssembly memory: the kernels instantiated on it, the arena
 * (allocation, growth, views across threads) and the place of this backend's slow-path scratch.
 * @internal
 */
export interface Arena {
  /** The instance's exports. */
  readonly X: KernelExports;
  /** This backend's gemm packing workspace. */
  readonly work: number;
  /** Bytes of this backend's slow-path scratch. */
  readonly scratchBytes: number;
  /** Start of this backend's own scratch region in the arena, or -1 while it stages at the arena's end. */
  readonly scratchStart: number;
  /** The memory's current buffer (as this backend last saw it). */
  readonly buffer: ArrayBufferLike;
  readonly heap32: Float32Array;
  readonly heap64: Float64Array;
  /** Number of growths this backend has seen. */
  readonly generation: number;
  readonly arenaBytes: number;
  readonly freeBytes: number;
  /** Whether a buffer is this memory's (current, or earlier and still aliasing it). */
  own(b: ArrayBufferLike): boolean;
  /** The arena's current end. */
  top(): number;
  allocate(dtype: Dtype, n: number): FloatArray;
  reserve(bytes: number): void;
  refresh<T extends FloatArray>(view: T): T;
  share(): WasmSharedMemory;
  arrayAt(dtype: Dtype, byteOffset: number, length: number): FloatArray;
}

/** Creates (or, with `options.attach`, joins) the memory of a backend on a compiled build, and its arena. @internal */
export function createArena(module: WasmModule, build: WasmBuild, options: WasmBackendOptions = {}): Arena {
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
    // the bytes and the generated layout come from one declaration (assembly/layout.mjs): a mismatch means a stale build
    if (X.constantTableBytes() !== CONSTANT_TABLE_BYTES) fail("unsupported", "kernels", `a constant table of ${CONSTANT_TABLE_BYTES} bytes (assembly/layout.mjs; run npm run build:wasm)`, X.constantTableBytes());
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
    if (typeof SharedArrayBuffer !== "undefined" && buf instanceof SharedArrayBuffer) earlier.add(buf);
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

  return {
    X,
    work,
    scratchBytes,
    get scratchStart() {
      return scratchStart;
    },
    get buffer() {
      return buf;
    },
    get heap32() {
      return heap32;
    },
    get heap64() {
      return heap64;
    },
    own,
    top: () => Atomics.load(header, HEADER_TOP),
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
  };
}
