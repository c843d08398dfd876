import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import { fillUnit, typescriptBackend, type UnitFillKind } from "../../src/kernels/index.js";
import type { Dtype, FloatArray } from "../../src/types/index.js";
import { createUnit, type UnitSpec } from "../../src/units/index.js";
import { check } from "../helpers/property.js";
import { inArena, wasmBackends } from "./backends.js";

/** Bounds asserted against the TypeScript units (measured: 5 float32 ulps, 6.1e-16 relative in float64). */
const ULPS32 = 6;
const REL64 = 1e-14;
/** Below the smallest normal number errors are measured absolutely (gradual underflow keeps fewer bits). */
const TINY32 = 2 ** -126;
const TINY64 = 2 ** -1022;

/** One unit in the last place of the float32 number y (IEEE 754 binary32; 2^-149 for subnormals). */
function ulp32(y: number): number {
  const a = Math.abs(y);
  if (a < TINY32) return 2 ** -149;
  return 2 ** (Math.floor(Math.log2(a)) - 23);
}

/** Error of `a` against `b` in the unit of the bound: float32 ulps, or float64 relative error. */
function error(dtype: Dtype, a: number, b: number): number {
  if (Number.isNaN(b)) return Number.isNaN(a) ? 0 : Infinity;
  if (a === b) return 0;
  const d = Math.abs(a - b);
  if (dtype === "float32") return Math.abs(b) < TINY32 ? (d <= TINY32 ? 0 : Infinity) : d / ulp32(b);
  return Math.abs(b) < TINY64 ? (d <= TINY64 ? 0 : Infinity) : d / Math.abs(b);
}

function expectNear(dtype: Dtype, actual: FloatArray, expected: FloatArray, n: number, label: string): void {
  const bound = dtype === "float32" ? ULPS32 : REL64;
  for (let i = 0; i < n; i++) {
    const e = error(dtype, actual[i] as number, expected[i] as number);
    if (!(e <= bound)) expect.fail(`${label}: element ${i}: got ${actual[i]}, TypeScript unit gives ${expected[i]} (error ${e}, bound ${bound})`);
  }
}

function expectSameBits(actual: FloatArray, expected: FloatArray, n: number, label: string): void {
  for (let i = 0; i < n; i++) {
    const a = actual[i] as number;
    const b = expected[i] as number;
    if (!(Object.is(a, b) || (Number.isNaN(a) && Number.isNaN(b)))) expect.fail(`${label}: element ${i}: got ${a}, expected ${b}`);
  }
}

function make(dtype: Dtype, values: readonly number[]): FloatArray {
  return dtype === "float32" ? Float32Array.from(values) : Float64Array.from(values);
}

/** The extremes named by the contract: exp overflow/underflow edges of both precisions, signed zeros, NaN, infinities. */
const extremes = [1e3, -1e3, 88, -88, 89, -89, 104, -104, 710, -710, 746, -746, 0, -0, Number.NaN, Infinity, -Infinity, 1e-300, -1e-40, 20, -20, 60];
const netInput = fc.oneof(
  fc.double({ min: -12, max: 12, noNaN: true }),
  fc.double({ min: -800, max: 800, noNaN: true }),
  fc.double({ noNaN: false }),
  fc.constantFrom(...extremes),
);
const inputs = fc.array(netInput, { minLength: 0, maxLength: 41 });
const dtypeArb = fc.constantFrom<Dtype>("float32", "float64");

/** Runs the backend's unitFill on arena copies and the TypeScript unit on ordinary arrays; returns both. */
function both(
  be: (typeof wasmBackends)[number],
  spec: UnitSpec,
  slope: boolean,
  dtype: Dtype,
  values: readonly number[],
): { got: FloatArray; want: FloatArray } {
  const x0 = make(dtype, values);
  const [x, out] = inArena(be, x0, make(dtype, values.map(() => 7)));
  const kind = spec.kind as UnitFillKind;
  const gain = spec.kind === "logistic" ? (spec.gain ?? 1) : 1;
  const offset = spec.kind === "logistic" ? (spec.offset ?? 0) : 0;
  expect(be.unitFill!(kind, slope, gain, offset, out, x, x.length)).toBe(true);
  const unit = createUnit(spec);
  const want = make(dtype, values.map(() => 7));
  if (slope) unit.fillSlope(want, x0);
  else unit.fill(want, x0);
  return { got: out, want };
}

