/**
 * Unit (activation) functions on the WebAssembly SIMD kernels: the optional
 * `unitFill` method of a kernel backend, and {@link fillUnit}, which uses it
 * when it can and the unit's own TypeScript fill otherwise.
 *
 * Accuracy against the TypeScript units (`createUnit(spec).fill`/`fillSlope`,
 * which evaluate in float64 and round once to the storage type):
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
import type { FloatArray } from "../../types/index.js";
import type { UnitFunction, UnitKernelCall, UnitKernelKind } from "../../units/spec.js";
import type { KernelBackend } from "./backend.js";

/**
 * Unit kinds the SIMD kernels evaluate (the built-in kinds whose descriptor names a kernel;
 * softplus, saturating, noisy and users' kinds are not among them).
 * @category Kernels
 */
export type UnitFillKind = UnitKernelKind;

/** Kind index of the WebAssembly export (code = index * 2 + slope). */
const KIND_INDEX: Readonly<Record<UnitFillKind, number>> = Object.freeze({
  logistic: 0,
  tanh: 1,
  relu: 2,
  "hard-sigmoid": 3,
  linear: 4,
});

/**
 * The code of the WebAssembly export `unitFillF32`/`unitFillF64`
 * (kind index * 2 + slope), or -1 for a kind it does not know.
 * @internal
 */
export function unitFillCode(kind: string, slope: boolean): number {
  const k = (KIND_INDEX as Readonly<Record<string, number>>)[kind];
  return k === undefined ? -1 : k * 2 + (slope ? 1 : 0);
}

/** The WebAssembly exports of the fused rate step (byte offsets, element count; t = 0: no target). */
interface RateStepExports {
  rateStepF32(code: number, gain: number, offset: number, x: number, nx: number, t: number, beta: number, dt: number, bound: number, n: number): number;
  rateStepF64(code: number, gain: number, offset: number, x: number, nx: number, t: number, beta: number, dt: number, bound: number, n: number): number;
}

/**
 * Builds the `rateStep` method of a WASM backend: arena views of one dtype only, `n` within each,
 * `next` disjoint from `x` and `target`, finite `beta` and `dt`, finite `offset` and finite `gain > 0`;
 * anything else returns null without writing.
 * @internal
 */
export function createRateStep(X: RateStepExports, own: (b: ArrayBufferLike) => boolean): NonNullable<KernelBackend["rateStep"]> {
  const disjoint = (a: FloatArray, b: FloatArray, bytes: number) => a.byteOffset + bytes <= b.byteOffset || b.byteOffset + bytes <= a.byteOffset;
  return (kind, gain, offset, x, next, target, beta, dt, bound, n) => {
    const code = unitFillCode(kind, false);
    if (code < 0 || !Number.isInteger(n) || n < 0 || n > x.length || n > next.length || (target !== null && n > target.length)) return null;
    if (!(gain > 0 && gain < Infinity) || !Number.isFinite(offset) || !Number.isFinite(beta) || !Number.isFinite(dt) || Number.isNaN(bound)) return null;
    const f32 = next instanceof Float32Array;
    if (f32 !== x instanceof Float32Array || (target !== null && f32 !== target instanceof Float32Array)) return null;
    if (!own(next.buffer) || !own(x.buffer) || (target !== null && !own(target.buffer))) return null;
    const bytes = n * next.BYTES_PER_ELEMENT;
    if (!disjoint(next, x, bytes) || (target !== null && !disjoint(next, target, bytes))) return null;
    if (n === 0) return 0;
    const r = (f32 ? X.rateStepF32 : X.rateStepF64)(code, gain, offset, x.byteOffset, next.byteOffset, target === null ? 0 : target.byteOffset, target === null ? 0 : beta, dt, bound, n);
    return r === -2 ? null : r;
  };
}

/** The two WebAssembly exports a unit fill calls (byte offsets, element count). */
interface UnitFillExports {
  unitFillF32(code: number, gain: number, offset: number, out: number, x: number, n: number): void;
  unitFillF64(code: number, gain: number, offset: number, out: number, x: number, n: number): void;
}

/**
 * Builds the `unitFill` method of a WASM backend: the fast path only (both
 * arrays arena views of one dtype, `n` within both, `out` and `x` either the
 * same elements or disjoint, a finite `offset` and a finite `gain > 0`);
 * anything else returns false without writing.
 * @internal
 */
export function createUnitFill(
  X: UnitFillExports,
  own: (b: ArrayBufferLike) => boolean,
): NonNullable<KernelBackend["unitFill"]> {
  return (kind, slope, gain, offset, out, x, n) => {
    const code = unitFillCode(kind, slope);
    if (code < 0 || !Number.isInteger(n) || n < 0 || n > out.length || n > x.length) return false;
    if (!(gain > 0 && gain < Infinity) || !Number.isFinite(offset)) return false;
    if (!own(out.buffer) || !own(x.buffer)) return false;
    const f32 = out instanceof Float32Array;
    if (f32 !== x instanceof Float32Array) return false;
    const bytes = n * out.BYTES_PER_ELEMENT;
    const po = out.byteOffset;
    const px = x.byteOffset;
    if (po !== px && po < px + bytes && px < po + bytes) return false; // partial overlap
    if (n > 0) (f32 ? X.unitFillF32 : X.unitFillF64)(code, gain, offset, po, px, n);
    return true;
  };
}

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
