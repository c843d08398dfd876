/**
 * Unit functions as data: the spec union, the unit-function interface and the
 * validation that turns a raw spec into a normalised one.
 * @module
 */
import { EbbflowError, issue, type Issue } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";

/**
 * A unit (activation) function as data. Optional fields take their defaults
 * when absent (or `undefined`):
 *
 * - `logistic`: `1 / (1 + exp(-gain (x - offset)))`; `gain > 0` (default 1), `offset` (default 0).
 * - `tanh`: `tanh(x)`.
 * - `linear`: the identity.
 * - `relu`: `max(0, x)`.
 * - `hard-sigmoid`: `min(1, max(0, x))`, slope 1 on the closed interval [0, 1].
 * - `softplus`: `log(1 + exp(gain x)) / gain`; `gain > 0` (default 1).
 * - `saturating`: `u / (u + 1)` with `u = gain max(0, x - threshold)`; `gain > 0` (default 1), `threshold` (default 0).
 * - `noisy`: `E[base(x + sigma Z)]`, Z standard normal, tabulated on `resolution`
 *   points (integer >= 2, default 1024) over `range` (default: see `createUnit`).
 * @category Units
 */
export type UnitSpec =
  | { readonly kind: "logistic"; readonly gain?: number | undefined; readonly offset?: number | undefined }
  | { readonly kind: "tanh" }
  | { readonly kind: "linear" }
  | { readonly kind: "relu" }
  | { readonly kind: "hard-sigmoid" }
  | { readonly kind: "softplus"; readonly gain?: number | undefined }
  | { readonly kind: "saturating"; readonly gain?: number | undefined; readonly threshold?: number | undefined }
  | {
      readonly kind: "noisy";
      readonly base: UnitSpec;
      readonly sigma: number;
      readonly resolution?: number | undefined;
      readonly range?: readonly [number, number] | undefined;
    };

/** The name of a unit kind. @category Units */
export type UnitKind = UnitSpec["kind"];

/** The spec of one kind, e.g. `SpecOf<"logistic">`. @category Units */
export type SpecOf<K extends UnitKind> = Extract<UnitSpec, { readonly kind: K }>;

/** Every unit kind, in documentation order. @category Units */
export const unitKinds: readonly UnitKind[] = Object.freeze([
  "logistic",
  "tanh",
  "linear",
  "relu",
  "hard-sigmoid",
  "softplus",
  "saturating",
  "noisy",
] as const);

/**
 * A validated unit function: rate, slope and allocation-free fills.
 * Made by `createUnit`.
 * @category Units
 */
export interface UnitFunction {
  /** Normalised, frozen copy of the spec (defaults filled in). */
  readonly spec: UnitSpec;
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
}

/** Default number of table points of a noisy unit. @category Units */
export const DEFAULT_NOISY_RESOLUTION = 1024;

const allowedKeys: Record<UnitKind, readonly string[]> = {
  logistic: ["kind", "gain", "offset"],
  tanh: ["kind"],
  linear: ["kind"],
  relu: ["kind"],
  "hard-sigmoid": ["kind"],
  softplus: ["kind", "gain"],
  saturating: ["kind", "gain", "threshold"],
  noisy: ["kind", "base", "sigma", "resolution", "range"],
};

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

function positiveOr(raw: Record<string, unknown>, key: string, fallback: number, prefix: string, issues: Issue[]): number {
  const v = raw[key];
  if (v === undefined) return fallback;
  if (typeof v !== "number" || !Number.isFinite(v) || v <= 0) {
    issues.push(issue("invalid_parameter", prefix + key, "a finite number > 0", v));
    return fallback;
  }
  return v;
}

function finiteOr(raw: Record<string, unknown>, key: string, fallback: number, prefix: string, issues: Issue[]): number {
  const v = raw[key];
  if (v === undefined) return fallback;
  if (typeof v !== "number" || !Number.isFinite(v)) {
    issues.push(issue("invalid_parameter", prefix + key, "a finite number", v));
    return fallback;
  }
  return v;
}

/**
 * Checks a raw spec and fills in defaults, collecting every problem.
 * `range` of a noisy spec is left undefined here when absent (the default
 * depends on the base and is filled in by `createUnit`).
 * @internal
 */
