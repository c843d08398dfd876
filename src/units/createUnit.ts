/**
 * The built-in kinds' entry points: make a unit function from a spec, normalise a spec, and
 * tabulate a noise-averaged rate, each through a unit registry (the built-in one by default).
 * @module
 */
import { EbbflowError, issue } from "../errors/index.js";
import { builtinUnits } from "./builtins.js";
import { tabulateNoisy, type NoisyRateTable, type NoisySpec } from "./noisy.js";
import type { UnitRegistry, UnitSpecInput } from "./registry.js";
import type { SpecOf, UnitFunction, UnitKind, UnitSpec } from "./spec.js";

/** Every built-in unit kind, in documentation order. @category Units */
export const unitKinds: readonly UnitKind[] = builtinUnits.kinds as readonly UnitKind[];

/**
 * Validates a unit spec once and returns a fast unit object: rate, slope,
 * bounds and allocation-free fills (which may run in place, `out === x`).
 *
 * A `noisy` spec is tabulated here (see `tabulateNoisyRate` for the table,
 * its default range, the interpolation and the extrapolation beyond it);
 * with the default resolution this takes some tens of milliseconds, once.
 * @param spec The unit function as data.
 * @param units The registry that knows the kind (default: the built-in kinds).
 * @returns The unit function; its `spec` is a frozen normalised copy.
 * @throws EbbflowError `invalid_parameter` with the parameter path (`gain`,
 *   `offset`, `threshold`, `sigma`, `resolution`, `range`, `range[0]`,
 *   `base.gain`, ...) for NaN, infinite or out-of-range values, or
 *   `unknown_name` for an unknown `kind` or field; every problem is listed in `issues`.
 * @category Units
 * @example
 * ```ts
 * const unit = createUnit({ kind: "logistic", gain: 2 });
 * unit.value(0); // 0.5
 * unit.slope(0); // 0.5
 * unit.fill(new Float32Array(2), Float32Array.of(0, 100)); // Float32Array [0.5, 1]
 * ```
 */
export function createUnit(spec: UnitSpec | UnitSpecInput, units: UnitRegistry = builtinUnits): UnitFunction {
  return units.create(spec);
}

/**
 * Validates a unit spec and returns a normalised copy with defaults filled in
 * (a noisy spec's `range` is filled in only by `createUnit`, since its
 * default depends on the base). Reports every problem at once.
 * @param spec A unit spec, typically parsed from a config file.
 * @param units The registry that knows the kind (default: the built-in kinds).
 * @returns The normalised spec.
 * @throws EbbflowError `invalid_parameter` (e.g. path `gain`, `base.gain`,
 *   `sigma`, `resolution`, `range[0]`) or `unknown_name` (an unknown `kind` or field);
 *   `issues` lists every problem.
 * @category Units
 * @example
 * ```ts
 * normalizeUnitSpec({ kind: "logistic" }); // { kind: "logistic", gain: 1, offset: 0 }
 * ```
 */
export function normalizeUnitSpec<S extends UnitSpec>(spec: S, units: UnitRegistry = builtinUnits): S {
  return units.parse(spec) as S;
}

/**
 * Tabulates the noise-averaged rate `F(x) = E[f(x + sigma Z)]` (Z standard
 * normal) of a base unit `f`.
 *
 * - Table: `resolution` points evenly spaced over `range`. Default range:
 *   the base's transition interval (its `smoothing.transition`) widened by
 *   `8 sigma` on both sides, where the transition interval is
 *   `offset ± 36/gain` (logistic), `±19.5` (tanh),
 *   `±36/gain` (softplus), `[threshold, threshold + 50/gain]` (saturating),
 *   `[0, 1]` (hard sigmoid) and `[0, 0]` (relu, linear). A base of a user's
 *   kind without smoothing facts needs an explicit `range`. Default resolution 1024.
 * - Each point: `F` and `F' = E[f'(x + sigma Z)]` by composite Gauss–Legendre
 *   quadrature split at the base's kinks (near machine precision).
 * - Between points: cubic Hermite interpolation of values and slopes, so the
 *   interpolation error is O(step^4) for the rate and O(step^3) for the slope,
 *   and the reported slope is exactly the derivative of the reported rate.
 *   Slopes are limited where needed so that the interpolant is monotone
 *   (Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17:238); its evaluation
 *   in floating point may still step back by one ulp between adjacent inputs.
 * - Beyond the table: the base shifted to join continuously,
 *   `F(x) ≈ f(x) + (F(low) - f(low))` for `x < low` (likewise above `high`),
 *   clamped to the base's bounds (slope 0 where clamped). With the default
 *   range the error there is of the order of `P(|Z| > 8) ≈ 1e-15` (times
 *   `sigma` for the unbounded bases), except for the saturating base, whose
 *   slowly curving tail leaves up to about `sigma^2 gain^2 / 125000` (from
 *   `sigma^2 f''/2` at `gain z = 50`); pass a wider `range` to reduce it.
 * - Accuracy inside the table: about `step^4 max|F''''| / 384` for the rate
 *   (e.g. 6e-11 for the rectifier with `sigma = 1` and the defaults).
 * - A noisy base is merged into one: the noise variances add.
 * @param spec A noisy unit spec.
 * @param units The registry that knows the base's kind (default: the built-in kinds).
 * @returns The table.
 * @throws EbbflowError `invalid_parameter` for a bad `sigma`, `resolution`,
 *   `range` or base parameter (paths like `base.gain`), `unknown_name` for an unknown kind.
 * @category Units
 * @example
 * ```ts
 * const t = tabulateNoisyRate({ kind: "noisy", base: { kind: "relu" }, sigma: 1 });
 * noisyRate(t, 0); // 0.39894228046 (exact: sigma / sqrt(2 pi) = 0.3989422804014327; table error ~6e-11)
 * ```
 */
export function tabulateNoisyRate(spec: SpecOf<"noisy">, units: UnitRegistry = builtinUnits): NoisyRateTable {
  const normal = units.parse(spec);
  if (normal.kind !== "noisy") throw new EbbflowError(issue("invalid_parameter", "kind", '"noisy"', normal.kind));
  return tabulateNoisy(Object.freeze(normal) as NoisySpec, units);
}
