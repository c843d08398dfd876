/**
 * The slow path of a WebAssembly backend: ordinary arrays (and views into other memories) copied
 * into scratch space of the backend's memory for one kernel call, and the output copied back.
 * Scratch is the free space past the arena until the backend shares its memory, then a region of
 * the arena reserved for this backend (see arena.ts).
 * @module
 */
import { EbbflowError, issueText } from "../../errors/index.js";
import type { FloatArray } from "../../types/index.js";
import type { ReadonlyFloatArray } from "../types.js";
import { alignUp, type Arena } from "./arena.js";

/** The staging of one backend, as its kernel wrappers use it. @internal */
export interface Staging {
  /** Whether a buffer is the backend's memory (the fast path). */
  readonly own: (b: ArrayBufferLike) => boolean;
  /** 4 when all three are Float32Array, 8 when all are Float64Array, 0 when mixed. */
  readonly width: (a: ReadonlyFloatArray, b: ReadonlyFloatArray, c: ReadonlyFloatArray) => number;
  /** Throws `invalid_parameter` at `path` when an argument is a view detached by memory growth. */
  readonly requireLive: (x: ReadonlyFloatArray, len: number, path: string) => void;
  /** Starts the copies of one call. */
  readonly begin: () => void;
  /**
   * Byte offset of `x`'s first `len` elements in the memory: the array itself when it lives
   * there, else a scratch copy (filled when `read`; an array staged before in this call reuses
   * its copy); -1 when the scratch space is too small.
   */
  readonly stage: (x: ReadonlyFloatArray, len: number, read: boolean) => number;
  /** Copies the first `len` results back into `out` when it was staged. */
  readonly unstage: (out: FloatArray, off: number, len: number) => void;
}

/** 4 when all are Float32Array, 8 when all are Float64Array, 0 when mixed. */
function width(a: ReadonlyFloatArray, b: ReadonlyFloatArray, c: ReadonlyFloatArray): number {
  if (a instanceof Float32Array) return b instanceof Float32Array && c instanceof Float32Array ? 4 : 0;
  return b instanceof Float64Array && c instanceof Float64Array ? 8 : 0;
}

/** The staging of the backend whose memory is `arena`. @internal */
export function createStaging(arena: Arena): Staging {
  const own = arena.own;
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
          `a detached ${x instanceof Float32Array ? "Float32Array" : "Float64Array"} (memory generation is now ${arena.generation})`,
        ),
      );
    }
  }

  /** End of the scratch space of the current call. */
  let scratchEnd = 0;

  function begin(): void {
    stagedCount = 0;
    stagedSrc[0] = stagedSrc[1] = stagedSrc[2] = stagedSrc[3] = null;
    const start = arena.scratchStart;
    if (start < 0) {
      cursor = arena.top();
      scratchEnd = arena.buffer.byteLength;
    } else {
      cursor = start;
      scratchEnd = start + arena.scratchBytes;
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
      if (x instanceof Float32Array) arena.heap32.set(src as Float32Array, off >> 2);
      else arena.heap64.set(src as Float64Array, off >> 3);
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
    if (out instanceof Float32Array) out.set(arena.heap32.subarray(off >> 2, (off >> 2) + n));
    else out.set(arena.heap64.subarray(off >> 3, (off >> 3) + n));
  }

  return { own, width, requireLive, begin, stage, unstage };
}
