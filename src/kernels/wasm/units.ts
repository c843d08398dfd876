/**
 * The unit methods of a WebAssembly backend (`unitFill`, `rateStep`) over the SIMD unit kernels;
 * the kernel codes come from the declaration in assembly/layout.mjs (the generated layout).
 * @module
 */
import type { FloatArray } from "../../types/index.js";
import type { KernelBackend } from "../backend.js";
import { UNIT_KERNEL_KINDS, type KernelExports, type UnitKernelKind } from "./generated/layout.js";

/** Kind index of the WebAssembly unit kernels (code = index * 2 + slope), from the declaration. */
const KIND_INDEX: ReadonlyMap<string, number> = new Map(UNIT_KERNEL_KINDS.map((kind: UnitKernelKind, i: number) => [kind, i]));

/**
 * The code of the WebAssembly export `unitFillF32`/`unitFillF64`
 * (kind index * 2 + slope), or -1 for a kind it does not know.
 * @internal
 */
export function unitFillCode(kind: string, slope: boolean): number {
  const k = KIND_INDEX.get(kind);
  return k === undefined ? -1 : k * 2 + (slope ? 1 : 0);
}

type RateStepExports = Pick<KernelExports, "rateStepF32" | "rateStepF64">;

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

type EnergyStepExports = Pick<KernelExports, "energyStepF32" | "energyStepF64">;

/**
 * Builds the `energyStep` method of a WASM backend: arena views of one dtype only, `n` within each,
 * `next` disjoint from `x` and `eta`, finite `dt`, finite `offset` and finite `gain > 0`; anything else
 * returns null without writing.
 * @internal
 */
export function createEnergyStep(X: EnergyStepExports, own: (b: ArrayBufferLike) => boolean): NonNullable<KernelBackend["energyStep"]> {
  const disjoint = (a: FloatArray, b: FloatArray, bytes: number) => a.byteOffset + bytes <= b.byteOffset || b.byteOffset + bytes <= a.byteOffset;
  return (kind, gain, offset, clip, x, eta, next, dt, bound, n) => {
    const code = unitFillCode(kind, false);
    if (code < 0 || !Number.isInteger(n) || n < 0 || n > x.length || n > next.length || n > eta.length) return null;
    if (!(gain > 0 && gain < Infinity) || !Number.isFinite(offset) || !Number.isFinite(dt) || Number.isNaN(bound)) return null;
    const f32 = next instanceof Float32Array;
    if (f32 !== x instanceof Float32Array || f32 !== eta instanceof Float32Array) return null;
    if (!own(next.buffer) || !own(x.buffer) || !own(eta.buffer)) return null;
    const bytes = n * next.BYTES_PER_ELEMENT;
    if (!disjoint(next, x, bytes) || !disjoint(next, eta, bytes)) return null;
    if (n === 0) return 0;
    const r = (f32 ? X.energyStepF32 : X.energyStepF64)(code, gain, offset, clip ? 1 : 0, x.byteOffset, eta.byteOffset, next.byteOffset, dt, bound, n);
    return r === -2 ? null : r;
  };
}

type UnitFillExports = Pick<KernelExports, "unitFillF32" | "unitFillF64">;

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

