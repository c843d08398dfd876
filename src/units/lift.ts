/**
 * The one lifting template: a scalar function applied over typed arrays into a
 * caller-given output.
 * @module
 */
import { fail } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";

/**
 * An elementwise fill: writes `out[i] = f(x[i])` for `i < n` and returns `out`.
 *
 * `n` defaults to `x.length`; it must be an integer in `[0, min(x.length,
 * out.length)]`. `out` may be the same array as `x` (in-place). Nothing is
 * allocated. Elements at index `n` and beyond are left untouched.
 * @category Units
 */
export type FillFunction = <T extends FloatArray>(out: T, x: FloatArray, n?: number) => T;

/**
 * Checks the element count of a fill once per call (not per element) and
 * returns it.
 * @param out Output array.
 * @param x Input array.
 * @param n Requested count, or undefined for `x.length`.
 * @returns The count to process.
 * @throws EbbflowError `invalid_parameter` at `n` if `n` is not an integer >= 0;
 *   `shape_mismatch` at `x` or `out` if either is shorter than `n`.
 * @category Units
 * @example
 * ```ts
 * fillLength(new Float64Array(4), new Float64Array(3)); // 3
 * ```
 */
export function fillLength(out: FloatArray, x: FloatArray, n: number | undefined): number {
  if (n === undefined) {
    if (out.length < x.length) fail("shape_mismatch", "out", `an array of length >= ${x.length} (x.length)`, out);
    return x.length;
  }
  if (!Number.isInteger(n) || n < 0) fail("invalid_parameter", "n", "an integer >= 0", n);
  if (n > x.length) fail("shape_mismatch", "x", `an array of length >= n = ${n}`, x);
  if (n > out.length) fail("shape_mismatch", "out", `an array of length >= n = ${n}`, out);
  return n;
}

/**
 * Lifts a scalar function to a {@link FillFunction}: `out[i] = f(x[i])`.
 *
 * Use it for custom unit functions; the unit objects made by
 * `createUnit` have their own specialised loops (same contract), which
 * the JavaScript engine can inline into one tight loop.
 * @param f Scalar function of the net input (for example `(x) => logistic(x, 2)`).
 * @returns A fill that may run in place (`out === x`) and allocates nothing.
 * @category Units
 * @example
 * ```ts
 * const fillRelu = liftUnit(relu);
 * const x = Float64Array.of(-1, 2);
 * fillRelu(x, x); // Float64Array [0, 2] (in place)
 * ```
 */
export function liftUnit(f: (x: number) => number): FillFunction {
  return function lifted<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = f(x[i] as number);
    return out;
  };
}
