/**
 * The unit registry: descriptors in, validated specs and unit functions out; duplicate kinds
 * refused; unknown kinds refused with their name; every built-in descriptor's slope against a
 * centred finite difference; a user's kind (test/helpers/arctan-unit.ts) by name, also as the
 * base of a noisy unit.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { z } from "zod";
import { EbbflowError } from "../../src/errors/index.js";
import {
  builtinUnitDescriptors,
  builtinUnits,
  createUnit,
  defineUnit,
  gaussianAverage,
  logisticUnit,
  noisyRate,
  tabulateNoisyRate,
  unitFromScalars,
  unitKinds,
  UnitRegistry,
  type UnitSpecInput,
} from "../../src/units/index.js";
import { arctanClassUnit, arctanRate, arctanSlope, arctanUnit } from "../helpers/arctan-unit.js";
import { UNIT_KERNEL_KINDS } from "../../src/kernels/wasm/generated/layout.js";
import { check } from "../helpers/property.js";
import { EPS64, expectClose } from "../helpers/tolerance.js";
import { thrown } from "../helpers/errors.js";


/** One spec per built-in kind, with parameters away from the defaults where the kind has any. */
const examples: Record<string, UnitSpecInput> = {
  logistic: { kind: "logistic", gain: 2.5, offset: -0.3 },
  tanh: { kind: "tanh" },
  linear: { kind: "linear" },
  relu: { kind: "relu" },
  "hard-sigmoid": { kind: "hard-sigmoid" },
  softplus: { kind: "softplus", gain: 0.7 },
  saturating: { kind: "saturating", gain: 3, threshold: 0.4 },
  noisy: { kind: "noisy", base: { kind: "softplus", gain: 2 }, sigma: 0.6, resolution: 512 },
};

/** Inputs where the slope jumps (kinks, the ends of a noisy table). */
const kinks: Record<string, readonly number[]> = { relu: [0], "hard-sigmoid": [0, 1], saturating: [0.4] };

describe("builtinUnits", () => {
  it("holds the eight built-in kinds as descriptors, listed once (unitKinds is the registry's list)", () => {
    expect(builtinUnits.kinds).toEqual(["logistic", "tanh", "linear", "relu", "hard-sigmoid", "softplus", "saturating", "noisy"]);
    expect(unitKinds).toBe(builtinUnits.kinds);
    expect(builtinUnitDescriptors.map((d) => d.kind)).toEqual(builtinUnits.kinds);
    for (const d of builtinUnitDescriptors) {
      expect(builtinUnits.get(d.kind)).toBe(d);
      expect(d.summary.length).toBeGreaterThan(0);
    }
  });

  it("names a SIMD kernel exactly for the kinds whose units carry one, and those units name the same kernel", () => {
    for (const kind of builtinUnits.kinds) {
      const d = builtinUnits.get(kind);
      const unit = builtinUnits.create(examples[kind]);
      expect(unit.kernel?.kind).toBe(d.kernel);
    }
    expect(builtinUnits.kinds.filter((k) => builtinUnits.get(k).kernel !== undefined)).toEqual(["logistic", "tanh", "linear", "relu", "hard-sigmoid"]);
    // every unit kernel the declaration (assembly/layout.mjs) lists is named by exactly one built-in descriptor
    expect(builtinUnits.kinds.map((k) => builtinUnits.get(k).kernel).filter((k) => k !== undefined).sort()).toEqual([...UNIT_KERNEL_KINDS].sort());
    expect(builtinUnits.create({ kind: "logistic", gain: 3, offset: 0.5 }).kernel).toEqual({ kind: "logistic", gain: 3, offset: 0.5 });
  });

  it.each(Object.keys(examples))("the %s descriptor's slope equals a centred finite difference of its rate (away from kinks)", (kind) => {
    expect(builtinUnits.kinds).toContain(kind);
    const unit = builtinUnits.create(examples[kind]);
    const range = (unit.spec as unknown as { range?: [number, number] }).range;
    const at = [...(kinks[kind] ?? []), ...(range ?? [])];
    check(
      fc.property(fc.double({ min: -30, max: 30, noNaN: true }), (x) => {
        const h = 1e-5 * Math.max(1, Math.abs(x));
        if (at.some((k) => Math.abs(x - k) < 4 * h)) return;
        const fd = (unit.value(x + h) - unit.value(x - h)) / (2 * h);
        expectClose(unit.slope(x), fd, 1e-6 + (8 * EPS64 * Math.max(1, Math.abs(unit.value(x)))) / h, `${kind} x=${x}`);
      }),
      200,
    );
  });

  it("covers every registered kind in the finite-difference check", () => {
    expect(Object.keys(examples).sort()).toEqual([...builtinUnits.kinds].sort());
  });
});

