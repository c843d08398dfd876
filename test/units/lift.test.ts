import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import { liftUnit, logistic, relu } from "../../src/units/index.js";
import { check } from "../helpers/property.js";

const valuesArb = fc.array(fc.double({ min: -50, max: 50, noNaN: true }), { minLength: 0, maxLength: 64 });

describe("liftUnit", () => {
  const f = (x: number) => logistic(x, 1.5, -0.25);
  const fill = liftUnit(f);

  it("fill equals the scalar map for Float64Array (bit for bit)", () => {
    check(
      fc.property(valuesArb, (xs) => {
        const x = Float64Array.from(xs);
        const out = fill(new Float64Array(x.length), x);
        for (let i = 0; i < x.length; i++) expect(out[i]).toBe(f(x[i] as number));
      }),
    );
  });
  it("fill equals the scalar map rounded to float32 for Float32Array", () => {
    check(
      fc.property(valuesArb, (xs) => {
        const x = Float32Array.from(xs);
        const out = fill(new Float32Array(x.length), x);
        for (let i = 0; i < x.length; i++) expect(out[i]).toBe(Math.fround(f(x[i] as number)));
      }),
    );
  });
  it("runs in place when out is x (aliasing) with the same result", () => {
    check(
      fc.property(valuesArb, fc.boolean(), (xs, single) => {
        const x = single ? Float32Array.from(xs) : Float64Array.from(xs);
        const expected = fill(single ? new Float32Array(x.length) : new Float64Array(x.length), x);
        const same = fill(x, x);
        expect(same).toBe(x);
        expect(Array.from(x)).toEqual(Array.from(expected));
      }),
    );
  });
  it("mixes precisions: float64 input into a float32 output", () => {
    const x = Float64Array.of(0.1, -2, 3);
    const out = fill(new Float32Array(3), x);
    expect(Array.from(out)).toEqual(Array.from(x, (v) => Math.fround(f(v))));
  });
  it("returns the out array it was given, and touches only the first n elements", () => {
    const fr = liftUnit(relu);
    const x = Float64Array.of(-1, 2, -3, 4);
    const out = Float64Array.of(9, 9, 9, 9);
    expect(fr(out, x, 2)).toBe(out);
    expect(Array.from(out)).toEqual([0, 2, 9, 9]);
    expect(Array.from(fr(out, x, 0))).toEqual([0, 2, 9, 9]);
  });
  it("accepts an output longer than the input (n defaults to x.length)", () => {
    const out = liftUnit(relu)(new Float64Array(5).fill(7), Float64Array.of(-1, 1));
    expect(Array.from(out)).toEqual([0, 1, 7, 7, 7]);
  });
  it("rejects a bad n or a short array with a typed error naming the argument", () => {
    const fr = liftUnit(relu);
    const x = new Float64Array(3);
    const cases: [() => unknown, string, string][] = [
      [() => fr(new Float64Array(3), x, -1), "invalid_parameter", "n"],
      [() => fr(new Float64Array(3), x, 1.5), "invalid_parameter", "n"],
      [() => fr(new Float64Array(3), x, Number.NaN), "invalid_parameter", "n"],
      [() => fr(new Float64Array(3), x, 4), "shape_mismatch", "x"],
      [() => fr(new Float64Array(2), x, 3), "shape_mismatch", "out"],
      [() => fr(new Float64Array(2), x), "shape_mismatch", "out"],
    ];
    for (const [run, code, path] of cases) {
      try {
        run();
        expect.unreachable(`expected ${code} at ${path}`);
      } catch (e) {
        expect(e).toBeInstanceOf(EbbflowError);
        expect((e as EbbflowError).code).toBe(code);
        expect((e as EbbflowError).path).toBe(path);
      }
    }
  });
});
