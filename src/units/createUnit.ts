/**
 * Factory that validates a unit spec once and returns a fast unit object with
 * specialised, allocation-free fill loops.
 * @module
 */
import { EbbflowError, type Issue } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import { hardSigmoid, hardSigmoidSlope } from "./hardSigmoid.js";
import { fillLength } from "./lift.js";
import { linear, linearSlope } from "./linear.js";
import { logistic, logisticSlope, logisticSlopeFromOutput } from "./logistic.js";
import { noisyRate, noisyRateSlope, tabulateNoisyRate, type NoisyRateTable } from "./noisy.js";
import { relu, reluSlope } from "./relu.js";
import { saturating, saturatingSlope } from "./saturating.js";
import { softplus, softplusSlope, softplusSlopeFromOutput } from "./softplus.js";
import { collectUnitSpec, type SpecOf, type UnitFunction, type UnitSpec } from "./spec.js";
import { tanh, tanhSlope, tanhSlopeFromOutput } from "./tanh.js";

// One class per kind: each fill loop calls one known scalar function, so the
// engine can inline it (a single generic loop over many functions cannot).

class LogisticUnit implements UnitFunction {
  readonly lower = 0;
  readonly upper = 1;
  private readonly gain: number;
  private readonly offset: number;
  constructor(readonly spec: SpecOf<"logistic">) {
    this.gain = spec.gain ?? 1;
    this.offset = spec.offset ?? 0;
  }
  value(x: number): number {
    return logistic(x, this.gain, this.offset);
  }
  slope(x: number): number {
    return logisticSlope(x, this.gain, this.offset);
  }
  slopeFromOutput(y: number): number {
    return logisticSlopeFromOutput(y, this.gain);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    const o = this.offset;
    for (let i = 0; i < m; i++) out[i] = logistic(x[i] as number, g, o);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    const o = this.offset;
    for (let i = 0; i < m; i++) out[i] = logisticSlope(x[i] as number, g, o);
    return out;
  }
}

class TanhUnit implements UnitFunction {
  readonly lower = -1;
  readonly upper = 1;
  constructor(readonly spec: SpecOf<"tanh">) {}
  value(x: number): number {
    return tanh(x);
  }
  slope(x: number): number {
    return tanhSlope(x);
  }
  slopeFromOutput(y: number): number {
    return tanhSlopeFromOutput(y);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = tanh(x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = tanhSlope(x[i] as number);
    return out;
  }
}

class LinearUnit implements UnitFunction {
  readonly lower = -Infinity;
  readonly upper = Infinity;
  constructor(readonly spec: SpecOf<"linear">) {}
  value(x: number): number {
    return linear(x);
  }
  slope(x: number): number {
    return linearSlope(x);
  }
  slopeFromOutput(y: number): number {
    return linearSlope(y);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = linear(x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = linearSlope(x[i] as number);
    return out;
  }
}

class ReluUnit implements UnitFunction {
  readonly lower = 0;
  readonly upper = Infinity;
  constructor(readonly spec: SpecOf<"relu">) {}
  value(x: number): number {
    return relu(x);
  }
  slope(x: number): number {
    return reluSlope(x);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = relu(x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = reluSlope(x[i] as number);
    return out;
  }
}

class HardSigmoidUnit implements UnitFunction {
  readonly lower = 0;
  readonly upper = 1;
  constructor(readonly spec: SpecOf<"hard-sigmoid">) {}
  value(x: number): number {
    return hardSigmoid(x);
  }
  slope(x: number): number {
    return hardSigmoidSlope(x);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = hardSigmoid(x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    for (let i = 0; i < m; i++) out[i] = hardSigmoidSlope(x[i] as number);
    return out;
  }
}

class SoftplusUnit implements UnitFunction {
  readonly lower = 0;
  readonly upper = Infinity;
  private readonly gain: number;
  constructor(readonly spec: SpecOf<"softplus">) {
    this.gain = spec.gain ?? 1;
  }
  value(x: number): number {
    return softplus(x, this.gain);
  }
  slope(x: number): number {
    return softplusSlope(x, this.gain);
  }
  slopeFromOutput(y: number): number {
    return softplusSlopeFromOutput(y, this.gain);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    for (let i = 0; i < m; i++) out[i] = softplus(x[i] as number, g);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    for (let i = 0; i < m; i++) out[i] = softplusSlope(x[i] as number, g);
    return out;
  }
}

class SaturatingUnit implements UnitFunction {
  readonly lower = 0;
  readonly upper = 1;
  private readonly gain: number;
  private readonly threshold: number;
  constructor(readonly spec: SpecOf<"saturating">) {
    this.gain = spec.gain ?? 1;
    this.threshold = spec.threshold ?? 0;
  }
  value(x: number): number {
    return saturating(x, this.gain, this.threshold);
  }
  slope(x: number): number {
    return saturatingSlope(x, this.gain, this.threshold);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    const th = this.threshold;
    for (let i = 0; i < m; i++) out[i] = saturating(x[i] as number, g, th);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const g = this.gain;
    const th = this.threshold;
    for (let i = 0; i < m; i++) out[i] = saturatingSlope(x[i] as number, g, th);
    return out;
  }
}

class NoisyUnit implements UnitFunction {
  readonly spec: SpecOf<"noisy">;
  readonly lower: number;
  readonly upper: number;
  private readonly table: NoisyRateTable;
  constructor(table: NoisyRateTable) {
    this.table = table;
    this.spec = table.spec;
    this.lower = table.lower;
    this.upper = table.upper;
  }
  value(x: number): number {
    return noisyRate(this.table, x);
  }
  slope(x: number): number {
    return noisyRateSlope(this.table, x);
  }
  fill<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const t = this.table;
    for (let i = 0; i < m; i++) out[i] = noisyRate(t, x[i] as number);
    return out;
  }
  fillSlope<T extends FloatArray>(out: T, x: FloatArray, n?: number): T {
    const m = fillLength(out, x, n);
    const t = this.table;
    for (let i = 0; i < m; i++) out[i] = noisyRateSlope(t, x[i] as number);
    return out;
  }
}

/**
 * Validates a unit spec once and returns a fast unit object: rate, slope,
 * bounds and allocation-free fills (which may run in place, `out === x`).
 *
 * A `noisy` spec is tabulated here (see `tabulateNoisyRate` for the table,
 * its default range, the interpolation and the extrapolation beyond it);
 * with the default resolution this takes some tens of milliseconds, once.
 * @param spec The unit function as data.
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
export function createUnit(spec: UnitSpec): UnitFunction {
  const issues: Issue[] = [];
  const normal = collectUnitSpec(spec, "", issues);
  if (issues.length > 0 || normal === undefined) throw new EbbflowError(issues);
  switch (normal.kind) {
    case "logistic":
      return new LogisticUnit(Object.freeze(normal));
    case "tanh":
      return new TanhUnit(Object.freeze(normal));
    case "linear":
      return new LinearUnit(Object.freeze(normal));
    case "relu":
      return new ReluUnit(Object.freeze(normal));
    case "hard-sigmoid":
      return new HardSigmoidUnit(Object.freeze(normal));
    case "softplus":
      return new SoftplusUnit(Object.freeze(normal));
    case "saturating":
      return new SaturatingUnit(Object.freeze(normal));
    case "noisy":
      return new NoisyUnit(tabulateNoisyRate(normal));
  }
}