describe("UnitRegistry.with", () => {
  it("adds kinds after the existing ones and leaves the original registry unchanged", () => {
    const units = builtinUnits.with(arctanUnit, arctanClassUnit);
    expect(units.kinds).toEqual([...builtinUnits.kinds, "arctan", "arctan-class"]);
    expect(builtinUnits.has("arctan")).toBe(false);
    expect(units.has("arctan")).toBe(true);
    expect(UnitRegistry.empty.kinds).toEqual([]);
  });

  it("refuses a kind that is already registered, or given twice", () => {
    const again = thrown(() => builtinUnits.with(logisticUnit));
    expect(again.code).toBe("invalid_parameter");
    expect(again.path).toBe("descriptors[0].kind");
    expect(again.received).toBe('"logistic"');
    const twice = thrown(() => builtinUnits.with(arctanUnit, arctanUnit));
    expect(twice.path).toBe("descriptors[1].kind");
  });

  it("refuses a descriptor that is not well formed, every problem at once", () => {
    const bad = { kind: "x", schema: z.object({ kind: z.literal("y") }).strict(), summary: 3, create: "no" };
    const err = thrown(() => builtinUnits.with(bad as never));
    expect(err.issues.map((i) => i.path)).toEqual(["descriptors[0].schema", "descriptors[0].create", "descriptors[0].summary"]);
  });

  it("refuses a unit that names a SIMD kernel its descriptor does not declare (a user's kind never runs a built-in kernel)", () => {
    const sneaky = defineUnit({
      kind: "sneaky",
      schema: z.object({ kind: z.literal("sneaky") }).strict(),
      summary: "a logistic in disguise",
      create: (spec) => ({ ...unitFromScalars(spec, { lower: 0, upper: 1, value: (x) => x, slope: () => 1 }), kernel: { kind: "logistic", gain: 1, offset: 0 } }),
    });
    const err = thrown(() => builtinUnits.with(sneaky).create({ kind: "sneaky" }));
    expect(err.code).toBe("unsupported");
  });
});

describe("unknown kinds", () => {
  it("are refused with unknown_name at kind, naming the kind and the registered kinds, and saying how to register one", () => {
    const err = thrown(() => createUnit({ kind: "arctan" }));
    expect(err.code).toBe("unknown_name");
    expect(err.path).toBe("kind");
    expect(err.received).toBe('"arctan"');
    expect(err.expected).toContain("logistic, tanh, linear, relu, hard-sigmoid, softplus, saturating, noisy");
    expect(err.message).toMatch(/register.*with\(/);
  });

  it("inside a noisy unit: unknown_name at base.kind (a nested spec goes through the same registry)", () => {
    const err = thrown(() => createUnit({ kind: "noisy", base: { kind: "arctan" }, sigma: 1 }));
    expect(err.code).toBe("unknown_name");
    expect(err.path).toBe("base.kind");
  });

  it("parse and safeParse prefix the path they are given", () => {
    const r = builtinUnits.safeParse({ kind: "logistic", gain: -1, colour: 1 }, "layers[2].unit");
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.issues.map((i) => [i.code, i.path])).toEqual([
      ["invalid_parameter", "layers[2].unit.gain"],
      ["unknown_name", "layers[2].unit.colour"],
    ]);
  });
});

describe("a user's unit kind (scaled arctangent)", () => {
  const units = builtinUnits.with(arctanUnit, arctanClassUnit);

  it("validates its spec like a built-in kind (defaults filled, bad values and unknown fields named)", () => {
    expect(units.parse({ kind: "arctan" })).toEqual({ kind: "arctan", gain: 1 });
    const err = thrown(() => units.create({ kind: "arctan", gain: 0, slant: 1 }));
    expect(err.issues.map((i) => [i.code, i.path])).toEqual([
      ["invalid_parameter", "gain"],
      ["unknown_name", "slant"],
    ]);
    expect(err.issues[0]!.expected).toBe("a finite number > 0");
  });

  it("rate and slope: the closed forms; slope equals a centred finite difference; fills equal the scalar map in both precisions, in place too", () => {
    const unit = units.create({ kind: "arctan", gain: 1.7 });
    expect(unit.value(0)).toBe(0.5);
    expect(unit.slope(0)).toBe(1.7 / Math.PI);
    expect(unit.kernel).toBeUndefined();
    check(
      fc.property(fc.array(fc.double({ min: -40, max: 40, noNaN: true }), { maxLength: 30 }), (xs) => {
        for (const x of xs) {
          const h = 1e-5 * Math.max(1, Math.abs(x));
          expectClose(unit.slope(x), (unit.value(x + h) - unit.value(x - h)) / (2 * h), 1e-7, `x=${x}`);
        }
        const x64 = Float64Array.from(xs);
        const x32 = Float32Array.from(xs);
        const v64 = unit.fill(new Float64Array(xs.length), x64);
        const s32 = unit.fillSlope(new Float32Array(xs.length), x32);
        xs.forEach((_, i) => {
          expect(v64[i]).toBe(arctanRate(x64[i]!, 1.7));
          expect(s32[i]).toBe(Math.fround(arctanSlope(x32[i]!, 1.7)));
        });
        unit.fill(x64, x64);
        expect(Array.from(x64)).toEqual(Array.from(v64));
      }),
      100,
    );
  });

  it("as the base of a noisy unit: needs a range (it declares no smoothing facts), then equals the Gaussian average of its rate", () => {
    const err = thrown(() => units.create({ kind: "noisy", base: { kind: "arctan" }, sigma: 0.5 }));
    expect(err.code).toBe("invalid_parameter");
    expect(err.path).toBe("range");
    const noisy = units.create({ kind: "noisy", base: { kind: "arctan", gain: 2 }, sigma: 0.5, range: [-12, 12], resolution: 2048 });
    for (const x of [-3, -0.4, 0, 0.25, 1.5, 8]) {
      // independent check: the same average by direct quadrature (gaussian.ts), no table
      expectClose(noisy.value(x), gaussianAverage((t) => arctanRate(t, 2), x, 0.5), 1e-8, `x=${x}`);
    }
    const table = tabulateNoisyRate({ kind: "noisy", base: { kind: "arctan", gain: 2 }, sigma: 0.5, range: [-12, 12], resolution: 2048 }, units);
    expect(noisyRate(table, 0.25)).toBe(noisy.value(0.25));
  });
});
