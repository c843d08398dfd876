/**
 * createUnit: validation once, normalised spec, bounds, and the contracts of
 * the unit objects (slope = finite difference, monotone, bounded, fills equal
 * the scalar map in both precisions and in place).
 */
import fc from "fast-check";
import { describe, expect, expectTypeOf, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import {
  createUnit,
  hardSigmoid,
  hardSigmoidSlope,
  linear,
  logistic,
  logisticSlope,
  normalizeUnitSpec,
  relu,
  reluSlope,
  saturating,
  saturatingSlope,
  softplus,
  softplusSlope,
  tanh,
  tanhSlope,
  type SpecOf,
  type UnitFunction,
  type UnitSpec,
} from "../../src/units/index.js";
import { check } from "../helpers/property.js";
import { EPS64, expectClose } from "../helpers/tolerance.js";

interface Entry {
  readonly spec: UnitSpec;
  readonly lower: number;
  readonly upper: number;
  /** Inputs where the slope jumps (kinks, or the ends of a noisy table). */
  readonly kinks: readonly number[];
  /** Independent scalar form, when one exists. */
  readonly scalar?: readonly [(x: number) => number, (x: number) => number];
  readonly fromOutput: boolean;
}

const entries: readonly Entry[] = [
  { spec: { kind: "logistic" }, lower: 0, upper: 1, kinks: [], scalar: [(x) => logistic(x), (x) => logisticSlope(x)], fromOutput: true },
  { spec: { kind: "logistic", gain: 3, offset: 0.5 }, lower: 0, upper: 1, kinks: [], scalar: [(x) => logistic(x, 3, 0.5), (x) => logisticSlope(x, 3, 0.5)], fromOutput: true },
  { spec: { kind: "tanh" }, lower: -1, upper: 1, kinks: [], scalar: [tanh, tanhSlope], fromOutput: true },
  { spec: { kind: "linear" }, lower: -Infinity, upper: Infinity, kinks: [], scalar: [linear, () => 1], fromOutput: true },
  { spec: { kind: "relu" }, lower: 0, upper: Infinity, kinks: [0], scalar: [relu, reluSlope], fromOutput: false },
  { spec: { kind: "hard-sigmoid" }, lower: 0, upper: 1, kinks: [0, 1], scalar: [hardSigmoid, hardSigmoidSlope], fromOutput: false },
  { spec: { kind: "softplus", gain: 2 }, lower: 0, upper: Infinity, kinks: [], scalar: [(x) => softplus(x, 2), (x) => softplusSlope(x, 2)], fromOutput: true },
  { spec: { kind: "saturating", gain: 4, threshold: 0.2 }, lower: 0, upper: 1, kinks: [0.2], scalar: [(x) => saturating(x, 4, 0.2), (x) => saturatingSlope(x, 4, 0.2)], fromOutput: false },
  { spec: { kind: "noisy", base: { kind: "relu" }, sigma: 0.5 }, lower: 0, upper: Infinity, kinks: [-4, 4], fromOutput: false },
  { spec: { kind: "noisy", base: { kind: "logistic", gain: 2 }, sigma: 1, resolution: 256 }, lower: 0, upper: 1, kinks: [-26, 26], fromOutput: false },
  { spec: { kind: "noisy", base: { kind: "hard-sigmoid" }, sigma: 0.2, resolution: 300 }, lower: 0, upper: 1, kinks: [-1.6, 2.6], fromOutput: false },
  { spec: { kind: "noisy", base: { kind: "saturating", gain: 2, threshold: 1 }, sigma: 0.3, resolution: 512 }, lower: 0, upper: 1, kinks: [1 - 2.4, 1 + 25 + 2.4], fromOutput: false },
  { spec: { kind: "noisy", base: { kind: "tanh" }, sigma: 0.7, resolution: 400 }, lower: -1, upper: 1, kinks: [-19.5 - 5.6, 19.5 + 5.6], fromOutput: false },
  { spec: { kind: "noisy", base: { kind: "softplus" }, sigma: 1, resolution: 400, range: [-10, 10] }, lower: 0, upper: Infinity, kinks: [-10, 10], fromOutput: false },
  { spec: { kind: "noisy", base: { kind: "linear" }, sigma: 1, resolution: 64 }, lower: -Infinity, upper: Infinity, kinks: [-8, 8], fromOutput: false },
];

const units: readonly [string, Entry, UnitFunction][] = entries.map((e) => [JSON.stringify(e.spec), e, createUnit(e.spec)]);
const xArb = fc.double({ min: -60, max: 60, noNaN: true });

describe.each(units)("createUnit(%s)", (_label, entry, unit) => {
  it("reports the documented bounds", () => {
    expect(unit.lower).toBe(entry.lower);
    expect(unit.upper).toBe(entry.upper);
  });
  it("agrees with its scalar functions bit for bit (non-noisy kinds)", () => {
    if (entry.scalar === undefined) return;
    const [f, df] = entry.scalar;
    check(
      fc.property(xArb, (x) => {
        expect(unit.value(x)).toBe(f(x));
        expect(unit.slope(x)).toBe(df(x));
      }),
    );
  });
  it("slope equals a centred finite difference away from kinks and table ends", () => {
    check(
      fc.property(xArb, (x) => {
        const h = 1e-5 * Math.max(1, Math.abs(x));
        if (entry.kinks.some((k) => Math.abs(x - k) < 4 * h)) return;
        const fd = (unit.value(x + h) - unit.value(x - h)) / (2 * h);
        const tol = 1e-6 + (8 * EPS64 * Math.max(1, Math.abs(unit.value(x)))) / h;
        expectClose(unit.slope(x), fd, tol, `x=${x}`);
      }),
      300,
    );
  });
  it("is non-decreasing (noisy tables: up to rounding of the interpolant, two ulps)", () => {
    const noisy = entry.spec.kind === "noisy";
    check(
      fc.property(xArb, xArb, (a, b) => {
        const [lo, hi] = a <= b ? [a, b] : [b, a];
        const slack = noisy ? 4 * EPS64 * Math.max(1, Math.abs(unit.value(hi))) : 0;
        expect(unit.value(lo), `f(${lo}) <= f(${hi})`).toBeLessThanOrEqual(unit.value(hi) + slack);
      }),
      500,
    );
  });
  it("keeps lower <= f <= upper and slope >= 0, even far outside any table", () => {
    check(
      fc.property(fc.double({ min: -1e9, max: 1e9, noNaN: true }), (x) => {
        const y = unit.value(x);
        expect(y).toBeGreaterThanOrEqual(unit.lower);
        expect(y).toBeLessThanOrEqual(unit.upper);
        expect(unit.slope(x)).toBeGreaterThanOrEqual(0);
      }),
      300,
    );
  });
  it("slopeFromOutput exists exactly where documented and matches the slope", () => {
    expect(unit.slopeFromOutput !== undefined).toBe(entry.fromOutput);
    const sfo = unit.slopeFromOutput;
    if (sfo === undefined) return;
    check(
      fc.property(xArb, (x) => {
        expectClose(sfo.call(unit, unit.value(x)), unit.slope(x), 1e-12, `x=${x}`);
      }),
    );
  });
  it("fill and fillSlope equal the scalar map: float64 bit for bit, float32 after rounding", () => {
    check(
      fc.property(fc.array(xArb, { maxLength: 40 }), (xs) => {
        const x64 = Float64Array.from(xs);
        const x32 = Float32Array.from(xs);
        const v64 = unit.fill(new Float64Array(xs.length), x64);
        const s64 = unit.fillSlope(new Float64Array(xs.length), x64);
        const v32 = unit.fill(new Float32Array(xs.length), x32);
        const s32 = unit.fillSlope(new Float32Array(xs.length), x32);
        for (let i = 0; i < xs.length; i++) {
          expect(v64[i]).toBe(unit.value(x64[i] as number));
          expect(s64[i]).toBe(unit.slope(x64[i] as number));
          expect(v32[i]).toBe(Math.fround(unit.value(x32[i] as number)));
          expect(s32[i]).toBe(Math.fround(unit.slope(x32[i] as number)));
        }
      }),
      50,
    );
  });
  it("fill and fillSlope run in place (out === x) with the same result", () => {
    check(
      fc.property(fc.array(xArb, { maxLength: 40 }), fc.boolean(), (xs, single) => {
        const make = (): Float32Array | Float64Array => (single ? Float32Array.from(xs) : Float64Array.from(xs));
        const x = make();
        const wantV = unit.fill(make(), make());
        const wantS = unit.fillSlope(make(), make());
        expect(unit.fill(x, x)).toBe(x);
        expect(Array.from(x)).toEqual(Array.from(wantV));
        const y = make();
        expect(unit.fillSlope(y, y)).toBe(y);
        expect(Array.from(y)).toEqual(Array.from(wantS));
      }),
      50,
    );
  });
  it("fills only the first n elements", () => {
    const x = Float64Array.of(-1, 0.5, 2, 3);
    const out = new Float64Array(4).fill(-7);
    unit.fill(out, x, 2);
    expect(Array.from(out)).toEqual([unit.value(-1), unit.value(0.5), -7, -7]);
    unit.fillSlope(out, x, 1);
    expect(out[0]).toBe(unit.slope(-1));
    expect(out[2]).toBe(-7);
  });
  it("propagates NaN in value and slope", () => {
    expect(unit.value(Number.NaN)).toBeNaN();
    expect(unit.slope(Number.NaN)).toBeNaN();
  });
});

describe("createUnit: normalised spec", () => {
  it("fills in defaults and returns a frozen copy, leaving the input untouched", () => {
    const input = { kind: "logistic" } as const;
    const unit = createUnit(input);
    expect(unit.spec).toEqual({ kind: "logistic", gain: 1, offset: 0 });
    expect(unit.spec).not.toBe(input);
    expect(Object.isFrozen(unit.spec)).toBe(true);
    expect(input).toEqual({ kind: "logistic" });
    expect(createUnit({ kind: "softplus" }).spec).toEqual({ kind: "softplus", gain: 1 });
    expect(createUnit({ kind: "saturating", gain: undefined }).spec).toEqual({ kind: "saturating", gain: 1, threshold: 0 });
  });
  it("fills a noisy spec's resolution and range (default range: transition interval ± 8 sigma)", () => {
    const unit = createUnit({ kind: "noisy", base: { kind: "hard-sigmoid" }, sigma: 0.25 });
    expect(unit.spec).toEqual({ kind: "noisy", base: { kind: "hard-sigmoid" }, sigma: 0.25, resolution: 1024, range: [-2, 3] });
    const s = unit.spec as SpecOf<"noisy">;
    expect(Object.isFrozen(s)).toBe(true);
    expect(Object.isFrozen(s.base)).toBe(true);
    expect(Object.isFrozen(s.range)).toBe(true);
    expect(createUnit({ kind: "noisy", base: { kind: "logistic", gain: 2, offset: 1 }, sigma: 0.5, resolution: 16 }).spec).toEqual({
      kind: "noisy",
      base: { kind: "logistic", gain: 2, offset: 1 },
      sigma: 0.5,
      resolution: 16,
      range: [1 - 18 - 4, 1 + 18 + 4],
    });
  });
  it("normalizeUnitSpec gives the same normalised spec without building a unit", () => {
    expect(normalizeUnitSpec({ kind: "saturating", threshold: 2 })).toEqual({ kind: "saturating", gain: 1, threshold: 2 });
  });
  it("accepts specs whose optional fields are typed `| undefined` (config data)", () => {
    type Data = { kind: "logistic"; gain?: number | undefined; offset?: number | undefined } | { kind: "noisy"; base: { kind: "relu" }; sigma: number; range?: [number, number] | undefined };
    expectTypeOf<Data>().toExtend<UnitSpec>();
    expectTypeOf<SpecOf<"softplus">>().toEqualTypeOf<{ readonly kind: "softplus"; readonly gain?: number | undefined }>();
  });
});

describe("createUnit: bad parameters throw EbbflowError naming the parameter", () => {
  const bad: [string, unknown, string, string][] = [
    ["negative gain", { kind: "logistic", gain: -1 }, "invalid_parameter", "gain"],
    ["zero gain", { kind: "softplus", gain: 0 }, "invalid_parameter", "gain"],
    ["NaN gain", { kind: "saturating", gain: Number.NaN }, "invalid_parameter", "gain"],
    ["infinite gain", { kind: "logistic", gain: Infinity }, "invalid_parameter", "gain"],
    ["string gain", { kind: "logistic", gain: "2" }, "invalid_parameter", "gain"],
    ["NaN offset", { kind: "logistic", offset: Number.NaN }, "invalid_parameter", "offset"],
    ["infinite threshold", { kind: "saturating", threshold: -Infinity }, "invalid_parameter", "threshold"],
    ["bad base gain", { kind: "noisy", base: { kind: "logistic", gain: -2 }, sigma: 1 }, "invalid_parameter", "base.gain"],
    ["nested bad base", { kind: "noisy", base: { kind: "noisy", base: { kind: "softplus", gain: Number.NaN }, sigma: 1 }, sigma: 1 }, "invalid_parameter", "base.base.gain"],
    ["zero sigma", { kind: "noisy", base: { kind: "relu" }, sigma: 0 }, "invalid_parameter", "sigma"],
    ["negative sigma", { kind: "noisy", base: { kind: "relu" }, sigma: -1 }, "invalid_parameter", "sigma"],
    ["missing sigma", { kind: "noisy", base: { kind: "relu" } }, "invalid_parameter", "sigma"],
    ["resolution 1", { kind: "noisy", base: { kind: "relu" }, sigma: 1, resolution: 1 }, "invalid_parameter", "resolution"],
    ["fractional resolution", { kind: "noisy", base: { kind: "relu" }, sigma: 1, resolution: 10.5 }, "invalid_parameter", "resolution"],
    ["reversed range", { kind: "noisy", base: { kind: "relu" }, sigma: 1, range: [2, 1] }, "invalid_parameter", "range"],
    ["empty range", { kind: "noisy", base: { kind: "relu" }, sigma: 1, range: [1, 1] }, "invalid_parameter", "range"],
    ["NaN range end", { kind: "noisy", base: { kind: "relu" }, sigma: 1, range: [Number.NaN, 1] }, "invalid_parameter", "range[0]"],
    ["infinite range end", { kind: "noisy", base: { kind: "relu" }, sigma: 1, range: [0, Infinity] }, "invalid_parameter", "range[1]"],
    ["range of three", { kind: "noisy", base: { kind: "relu" }, sigma: 1, range: [0, 1, 2] }, "invalid_parameter", "range"],
    ["missing base", { kind: "noisy", sigma: 1 }, "invalid_parameter", "base"],
    ["base not an object", { kind: "noisy", base: "relu", sigma: 1 }, "invalid_parameter", "base"],
    ["unknown kind", { kind: "sigmoidal" }, "unknown_name", "kind"],
    ["unknown base kind", { kind: "noisy", base: { kind: "step" }, sigma: 1 }, "unknown_name", "base.kind"],
    ["misspelt field", { kind: "logistic", gian: 2 }, "unknown_name", "gian"],
    ["field of another kind", { kind: "relu", gain: 2 }, "unknown_name", "gain"],
    ["not an object", 42, "invalid_parameter", ""],
    ["null", null, "invalid_parameter", ""],
  ];
  it.each(bad)("%s", (_name, spec, code, path) => {
    try {
      createUnit(spec as UnitSpec);
      expect.unreachable("createUnit should have thrown");
    } catch (e) {
      expect(e).toBeInstanceOf(EbbflowError);
      const err = e as EbbflowError;
      expect(err.code).toBe(code);
      expect(err.path).toBe(path);
      expect(err.message).toContain(path === "" ? "(root)" : path);
    }
  });
  it("reports every problem at once, with the offending values", () => {
    try {
      createUnit({ kind: "noisy", base: { kind: "logistic", gain: -1 }, sigma: 0, resolution: 1 });
      expect.unreachable("createUnit should have thrown");
    } catch (e) {
      const err = e as EbbflowError;
      expect(err.issues.map((i) => i.path)).toEqual(["base.gain", "sigma", "resolution"]);
      expect(err.issues.map((i) => i.received)).toEqual(["-1", "0", "1"]);
    }
  });
});