describe("WASM unit kernels against the TypeScript units", () => {
  it("logistic and its slope, any gain and offset, stay within 6 float32 ulps / 1e-14 relative (float64) of the TypeScript unit, extremes included", () => {
    check(
      fc.property(
        inputs,
        dtypeArb,
        fc.double({ min: 0.05, max: 20, noNaN: true }),
        fc.oneof(fc.constant(0), fc.double({ min: -5, max: 5, noNaN: true })),
        fc.boolean(),
        (values, dtype, gain, offset, slope) => {
          for (const be of wasmBackends) {
            const { got, want } = both(be, { kind: "logistic", gain, offset }, slope, dtype, values);
            expectNear(dtype, got, want, values.length, `${be.name} logistic g=${gain} o=${offset} slope=${slope} ${dtype}`);
          }
        },
      ),
      150,
    );
  });

  it("logistic with the default gain and offset (the all-float32 path) stays within the same bounds", () => {
    check(
      fc.property(inputs, dtypeArb, fc.boolean(), (values, dtype, slope) => {
        for (const be of wasmBackends) {
          const { got, want } = both(be, { kind: "logistic" }, slope, dtype, values);
          expectNear(dtype, got, want, values.length, `${be.name} logistic slope=${slope} ${dtype}`);
        }
      }),
      150,
    );
  });

  it("tanh and its slope stay within 6 float32 ulps / 1e-14 relative (float64) of the TypeScript unit (Math.tanh)", () => {
    check(
      fc.property(inputs, dtypeArb, fc.boolean(), (values, dtype, slope) => {
        for (const be of wasmBackends) {
          const { got, want } = both(be, { kind: "tanh" }, slope, dtype, values);
          expectNear(dtype, got, want, values.length, `${be.name} tanh slope=${slope} ${dtype}`);
        }
      }),
      150,
    );
  });

  it("relu, hard sigmoid, linear and their slopes are bit-identical to the TypeScript units (-0 and NaN included)", () => {
    check(
      fc.property(
        fc.array(fc.oneof(netInput, fc.double({ min: -0.5, max: 1.5, noNaN: true }), fc.constantFrom(1, 0.5, -0.5, 1.5)), { maxLength: 41 }),
        dtypeArb,
        fc.boolean(),
        fc.constantFrom<UnitSpec>({ kind: "relu" }, { kind: "hard-sigmoid" }, { kind: "linear" }),
        (values, dtype, slope, spec) => {
          for (const be of wasmBackends) {
            const { got, want } = both(be, spec, slope, dtype, values);
            expectSameBits(got, want, values.length, `${be.name} ${spec.kind} slope=${slope} ${dtype}`);
          }
        },
      ),
      200,
    );
  });
});

