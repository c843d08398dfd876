/**
 * Unit (activation) functions on any kernel backend: {@link fillUnit} runs a unit on the
 * backend's SIMD unit kernel when the unit's descriptor names one and the backend can run the
 * call, and the unit's own fill otherwise.
 *
 * Accuracy of the SIMD unit kernels against the TypeScript units (`createUnit(spec).fill`/
 * `fillSlope`, which evaluate in float64 and round once to the storage type):
 * - relu, hard sigmoid, linear and their slopes: bit-identical (including -0
 *   and NaN).
 * - logistic, tanh and their slopes, float64: within 1e-14 relative (measured
 *   at most 6.1e-16), or within 2^-1022 absolutely where the result is subnormal
 *   (where `Math.exp` overflows, the TypeScript logistic gives 0 while the
 *   kernel keeps the subnormal tail).
 * - float32: within 6 float32 ulps of the TypeScript result (measured at most
 *   5), or within 2^-126 absolutely for subnormal results.
 * - Exact: logistic(offset) = 0.5, tanh(0) = 0, tanh odd (sign from the
 *   input, magnitude from |x|), saturation to exactly 0 and 1 at ±Infinity and
 *   far tails, NaN in gives NaN out.
 *
 * exp is vectorised by Cody-Waite range reduction and a polynomial (Cody &
 * Waite 1980, "Software Manual for the Elementary Functions"; Cephes Math
 * Library expf, S. L. Moshier 1984-1992, for float32; a degree-13 Taylor
 * polynomial for float64): see assembly/units.ts.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { UnitFunction, UnitKernelCall } from "../units/spec.js";
import type { KernelBackend } from "./backend.js";
import type { UnitKernelKind } from "./wasm/generated/layout.js";

/**
 * Unit kinds the SIMD kernels evaluate (the built-in kinds whose descriptor names a kernel;
 * softplus, saturating, noisy and users' kinds are not among them).
 * @category Kernels
 */
export type UnitFillKind = UnitKernelKind;

/**
 * `out[i] = f(x[i])` (or `f'(x[i])` when `slope`) for `i < n`: on the
 * backend's SIMD kernels when it has a `unitFill` that handles the call
 * (a unit whose `kernel` names one: logistic, tanh, relu, hard-sigmoid or
 * linear, on arena views), else with the unit's own `fill`/`fillSlope`. Allocates nothing. Accuracy: see
 * the module notes (bit-identical for the piecewise-linear units; within
 * 1e-14 relative in float64 and 6 float32 ulps in float32 for logistic and tanh).
 * @param backend The kernel backend (the TypeScript backend always falls back).
 * @param unit A unit made by `createUnit`.
 * @param slope Whether to write the slope `f'` instead of the rate `f`.
 * @param out Output array; may be `x` (in place).
 * @param x Net inputs.
 * @param n Element count (default `x.length`).
 * @returns `out`.
 * @throws EbbflowError from the unit's fill when it runs (`invalid_parameter`
 *   at `n`, `shape_mismatch` at `x`/`out`); the kernel path leaves bad counts
 *   to it.
 * @category Kernels
 * @example
 * ```ts
 * const be = loadWasmKernelsSync();
 * const x = be.allocate("float32", 3);
 * x.set([-100, 0, 100]);
 * fillUnit(be, createUnit({ kind: "logistic" }), false, x, x); // Float32Array [0, 0.5, 1]
 * ```
 */
export function fillUnit<T extends FloatArray>(backend: KernelBackend, unit: UnitFunction, slope: boolean, out: T, x: FloatArray, n?: number): T {
  const run = backend.unitFill;
  // with n absent the unit requires out.length >= x.length: leave that error to it
  if (run !== undefined && (n !== undefined || out.length >= x.length)) {
    const k = unitKernelArgs(unit);
    if (k !== null && run(k.kind, slope, k.gain, k.offset, out, x, n ?? x.length)) return out;
  }
  return slope ? unit.fillSlope(out, x, n) : unit.fill(out, x, n);
}

/**
 * How the SIMD kernels (`unitFill`, `rateStep`) take a unit: the kernel its descriptor names,
 * with the logistic's gain and offset (1 and 0 for the other kinds), or null for a unit without
 * one (a kind with no SIMD kernel, or any user's kind): that unit runs its own fill.
 * @internal
 */
export function unitKernelArgs(unit: UnitFunction): UnitKernelCall | null {
  return unit.kernel ?? null;
}
