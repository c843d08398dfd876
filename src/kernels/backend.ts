/**
 * The backend interface shared by the TypeScript kernels and the WebAssembly
 * SIMD kernels.
 * @module
 */
import { fail, requireInteger } from "../errors/index.js";
import type { Dtype, FloatArray } from "../types/index.js";
import type { UnitKernelKind } from "./wasm/generated/layout.js";
import type { gemm } from "./gemm.js";
import type { gemv } from "./gemv.js";
import type { ger } from "./ger.js";
import type { add, axpby, axpy, copy, fill, mul, scale, sub } from "./elementwise.js";
import type { allFinite, dot, maxAbs, maxAbsDiff, sumSquares } from "./reductions.js";
import type { addRowVector, sumRows } from "./rows.js";
import type { SparseKernels } from "./sparse.js";
import type { ActiveKernels } from "./active.js";

/**
 * Name of a kernel backend: the TypeScript loops, the WebAssembly kernels
 * compiled for 128-bit SIMD, or the same kernels with relaxed-SIMD fused
 * multiply-adds.
 * @category Kernels
 */
export type BackendName = "typescript" | "wasm-simd" | "wasm-relaxed-simd";

/**
 * One implementation of the kernels: every member has the signature and the
 * semantics of the function of the same name in the kernels module (output
 * first, nothing allocated, nothing checked, `beta = 0` overwrites without
 * reading, `alpha = 0` does not read the inputs, the same aliasing rules).
 *
 * Results agree between backends within the rounding bounds the kernels
 * document: the elementwise kernels, the maxima, `addRowVector` and (in
 * float64) `ger` are bit-identical; sums (gemm, gemv, sumRows, dot) may be
 * added in a different order, and the relaxed-SIMD backend may fuse a
 * multiply and an add into one rounding.
 *
 * `allocate` returns a zeroed array of the backend's preferred kind: an
 * ordinary typed array for the TypeScript backend, a view into WebAssembly
 * memory for the WASM backends (arrays the WASM kernels read without a copy).
 * @category Kernels
 */
