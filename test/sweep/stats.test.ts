import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { studentTCdf, studentTQuantile, summarizeSample } from "../../src/sweep/stats.js";
import { EbbflowError } from "../../src/errors/index.js";
import { expectClose } from "../helpers/tolerance.js";
import { check } from "../helpers/property.js";

describe("Student's t quantile", () => {
  it("matches the printed t table to its three decimals", () => {
    // Critical values of Student's t as printed in any statistics text's t table, e.g. the NIST/SEMATECH
    // e-Handbook of Statistical Methods, sec. 1.3.6.7.2 (upper-tail 0.025, 0.05, 0.005 columns)
    const table: [number, number, number][] = [
      [0.975, 1, 12.706],
      [0.975, 2, 4.303],
      [0.975, 3, 3.182],
      [0.975, 4, 2.776],
      [0.975, 5, 2.571],
      [0.975, 9, 2.262],
      [0.975, 10, 2.228],
      [0.975, 20, 2.086],
      [0.975, 30, 2.042],
      [0.95, 1, 6.314],
      [0.95, 10, 1.812],
      [0.995, 5, 4.032],
      [0.995, 30, 2.75],
    ];
    for (const [p, df, t] of table) expectClose(studentTQuantile(p, df), t, 5e-4, `t(${p}, ${df})`);
  });

  it("equals the closed forms for 1, 2 and 4 degrees of freedom", () => {
    // Shaw 2006, J. Comput. Finance 9(4):37, sec. 3: df = 1 (Cauchy) tan(π(p - ½)); df = 2: (2p - 1)/√(2p(1 - p));
    // df = 4: sign(p - ½)·2·√(q - 1), q = cos(⅓ arccos √α)/√α, α = 4p(1 - p)
    const four = (p: number) => {
      const a = 4 * p * (1 - p);
      const q = Math.cos(Math.acos(Math.sqrt(a)) / 3) / Math.sqrt(a);
      return Math.sign(p - 0.5) * 2 * Math.sqrt(q - 1);
    };
    check(
      fc.property(fc.double({ min: 0.001, max: 0.999, noNaN: true }), (p) => {
        expectClose(studentTQuantile(p, 1), Math.tan(Math.PI * (p - 0.5)), 1e-12, `df 1, p ${p}`);
        expectClose(studentTQuantile(p, 2), (2 * p - 1) / Math.sqrt(2 * p * (1 - p)), 1e-12, `df 2, p ${p}`);
        expectClose(studentTQuantile(p, 4), four(p), 1e-9, `df 4, p ${p}`);
      }),
    );
  });

  it("is the inverse of the distribution function, odd about p = ½ and increasing in p", () => {
    check(
      fc.property(fc.double({ min: 0.0005, max: 0.9995, noNaN: true }), fc.double({ min: 0.5, max: 200, noNaN: true }), (p, df) => {
        const t = studentTQuantile(p, df);
        expect(Math.abs(studentTCdf(t, df) - p)).toBeLessThan(1e-12);
        expectClose(studentTQuantile(1 - p, df), -t, 1e-9, "symmetry");
        if (p < 0.999) expect(studentTQuantile(p + 0.0005, df)).toBeGreaterThan(t);
      }),
    );
  });

  it("approaches the normal quantile as the degrees of freedom grow, from above", () => {
    // standard normal 0.975 quantile 1.959963985 (Abramowitz & Stegun 1964, Table 26.1)
    expectClose(studentTQuantile(0.975, 1e7), 1.959963985, 1e-6, "t(0.975, 1e7)");
    expect(studentTQuantile(0.975, 1000)).toBeGreaterThan(studentTQuantile(0.975, 1e7));
    expect(studentTQuantile(0.975, 100)).toBeGreaterThan(studentTQuantile(0.975, 1000));
  });

  it("gives the distribution function's exact values at 0 and for df = 1", () => {
    expect(studentTCdf(0, 7)).toBe(0.5);
    // Cauchy distribution function ½ + arctan(t)/π (closed form)
    for (const t of [-3, -0.5, 0.25, 1, 10]) expectClose(studentTCdf(t, 1), 0.5 + Math.atan(t) / Math.PI, 1e-13, `F(${t}; 1)`);
    expect(studentTCdf(Infinity, 3)).toBe(1);
    expect(studentTCdf(-Infinity, 3)).toBe(0);
  });

  it("rejects probabilities outside (0, 1) and non-positive degrees of freedom", () => {
    for (const p of [0, 1, -0.1, Number.NaN, Infinity]) {
      try {
        studentTQuantile(p, 3);
        expect.unreachable();
      } catch (e) {
        expect((e as EbbflowError).code).toBe("invalid_parameter");
        expect((e as EbbflowError).path).toBe("p");
      }
    }
    for (const df of [0, -1, Number.NaN, Infinity]) expect(() => studentTQuantile(0.9, df)).toThrow(expect.objectContaining({ path: "df" }));
    expect(() => studentTCdf(Number.NaN, 3)).toThrow(expect.objectContaining({ path: "t" }));
  });
});