export function collectUnitSpec(raw: unknown, prefix: string, issues: Issue[]): UnitSpec | undefined {
  if (!isRecord(raw)) {
    issues.push(issue("invalid_parameter", prefix === "" ? "" : prefix.slice(0, -1), "a unit spec object with a `kind`", raw));
    return undefined;
  }
  const kind = raw.kind;
  if (typeof kind !== "string" || !(unitKinds as readonly string[]).includes(kind)) {
    issues.push(issue("unknown_name", prefix + "kind", `one of ${unitKinds.join(", ")}`, kind));
    return undefined;
  }
  const k = kind as UnitKind;
  const allowed = allowedKeys[k];
  for (const key of Object.keys(raw)) {
    if (!allowed.includes(key)) issues.push(issue("unknown_name", prefix + key, `no such field for a ${k} unit (fields: ${allowed.join(", ")})`, raw[key]));
  }
  switch (k) {
    case "logistic":
      return { kind: k, gain: positiveOr(raw, "gain", 1, prefix, issues), offset: finiteOr(raw, "offset", 0, prefix, issues) };
    case "softplus":
      return { kind: k, gain: positiveOr(raw, "gain", 1, prefix, issues) };
    case "saturating":
      return { kind: k, gain: positiveOr(raw, "gain", 1, prefix, issues), threshold: finiteOr(raw, "threshold", 0, prefix, issues) };
    case "tanh":
    case "linear":
    case "relu":
    case "hard-sigmoid":
      return { kind: k };
    case "noisy": {
      const base = raw.base === undefined
        ? (issues.push(issue("invalid_parameter", prefix + "base", "a unit spec object with a `kind`", undefined)), undefined)
        : collectUnitSpec(raw.base, prefix + "base.", issues);
      const sigmaRaw = raw.sigma;
      let sigma = 1;
      if (typeof sigmaRaw !== "number" || !Number.isFinite(sigmaRaw) || sigmaRaw <= 0) {
        issues.push(issue("invalid_parameter", prefix + "sigma", "a finite number > 0", sigmaRaw));
      } else sigma = sigmaRaw;
      let resolution = DEFAULT_NOISY_RESOLUTION;
      const resRaw = raw.resolution;
      if (resRaw !== undefined) {
        if (typeof resRaw !== "number" || !Number.isInteger(resRaw) || resRaw < 2) {
          issues.push(issue("invalid_parameter", prefix + "resolution", "an integer >= 2", resRaw));
        } else resolution = resRaw;
      }
      let range: readonly [number, number] | undefined;
      const rangeRaw = raw.range;
      if (rangeRaw !== undefined) {
        if (!Array.isArray(rangeRaw) || rangeRaw.length !== 2) {
          issues.push(issue("invalid_parameter", prefix + "range", "a pair [low, high] of finite numbers with low < high", rangeRaw));
        } else {
          const [lo, hi] = rangeRaw as unknown[];
          let ok = true;
          if (typeof lo !== "number" || !Number.isFinite(lo)) {
            issues.push(issue("invalid_parameter", prefix + "range[0]", "a finite number", lo));
            ok = false;
          }
          if (typeof hi !== "number" || !Number.isFinite(hi)) {
            issues.push(issue("invalid_parameter", prefix + "range[1]", "a finite number", hi));
            ok = false;
          }
          if (ok && (hi as number) <= (lo as number)) {
            issues.push(issue("invalid_parameter", prefix + "range", "a pair [low, high] with low < high", rangeRaw));
            ok = false;
          }
          if (ok) range = [lo as number, hi as number];
        }
      }
      if (base === undefined) return undefined;
      return range === undefined ? { kind: k, base, sigma, resolution } : { kind: k, base, sigma, resolution, range };
    }
  }
}

/**
 * Validates a unit spec and returns a normalised copy with defaults filled in
 * (a noisy spec's `range` is filled in only by `createUnit`, since its
 * default depends on the base). Reports every problem at once.
 * @param spec A unit spec, typically parsed from a config file.
 * @returns The normalised spec.
 * @throws EbbflowError `invalid_parameter` (e.g. path `gain`, `base.gain`,
 *   `sigma`, `resolution`, `range[0]`) or `unknown_name` (an unknown `kind` or field);
 *   `issues` lists every problem.
 * @category Units
 * @example
 * ```ts
 * normaliseUnitSpec({ kind: "logistic" }); // { kind: "logistic", gain: 1, offset: 0 }
 * ```
 */
export function normaliseUnitSpec(spec: UnitSpec): UnitSpec {
  const issues: Issue[] = [];
  const out = collectUnitSpec(spec, "", issues);
  if (issues.length > 0 || out === undefined) throw new EbbflowError(issues);
  return out;
}