export interface KernelBackend {
  /** Which implementation this is. */
  readonly name: BackendName;
  /**
   * A zeroed array of `n` elements of the given precision.
   * @throws {@link EbbflowError} `invalid_parameter` when `dtype` is not
   * `"float32"`/`"float64"` or `n` is not an integer ≥ 0.
   */
  allocate(dtype: Dtype, n: number): FloatArray;
  /** Matrix-matrix product, as {@link gemm}. */
  readonly gemm: typeof gemm;
  /** Matrix-vector product, as {@link gemv}. */
  readonly gemv: typeof gemv;
  /** Outer-product accumulation, as {@link ger}. */
  readonly ger: typeof ger;
  /** Elementwise sum, as {@link add}. */
  readonly add: typeof add;
  /** Elementwise difference, as {@link sub}. */
  readonly sub: typeof sub;
  /** Elementwise product, as {@link mul}. */
  readonly mul: typeof mul;
  /** Scaled accumulation, as {@link axpy}. */
  readonly axpy: typeof axpy;
  /** Linear combination, as {@link axpby}. */
  readonly axpby: typeof axpby;
  /** Scaling, as {@link scale}. */
  readonly scale: typeof scale;
  /** Fill, as {@link fill}. */
  readonly fill: typeof fill;
  /** Copy, as {@link copy}. */
  readonly copy: typeof copy;
  /** Largest absolute difference, as {@link maxAbsDiff}. */
  readonly maxAbsDiff: typeof maxAbsDiff;
  /** Finiteness test, as {@link allFinite}. */
  readonly allFinite: typeof allFinite;
  /** Largest magnitude, as {@link maxAbs}. */
  readonly maxAbs: typeof maxAbs;
  /** Inner product, as {@link dot}. */
  readonly dot: typeof dot;
  /** Sum of squares, as {@link sumSquares}. */
  readonly sumSquares: typeof sumSquares;
  /** Row broadcast, as {@link addRowVector}. */
  readonly addRowVector: typeof addRowVector;
  /** Column sums, as {@link sumRows}. */
  readonly sumRows: typeof sumRows;
  /**
   * Optional: the row-compressed sparse kernels (see `sparseDrive`); both built-in backends define them.
   * Code that finds none uses the TypeScript kernels (`typescriptSparseKernels`).
   */
  readonly sparse?: SparseKernels | undefined;
  /**
   * Optional: the activity-sparse product kernels (see `activeProduct`), which skip presynaptic units at
   * exactly zero; both built-in backends define them. Code that finds none runs the dense `gemm`.
   */
  readonly active?: ActiveKernels | undefined;
  /**
   * Optional: a unit (activation) function or its slope, elementwise:
   * `out[i] = f(x[i])` (or `f'(x[i])` when `slope`) for `i < n`, with the
   * definitions of the unit functions (`createUnit`): `"logistic"` uses
   * `gain` and `offset`, the other kinds ignore them. `out` may be `x`.
   *
   * Returns `false`, writing nothing, for a case the backend does not handle
   * (the WASM backends handle only arena views of one dtype, never copy); the
   * caller then runs the unit's own `fill`/`fillSlope`. The TypeScript
   * backend does not define it. See `fillUnit` for the accuracy and a
   * helper that falls back by itself.
   */
  readonly unitFill?:
    | ((
        kind: UnitKernelKind,
        slope: boolean,
        gain: number,
        offset: number,
        out: FloatArray,
        x: FloatArray,
        n: number,
      ) => boolean)
    | undefined;
  /**
   * Optional: one settling step of rate dynamics for `n` values of a layer, in one pass:
   * `next ← x + dt·(f(η + β·t − β·x) − x)` (the β terms only when `target` is given), where `next`
   * holds the net input η on entry and the new state on return, `x` is the state; with the unit
   * definitions of `unitFill`. The values are bit for bit those of the separate kernels called in the
   * order `axpy(η, t, β)`, `axpy(η, x, −β)`, unit fill, `sub(η, η, x)`, `axpby(η, x, η, 1, dt)`.
   *
   * Returns the largest `|next − x|` (in float64), `-1` when a value of `next` is NaN or has a
   * magnitude above `bound` (the caller reports it from `next`), or `null`, writing nothing, for a case
   * the backend does not handle (then the caller runs the separate kernels). The TypeScript backend
   * does not define it.
   */
  readonly rateStep?:
    | ((
        kind: UnitKernelKind,
        gain: number,
        offset: number,
        x: FloatArray,
        next: FloatArray,
        target: FloatArray | null,
        beta: number,
        dt: number,
        bound: number,
        n: number,
      ) => number | null)
    | undefined;
  /**
   * Optional: one settling step of energy dynamics for `n` values of a free, un-nudged layer, in one
   * pass: `next ← x + dt·(f′(x)·η − x)`, then `next ← f(next)` when `clip` (the hard sigmoid's clip to
   * [0, 1]), where `x` is the state, `eta` the net input (read only) and `next` is written; with the unit
   * definitions of `unitFill`. The values are bit for bit those of the separate kernels called in the
   * order unit fill (slope, into `next`), `mul(next, next, eta)`, `sub(next, next, x)`,
   * `axpby(next, x, next, 1, dt)` and, with `clip`, unit fill (rate, in place).
   *
   * Returns the largest `|next − x|` (in float64), `-1` when a value of `next` is NaN or infinite or
   * has a magnitude above `bound` (the caller then makes the separate checks on `next`), or `null`,
   * writing nothing, for a case the backend does not handle (then the caller runs the separate
   * kernels). The TypeScript backend does not define it.
   */
  readonly energyStep?:
    | ((kind: UnitKernelKind, gain: number, offset: number, clip: boolean, x: FloatArray, eta: FloatArray, next: FloatArray, dt: number, bound: number, n: number) => number | null)
    | undefined;
}

/** Validates the arguments of `allocate` (shared by every backend). @internal */
export function checkAllocation(dtype: unknown, n: unknown): void {
  if (dtype !== "float32" && dtype !== "float64") fail("invalid_parameter", "dtype", '"float32" or "float64"', dtype);
  requireInteger("n", n, 0);
}
