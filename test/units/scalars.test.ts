/**
 * Scalar rate functions and their slopes: closed-form values, identities,
 * edge cases, and fast-check properties (slope = centred finite difference,
 * monotone, bounded, slope from output = slope).
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  hardSigmoid,
  hardSigmoidSlope,
  linear,
  linearSlope,
  logistic,
  logisticSlope,
  logisticSlopeFromOutput,
  relu,
  reluSlope,
  saturating,
  saturatingSlope,
  softplus,
  softplusSlope,
  softplusSlopeFromOutput,
  tanh,
  tanhSlope,
  tanhSlopeFromOutput,
} from "../../src/units/index.js";
import { check } from "../helpers/property.js";
import { EPS64, expectClose } from "../helpers/tolerance.js";

/** A scalar unit with parameters drawn by fast-check. */
interface Scalar {
  readonly label: string;
  readonly f: (x: number) => number;
  readonly df: (x: number) => number;
  readonly lower: number;
  readonly upper: number;
  readonly kinks: readonly number[];
  readonly fromOutput?: (y: number) => number;
}

const gainArb = fc.double({ min: 0.1, max: 10, noNaN: true });
const centreArb = fc.double({ min: -5, max: 5, noNaN: true });

/** Every scalar unit, as an arbitrary over its parameters. */
const scalars: readonly [string, fc.Arbitrary<Scalar>][] = [
  [
    "logistic",
    fc.tuple(gainArb, centreArb).map(([g, o]) => ({
      label: `logistic(gain=${g}, offset=${o})`,
      f: (x: number) => logistic(x, g, o),
      df: (x: number) => logisticSlope(x, g, o),
      lower: 0,
      upper: 1,
      kinks: [],
      fromOutput: (y: number) => logisticSlopeFromOutput(y, g),
    })),
  ],
  ["tanh", fc.constant({ label: "tanh", f: tanh, df: tanhSlope, lower: -1, upper: 1, kinks: [], fromOutput: tanhSlopeFromOutput })],
  ["linear", fc.constant({ label: "linear", f: linear, df: linearSlope, lower: -Infinity, upper: Infinity, kinks: [], fromOutput: linearSlope })],
  ["relu", fc.constant({ label: "relu", f: relu, df: reluSlope, lower: 0, upper: Infinity, kinks: [0] })],
  ["hard sigmoid", fc.constant({ label: "hard sigmoid", f: hardSigmoid, df: hardSigmoidSlope, lower: 0, upper: 1, kinks: [0, 1] })],
  [
    "softplus",
    gainArb.map((g) => ({
      label: `softplus(gain=${g})`,
      f: (x: number) => softplus(x, g),
      df: (x: number) => softplusSlope(x, g),
      lower: 0,
      upper: Infinity,
      kinks: [],
      fromOutput: (y: number) => softplusSlopeFromOutput(y, g),
    })),
  ],
  [
    "saturating",
    fc.tuple(gainArb, centreArb).map(([g, th]) => ({
      label: `saturating(gain=${g}, threshold=${th})`,
      f: (x: number) => saturating(x, g, th),
      df: (x: number) => saturatingSlope(x, g, th),
      lower: 0,
      upper: 1,
      kinks: [th],
    })),
  ],
];

const xArb = fc.double({ min: -40, max: 40, noNaN: true });

/** The next double above a finite x. */
function nextUp(x: number): number {
  if (x === 0) return Number.MIN_VALUE;
  const buf = new Float64Array([x]);
  const bits = new BigInt64Array(buf.buffer);
  bits[0] = (bits[0] as bigint) + (x > 0 ? 1n : -1n);
  return buf[0] as number;
}

