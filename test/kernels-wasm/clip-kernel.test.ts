/**
 * Energy settling clips hard-sigmoid states with the unit kernel instead of a JavaScript loop; the two must
 * agree bit for bit (analytic: the hard sigmoid is min(1, max(0, x)) written as x < 0 → 0, x > 1 → 1, else x,
 * which keeps −0 and NaN as they are), for every value including −0, NaN, infinities and subnormals.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { createUnit } from "../../src/units/index.js";
import { fillUnit } from "../../src/kernels/units.js";
import { typescriptBackend } from "../../src/kernels/index.js";
import { check } from "../helpers/property.js";
import { wasmBackends } from "./backends.js";

const clipLoop = (v: number, lo: number, hi: number) => (v < lo ? lo : v > hi ? hi : v);

describe("hard-sigmoid clip through the unit kernel", () => {
  const unit = createUnit({ kind: "hard-sigmoid" });
  for (const be of [typescriptBackend, ...wasmBackends]) {
    for (const dtype of ["float32", "float64"] as const) {
      it(`${be.name}, ${dtype}: equals the clipping loop bit for bit`, () => {
        check(
          fc.property(fc.array(fc.oneof(fc.double(), fc.constantFrom(-0, 0, 1, -1, Number.NaN, 1e-45, -1e-45, Number.POSITIVE_INFINITY)), { minLength: 1, maxLength: 67 }), (values) => {
            const x = be.allocate(dtype, values.length);
            x.set(values);
            const want = Array.from(x, (v) => clipLoop(v, unit.lower, unit.upper));
            fillUnit(be, unit, false, x, x, values.length);
            const got = Array.from(x);
            want.forEach((w, i) => expect(Object.is(got[i], w)).toBe(true));
          }),
          80,
        );
      });
    }
  }
});