describe("sample summaries across seeds", () => {
  it("gives hand-computed mean, sd and 95% interval", () => {
    // by hand: mean 3, squared deviations 4+1+0+1+4 = 10, sd = √(10/4) = 1.58114, sem = sd/√5 = 0.70711,
    // half-width = t(0.975, 4) · sem = 2.77645 · 0.70711 = 1.96324 (t from the table above)
    const s = summarizeSample([1, 2, 3, 4, 5]);
    expect(s.n).toBe(5);
    expect(s.mean).toBe(3);
    expectClose(s.sd, Math.sqrt(2.5), 1e-15, "sd");
    expectClose(s.sem, Math.sqrt(0.5), 1e-15, "sem");
    expectClose(s.halfWidth as number, 1.96324, 1e-5, "half-width");
    expectClose(s.low as number, 3 - 1.96324, 1e-5, "low");
    expectClose(s.high as number, 3 + 1.96324, 1e-5, "high");
    expect([s.min, s.max]).toEqual([1, 5]);
    // two values 0.5 and 1: mean 0.75, sd = |a - b|/√2 = 0.353553, half-width = 12.7062 · 0.353553/√2 = 3.17655
    const two = summarizeSample([0.5, 1]);
    expectClose(two.sd, 0.5 / Math.SQRT2, 1e-15, "sd of two");
    expectClose(two.halfWidth as number, 3.17655, 1e-5, "half-width of two");
    // a 90% interval uses t(0.95, 4) = 2.132 (t table)
    expectClose(summarizeSample([1, 2, 3, 4, 5], 0.9).halfWidth as number, 2.132 * Math.sqrt(0.5), 1e-3, "90% half-width");
  });

  it("has no interval for one value, and zero spread for equal values", () => {
    const one = summarizeSample([0.25]);
    expect([one.mean, one.sd, one.halfWidth, one.low, one.high]).toEqual([0.25, 0, null, null, null]);
    const same = summarizeSample([2, 2, 2]);
    expect([same.sd, same.halfWidth]).toEqual([0, 0]);
  });

  it("keeps precision under a large common offset and is shift-equivariant", () => {
    check(
      fc.property(fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: 2, maxLength: 20 }), fc.double({ min: -1e6, max: 1e6, noNaN: true }), (xs, c) => {
        const a = summarizeSample(xs);
        const b = summarizeSample(xs.map((x) => x + c));
        expect(Math.abs(b.mean - (a.mean + c))).toBeLessThan(1e-9 * (1 + Math.abs(c)));
        expect(Math.abs(b.sd - a.sd)).toBeLessThan(1e-8 * (1 + Math.abs(c)));
        expect(a.low as number).toBeLessThanOrEqual(a.mean);
        expect(a.high as number).toBeGreaterThanOrEqual(a.mean);
      }),
    );
  });

  it("rejects empty samples, non-finite values and levels outside (0, 1)", () => {
    expect(() => summarizeSample([])).toThrow(expect.objectContaining({ path: "values" }));
    expect(() => summarizeSample([1, Number.NaN, Infinity])).toThrow(expect.objectContaining({ path: "values[1]" }));
    try {
      summarizeSample([1, Number.NaN, Infinity]);
    } catch (e) {
      expect((e as EbbflowError).issues.map((i) => i.path)).toEqual(["values[1]", "values[2]"]);
    }
    for (const level of [0, 1, 1.5, Number.NaN]) expect(() => summarizeSample([1, 2], level)).toThrow(expect.objectContaining({ path: "level" }));
  });
});
