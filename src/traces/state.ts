/**
 * Plain-data snapshots of trace state, for checkpoints.
 * @module
 */
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";

/**
 * Saved state of an exponential trace (scalar: one value; vector: one per unit).
 * Plain data: survives `JSON.stringify`/`JSON.parse` unchanged.
 * @category Traces
 */
export interface TraceState {
  /** The filter outputs, in unit order. */
  readonly values: readonly number[];
}

/**
 * Saved state of a cascade: `stages[k - 1]` holds stage k's outputs.
 * @category Traces
 */
export interface CascadeState {
  /** One array of outputs per stage, first stage first. */
  readonly stages: readonly (readonly number[])[];
}

/** Copies a typed array into a plain array. @internal */
export function toPlain(a: FloatArray | readonly number[]): number[] {
  return Array.from(a);
}

/**
 * Checks that `values` is an array of `length` finite numbers and copies it into
 * `out` (at `offset`). Validates everything before writing anything. @internal
 */
export function readValues(values: unknown, length: number, path: string, out: FloatArray, offset = 0): void {
  if (!Array.isArray(values) && !ArrayBuffer.isView(values)) fail("invalid_parameter", path, `an array of ${length} finite numbers`, values);
  const list = values as ArrayLike<unknown>;
  if (list.length !== length) fail("shape_mismatch", path, `an array of length ${length}`, values);
  for (let i = 0; i < length; i++) {
    const v = list[i];
    if (typeof v !== "number" || !Number.isFinite(v)) fail("invalid_parameter", `${path}[${i}]`, "a finite number", v);
  }
  for (let i = 0; i < length; i++) out[offset + i] = list[i] as number;
}

/** Reads the `values` field of a {@link TraceState}-shaped object. @internal */
export function traceValues(state: unknown): unknown {
  if (typeof state !== "object" || state === null) fail("invalid_parameter", "state", "an object { values: number[] }", state);
  return (state as { values?: unknown }).values;
}