describe("WASM unit kernels: closed forms and exact identities", () => {
  // analytic: logistic(offset) = 1 / (1 + e^0) = 1/2 and f'(offset) = gain / 4 (Rumelhart, Hinton & Williams 1986 logistic)
  it("logistic is exactly 1/2 at its offset and its slope exactly gain/4 there", () => {
    check(
      fc.property(dtypeArb, fc.double({ min: 0.05, max: 20, noNaN: true }), (dtype, gain) => {
        for (const be of wasmBackends) {
          const g = dtype === "float32" ? Math.fround(gain) : gain;
          const [x, out] = inArena(be, make(dtype, [0, -0, 0, 0, 0]), make(dtype, [9, 9, 9, 9, 9]));
          be.unitFill!("logistic", false, 1, 0, out, x, 5);
          expect(Array.from(out)).toEqual([0.5, 0.5, 0.5, 0.5, 0.5]);
          be.unitFill!("logistic", true, g, 0, out, x, 5);
          for (const v of out) expect(v).toBe(g / 4);
        }
      }),
      50,
    );
  });

  // analytic: tanh is odd, tanh(±0) = ±0 (IEEE 754 sign of zero), and its slope is even
  it("tanh is odd bit for bit, keeps the sign of zero, and its slope is even", () => {
    check(
      fc.property(inputs, dtypeArb, (values, dtype) => {
        for (const be of wasmBackends) {
          const neg = values.map((v) => -v);
          const [x, xn, o, on, s, sn] = inArena(
            be,
            make(dtype, values),
            make(dtype, neg),
            make(dtype, values),
            make(dtype, values),
            make(dtype, values),
            make(dtype, values),
          );
          const n = values.length;
          be.unitFill!("tanh", false, 1, 0, o, x, n);
          be.unitFill!("tanh", false, 1, 0, on, xn, n);
          be.unitFill!("tanh", true, 1, 0, s, x, n);
          be.unitFill!("tanh", true, 1, 0, sn, xn, n);
          expectSameBits(on, make(dtype, Array.from(o, (v) => -v)), n, `${be.name} tanh odd ${dtype}`);
          expectSameBits(sn, s, n, `${be.name} tanh slope even ${dtype}`);
        }
      }),
      100,
    );
  });

  it("saturate exactly at the far tails and at infinities, and give NaN for NaN", () => {
    const xs = [-Infinity, -1e3, -750, 750, 1e3, Infinity, Number.NaN]; // beyond exp underflow in both precisions (float64: e^-746 rounds to 0)
    for (const be of wasmBackends) {
      for (const dtype of ["float32", "float64"] as const) {
        const [x, out] = inArena(be, make(dtype, xs), make(dtype, xs));
        be.unitFill!("logistic", false, 1, 0, out, x, xs.length);
        expect(Array.from(out)).toEqual([0, 0, 0, 1, 1, 1, Number.NaN]);
        be.unitFill!("logistic", true, 1, 0, out, x, xs.length);
        expect(Array.from(out)).toEqual([0, 0, 0, 0, 0, 0, Number.NaN]);
        be.unitFill!("tanh", false, 1, 0, out, x, xs.length);
        expect(Array.from(out)).toEqual([-1, -1, -1, 1, 1, 1, Number.NaN]);
        be.unitFill!("tanh", true, 1, 0, out, x, xs.length);
        expect(Array.from(out)).toEqual([0, 0, 0, 0, 0, 0, Number.NaN]);
        for (const kind of ["relu", "hard-sigmoid", "linear"] as const) {
          for (const slope of [false, true]) {
            be.unitFill!(kind, slope, 1, 0, out, x, xs.length);
            expect(Number.isNaN(out[6])).toBe(true);
          }
        }
      }
    }
  });

  // analytic: f' = gain f (1 - f) (logistic) and f' = 1 - f^2 (tanh), checked on the kernel's own outputs in float64
  it("slopes agree with the closed forms from the rate: gain f (1 - f) and 1 - f^2", () => {
    check(
      fc.property(fc.array(fc.double({ min: -30, max: 30, noNaN: true }), { maxLength: 33 }), fc.double({ min: 0.1, max: 5, noNaN: true }), (values, gain) => {
        for (const be of wasmBackends) {
          const [x, f, s] = inArena(be, make("float64", values), make("float64", values), make("float64", values));
          const n = values.length;
          be.unitFill!("logistic", false, gain, 0.25, f, x, n);
          be.unitFill!("logistic", true, gain, 0.25, s, x, n);
          for (let i = 0; i < n; i++) {
            const fi = f[i] as number;
            expect(Math.abs((s[i] as number) - gain * fi * (1 - fi))).toBeLessThanOrEqual(4e-16 * gain);
          }
          be.unitFill!("tanh", false, 1, 0, f, x, n);
          be.unitFill!("tanh", true, 1, 0, s, x, n);
          for (let i = 0; i < n; i++) {
            const fi = f[i] as number;
            expect(Math.abs((s[i] as number) - (1 - fi * fi))).toBeLessThanOrEqual(1e-15);
          }
        }
      }),
      100,
    );
  });
});

