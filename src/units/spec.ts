/**
 * Unit functions as data: the spec types of the built-in kinds (derived from their descriptors)
 * and the unit-function interface every kind implements.
 * @module
 */
import type { UnitKernelKind as GeneratedUnitKernelKind } from "../kernels/wasm/generated/layout.js";
import type { FloatArray } from "../types/index.js";
import type { builtinUnitDescriptors } from "./builtins.js";
import type { SmoothingFeature } from "./gaussian.js";
import type { InputOfDescriptor } from "./registry.js";

/**
 * A unit (activation) function of a built-in kind as data. Optional fields take their defaults
 * when absent (or `undefined`); each kind's formula and parameters are in its descriptor's
 * `summary` (and `builtinUnits.get(kind).summary`):
 *
 * - `logistic`: `1 / (1 + exp(-gain (x - offset)))`; `gain > 0` (default 1), `offset` (default 0).
 * - `tanh`: `tanh(x)`.
 * - `linear`: the identity.
 * - `relu`: `max(0, x)`.
 * - `hard-sigmoid`: `min(1, max(0, x))`, slope 1 on the closed interval [0, 1].
 * - `softplus`: `log(1 + exp(gain x)) / gain`; `gain > 0` (default 1).
 * - `saturating`: `u / (u + 1)` with `u = gain max(0, x - threshold)`; `gain > 0` (default 1), `threshold` (default 0).
 * - `noisy`: `E[base(x + sigma Z)]`, Z standard normal, tabulated on `resolution`
 *   points (integer >= 2, default 1024) over `range` (default: see `tabulateNoisyRate`);
 *   `base` is a unit spec of any registered kind.
 *
 * A user's kind is registered with a descriptor (see `defineUnit`); its spec is any object
 * with its `kind` ({@link UnitSpecInput}).
 * @category Units
 */
export type UnitSpec = InputOfDescriptor<(typeof builtinUnitDescriptors)[number]>;

/** The name of a built-in unit kind. @category Units */
export type UnitKind = UnitSpec["kind"];

/** The spec of one built-in kind, e.g. `SpecOf<"logistic">`. @category Units */
export type SpecOf<K extends UnitKind> = Extract<UnitSpec, { readonly kind: K }>;

/** The unit kinds the WebAssembly SIMD unit kernels evaluate (declared in assembly/layout.mjs). @category Units */
export type UnitKernelKind = GeneratedUnitKernelKind;

/**
 * How the SIMD kernels (`unitFill`, `rateStep`) evaluate a unit: the kernel's kind with the
 * logistic's gain and offset (1 and 0 for the other kinds).
 * @category Units
 */
export interface UnitKernelCall {
  readonly kind: UnitKernelKind;
  readonly gain: number;
  readonly offset: number;
}

/**
 * Where a rate function changes character, for Gaussian averaging (the noisy unit over it).
 * @category Units
 */
export interface UnitSmoothing {
  /** Kinks and steep transitions. */
  readonly features: readonly SmoothingFeature[];
  /**
   * Interval outside which the function is, to double precision, constant or linear (so a
   * Gaussian average equals the function there, up to the documented tail error).
   */
  readonly transition: readonly [number, number];
}

/**
 * A validated unit function: rate, slope and allocation-free fills. Made by a unit registry
 * (`createUnit`, `builtinUnits.create`, or a descriptor's `create`).
 * @typeParam S Its normalised spec.
 * @category Units
 */
export interface UnitFunction<S extends { readonly kind: string } = { readonly kind: string }> {
  /** Normalised, frozen copy of the spec (defaults filled in). */
  readonly spec: S;
  /** Infimum of the rate (e.g. 0, -1 or -Infinity). */
  readonly lower: number;
  /** Supremum of the rate (e.g. 1 or Infinity). */
  readonly upper: number;
  /** Rate `f(x)` for net input `x`. */
  value(x: number): number;
  /** Slope `f'(x)` with respect to the net input. */
  slope(x: number): number;
  /** Slope written from the rate `y = f(x)`, where that is natural (logistic, tanh, linear, softplus). */
  slopeFromOutput?(y: number): number;
  /**
   * `out[i] = f(x[i])` for `i < n` (default `x.length`); returns `out`.
   * Allocation-free; `out` may be `x` (in place).
   */
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T;
  /**
   * `out[i] = f'(x[i])` for `i < n` (default `x.length`); returns `out`.
   * Allocation-free; `out` may be `x` (in place).
   */
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T;
  /**
   * Where the rate changes character, for a noisy unit over this one (without it, a noisy
   * unit needs an explicit `range`).
   */
  readonly smoothing?: UnitSmoothing | undefined;
  /**
   * The SIMD kernel that computes this unit on the WebAssembly backends: set by the built-in
   * kinds whose descriptor names one, absent otherwise (then every backend runs `fill`).
   */
  readonly kernel?: UnitKernelCall | undefined;
}
