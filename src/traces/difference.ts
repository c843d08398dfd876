/**
 * Difference of two traces, e.g. a fast minus a slow running average.
 * @module
 */
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";

/**
 * Writes `out[i] = fast[i] - slow[i]` and returns `out`; allocates nothing.
 * `out` may be `fast` or `slow` (each element is read before it is written).
 * Typical use: `traceDifference(diff, fastTrace.value, slowTrace.value)` — a
 * band-pass signal, or "recent activity minus expected activity".
 *
 * @param out - output array, length n (its precision is kept)
 * @param fast - first trace's outputs, length n
 * @param slow - second trace's outputs, length n
 * @returns `out`
 * @throws {@link EbbflowError} `shape_mismatch` (path `fast` or `slow`) if a length differs from `out.length`
 * @category Traces
 * @example
 * ```ts
 * traceDifference(new Float64Array(2), new Float64Array([0.5, 0.2]), new Float64Array([0.25, 0.4])); // [0.25, -0.2]
 * ```
 */
export function traceDifference<T extends FloatArray>(out: T, fast: FloatArray, slow: FloatArray): T {
  const n = out.length;
  if (fast.length !== n) fail("shape_mismatch", "fast", `an array of length ${n} (out.length)`, fast);
  if (slow.length !== n) fail("shape_mismatch", "slow", `an array of length ${n} (out.length)`, slow);
  for (let i = 0; i < n; i++) out[i] = (fast[i] as number) - (slow[i] as number);
  return out;
}