describe.each(scalars)("%s: properties (fast-check)", (_name, unitArb) => {
  it("slope equals a centred finite difference away from kinks", () => {
    check(
      fc.property(unitArb, xArb, (u, x) => {
        const h = 1e-5 * Math.max(1, Math.abs(x));
        if (u.kinks.some((k) => Math.abs(x - k) < 4 * h)) return;
        const fd = (u.f(x + h) - u.f(x - h)) / (2 * h);
        // truncation h^2 f'''/6 (|f'''| <= gain^3/8 for these units) plus rounding eps |f| / h
        const tol = 1e-6 + (8 * EPS64 * Math.max(1, Math.abs(u.f(x)))) / h;
        expectClose(u.df(x), fd, tol, `${u.label} x=${x}`);
      }),
      300,
    );
  });
  it("is non-decreasing", () => {
    check(
      fc.property(unitArb, xArb, xArb, (u, a, b) => {
        const [lo, hi] = a <= b ? [a, b] : [b, a];
        expect(u.f(lo), `${u.label} at ${lo} vs ${hi}`).toBeLessThanOrEqual(u.f(hi));
      }),
      300,
    );
  });
  it("never decreases between adjacent doubles, not even by one ulp", () => {
    check(
      fc.property(unitArb, fc.double({ min: -60, max: 60, noNaN: true }), fc.integer({ min: 1, max: 64 }), (u, x, steps) => {
        let a = x;
        let fa = u.f(a);
        for (let k = 0; k < steps; k++) {
          const b = nextUp(a);
          const fb = u.f(b);
          expect(fb, `${u.label}: f(${a}) = ${fa} > f(${b}) = ${fb}`).toBeGreaterThanOrEqual(fa);
          a = b;
          fa = fb;
        }
      }),
      500,
    );
  });
  it("stays within its bounds and has a non-negative slope", () => {
    check(
      fc.property(unitArb, fc.double({ min: -1e6, max: 1e6, noNaN: true }), (u, x) => {
        const y = u.f(x);
        expect(y).toBeGreaterThanOrEqual(u.lower);
        expect(y).toBeLessThanOrEqual(u.upper);
        expect(u.df(x)).toBeGreaterThanOrEqual(0);
      }),
      300,
    );
  });
  it("slope from the output equals the slope (where defined)", () => {
    check(
      fc.property(unitArb, xArb, (u, x) => {
        if (u.fromOutput === undefined) return;
        // y(1-y) and 1-y^2 lose the relative precision of the tails, so compare absolutely
        expectClose(u.fromOutput(u.f(x)), u.df(x), 1e-12, `${u.label} x=${x}`);
      }),
      300,
    );
  });
  it("propagates NaN from value and slope", () => {
    check(
      fc.property(unitArb, (u) => {
        expect(u.f(Number.NaN)).toBeNaN();
        expect(u.df(Number.NaN)).toBeNaN();
      }),
      20,
    );
  });
});

describe("logistic", () => {
  it("is one half at the offset and has slope gain/4 there [DER]", () => {
    expect(logistic(0)).toBe(0.5);
    expect(logistic(3, 2.5, 3)).toBe(0.5);
    expect(logisticSlope(0)).toBe(0.25);
    expect(logisticSlope(3, 2.5, 3)).toBe(0.625);
  });
  it("gives 3/4 at ln 3, since 1/(1 + 1/3) = 3/4 [DER]", () => {
    expectClose(logistic(Math.log(3)), 0.75, 2 * EPS64);
  });
  it("is point-symmetric: f(o - d) = 1 - f(o + d) (analytic identity)", () => {
    check(
      fc.property(gainArb, centreArb, fc.double({ min: 0, max: 30, noNaN: true }), (g, o, d) => {
        expectClose(logistic(o - d, g, o), 1 - logistic(o + d, g, o), 4 * EPS64, `g=${g} o=${o} d=${d}`);
      }),
    );
  });
  it("keeps relative precision of the slope in both tails: f'(±40) = e^-40/(1+e^-40)^2 [DER]", () => {
    const want = Math.exp(-40) / (1 + Math.exp(-40)) ** 2;
    expectClose(logisticSlope(-40) / want, 1, 1e-14);
    expectClose(logisticSlope(40) / want, 1, 1e-14);
  });
  it("reaches its bounds at ±Infinity with slope 0", () => {
    expect(logistic(Infinity)).toBe(1);
    expect(logistic(-Infinity)).toBe(0);
    expect(logisticSlope(Infinity)).toBe(0);
    expect(logisticSlope(-Infinity)).toBe(0);
  });
});

describe("tanh", () => {
  it("is odd (analytic identity)", () => {
    check(
      fc.property(xArb, (x) => {
        expect(tanh(-x)).toBe(-tanh(x));
      }),
    );
  });
  it("equals 2 logistic(2x) - 1 (analytic identity)", () => {
    check(
      fc.property(xArb, (x) => {
        expectClose(tanh(x), 2 * logistic(2 * x) - 1, 4 * EPS64, `x=${x}`);
      }),
    );
  });
  it("slope is 1 at 0 and equals 1/cosh(x)^2 (Math.cosh, independent form)", () => {
    expect(tanhSlope(0)).toBe(1);
    for (const x of [-20, -3, -0.5, 0.25, 2, 15]) expectClose(tanhSlope(x) * Math.cosh(x) ** 2, 1, 1e-14, `x=${x}`);
  });
});