describe("WASM unitFill: fast path only, in place, never past n", () => {
  it("runs in place (out === x) with the same result as out of place", () => {
    check(
      fc.property(inputs, dtypeArb, fc.constantFrom<UnitFillKind>("logistic", "tanh", "relu", "hard-sigmoid", "linear"), fc.boolean(), (values, dtype, kind, slope) => {
        for (const be of wasmBackends) {
          const [x, out, y] = inArena(be, make(dtype, values), make(dtype, values), make(dtype, values));
          expect(be.unitFill!(kind, slope, 1.5, -0.5, out, x, values.length)).toBe(true);
          expect(be.unitFill!(kind, slope, 1.5, -0.5, y, y, values.length)).toBe(true);
          expectSameBits(y, out, values.length, `${be.name} ${kind} in place`);
        }
      }),
      100,
    );
  });

  it("writes elements [0, n) only, for every tail length", () => {
    for (const be of wasmBackends) {
      for (const dtype of ["float32", "float64"] as const) {
        for (let n = 0; n <= 9; n++) {
          for (const kind of ["logistic", "tanh", "relu", "hard-sigmoid", "linear"] as const) {
            const [x, out] = inArena(be, make(dtype, [0.3, -2, 5, 0.9, -0.1, 3, 1, 0, 2, 4, 6, 8]), make(dtype, new Array(12).fill(42)));
            expect(be.unitFill!(kind, false, 1, 0, out, x, n)).toBe(true);
            const want = createUnit({ kind }).fill(make(dtype, new Array(12).fill(42)), x, n);
            for (let i = 0; i < 12; i++) {
              if (i >= n) expect(out[i]).toBe(42);
              else expect(error(dtype, out[i] as number, want[i] as number)).toBeLessThanOrEqual(dtype === "float32" ? ULPS32 : REL64);
            }
          }
        }
      }
    }
  });

  it("declines (returns false, writes nothing) for ordinary arrays, mixed dtypes, partial overlap, bad counts and bad parameters", () => {
    for (const be of wasmBackends) {
      const [a32, b32] = inArena(be, new Float32Array(8).fill(1), new Float32Array(8).fill(3));
      const [a64] = inArena(be, new Float64Array(8).fill(1));
      const plain = new Float32Array(8).fill(2);
      const untouched = (): void => {
        expect(Array.from(b32)).toEqual(new Array(8).fill(3));
        expect(Array.from(plain)).toEqual(new Array(8).fill(2));
      };
      expect(be.unitFill!("logistic", false, 1, 0, plain, a32, 8)).toBe(false);
      expect(be.unitFill!("logistic", false, 1, 0, b32, plain, 8)).toBe(false);
      expect(be.unitFill!("logistic", false, 1, 0, b32, a64, 8)).toBe(false);
      expect(be.unitFill!("logistic", false, 1, 0, b32.subarray(1), b32, 7)).toBe(false);
      expect(be.unitFill!("logistic", false, 1, 0, b32, a32, 9)).toBe(false);
      expect(be.unitFill!("logistic", false, 1, 0, b32, a32, -1)).toBe(false);
      expect(be.unitFill!("logistic", false, 1, 0, b32, a32, 2.5)).toBe(false);
      expect(be.unitFill!("logistic", false, 0, 0, b32, a32, 8)).toBe(false);
      expect(be.unitFill!("logistic", false, Number.NaN, 0, b32, a32, 8)).toBe(false);
      expect(be.unitFill!("logistic", false, 1, Infinity, b32, a32, 8)).toBe(false);
      expect(be.unitFill!("softplus" as UnitFillKind, false, 1, 0, b32, a32, 8)).toBe(false);
      untouched();
    }
  });

  it("is absent from the TypeScript backend", () => {
    expect(typescriptBackend.unitFill).toBeUndefined();
  });
});

describe("fillUnit", () => {
  it("equals the unit's own fill on ordinary arrays and other backends, and matches it within the bounds on arena views", () => {
    check(
      fc.property(inputs, dtypeArb, fc.boolean(), fc.constantFrom<UnitSpec>({ kind: "logistic", gain: 2, offset: 0.5 }, { kind: "tanh" }, { kind: "softplus", gain: 2 }, { kind: "relu" }), (values, dtype, slope, spec) => {
        const unit = createUnit(spec);
        const x = make(dtype, values);
        const want = slope ? unit.fillSlope(make(dtype, values), x) : unit.fill(make(dtype, values), x);
        const got = make(dtype, values);
        expect(fillUnit(typescriptBackend, unit, slope, got, x)).toBe(got);
        expectSameBits(got, want, values.length, "typescript backend");
        for (const be of wasmBackends) {
          const plainOut = make(dtype, values);
          fillUnit(be, unit, slope, plainOut, x);
          expectSameBits(plainOut, want, values.length, `${be.name} ordinary arrays`);
          const [ax, aout] = inArena(be, x, make(dtype, values));
          expect(fillUnit(be, unit, slope, aout, ax, values.length)).toBe(aout);
          expectNear(dtype, aout, want, values.length, `${be.name} arena ${spec.kind}`);
        }
      }),
      100,
    );
  });

  it("leaves bad counts to the unit, which throws invalid_parameter at n or shape_mismatch", () => {
    for (const be of wasmBackends) {
      const [x, out] = inArena(be, new Float64Array(4), new Float64Array(4));
      const unit = createUnit({ kind: "logistic" });
      for (const n of [-1, 1.5, Number.NaN]) {
        try {
          fillUnit(be, unit, false, out, x, n);
          expect.fail("no error");
        } catch (e) {
          expect(e).toBeInstanceOf(EbbflowError);
          expect((e as EbbflowError).code).toBe("invalid_parameter");
          expect((e as EbbflowError).path).toBe("n");
        }
      }
      expect(() => fillUnit(be, unit, true, out, x, 5)).toThrowError(EbbflowError);
      expect(() => fillUnit(be, unit, true, out.subarray(0, 3), x)).toThrowError(EbbflowError);
    }
  });
});