describe("linear", () => {
  it("is the identity with slope 1", () => {
    check(
      fc.property(fc.double({ noNaN: true }), (x) => {
        expect(linear(x)).toBe(x);
        expect(linearSlope(x)).toBe(1);
      }),
    );
  });
});

describe("relu", () => {
  it("is max(0, x)", () => {
    expect(relu(-2)).toBe(0);
    expect(relu(3.5)).toBe(3.5);
    expect(relu(Infinity)).toBe(Infinity);
    expect(relu(-Infinity)).toBe(0);
  });
  it("slope is 0 below 0 and 1 from 0 on (active side at the kink, documented)", () => {
    expect(reluSlope(-1e-300)).toBe(0);
    expect(reluSlope(0)).toBe(1);
    expect(reluSlope(2)).toBe(1);
  });
});

describe("hard sigmoid", () => {
  it("clips to [0, 1]", () => {
    expect(hardSigmoid(-0.5)).toBe(0);
    expect(hardSigmoid(0.25)).toBe(0.25);
    expect(hardSigmoid(7)).toBe(1);
  });
  it("slope is 1 on the CLOSED interval [0, 1] (design.md pitfall: slope 0 at the bounds freezes states at 0)", () => {
    expect(hardSigmoidSlope(0)).toBe(1);
    expect(hardSigmoidSlope(1)).toBe(1);
    expect(hardSigmoidSlope(0.5)).toBe(1);
    expect(hardSigmoidSlope(-Number.MIN_VALUE)).toBe(0);
    expect(hardSigmoidSlope(1 + EPS64)).toBe(0);
  });
});

describe("softplus", () => {
  it("is ln(2)/gain at 0 [DER]", () => {
    expect(softplus(0)).toBe(Math.LN2);
    expectClose(softplus(0, 4), Math.LN2 / 4, EPS64);
  });
  it("satisfies f(x) - f(-x) = x (analytic identity: log((1+e^x)/(1+e^-x)) = x)", () => {
    check(
      fc.property(gainArb, xArb, (g, x) => {
        expectClose(softplus(x, g) - softplus(-x, g), x, 8 * EPS64, `g=${g} x=${x}`);
      }),
    );
  });
  it("neither overflows nor underflows in the tails: f(800) = 800, f(-800) = e^-800 > 0 rounds to 0", () => {
    expect(softplus(800)).toBe(800);
    expect(softplus(-800)).toBe(0);
    expectClose(softplus(-40) / Math.exp(-40), 1, 1e-15);
  });
  it("approaches max(0, x) as the gain grows (|f - relu| <= ln 2 / gain)", () => {
    for (const g of [1, 10, 100, 1000]) for (const x of [-1, -0.1, 0, 0.1, 1]) expect(Math.abs(softplus(x, g) - relu(x))).toBeLessThanOrEqual(Math.LN2 / g + EPS64);
  });
  it("slope is the logistic of gain x (analytic derivative)", () => {
    check(
      fc.property(gainArb, xArb, (g, x) => {
        expectClose(softplusSlope(x, g), logistic(g * x), 2 * EPS64, `g=${g} x=${x}`);
      }),
    );
  });
});

describe("saturating", () => {
  it("is 0 up to the threshold and one half at 1/gain above it [DER: u/(u+1) with u = 1]", () => {
    expect(saturating(-1)).toBe(0);
    expect(saturating(2, 3, 2)).toBe(0);
    expect(saturating(2 + 1 / 4, 4, 2)).toBe(0.5);
  });
  it("slope is gain at the threshold (active side) and 0 below", () => {
    expect(saturatingSlope(2, 3, 2)).toBe(3);
    expect(saturatingSlope(1.999, 3, 2)).toBe(0);
    expectClose(saturatingSlope(2 + 1 / 3, 3, 2), 0.75, 4 * EPS64);
  });
  it("tends to 1 with slope 0 at +Infinity (no NaN from Infinity/Infinity)", () => {
    expect(saturating(Infinity)).toBe(1);
    expect(saturatingSlope(Infinity)).toBe(0);
    expect(saturating(1e308, 10)).toBe(1);
  });
});
