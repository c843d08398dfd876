import { describe, it } from "vitest";
import { expectClose } from "../helpers/tolerance.js";
import { normalCdf, normalCdfSeries, upperTailContinuedFraction } from "./normalReference.js";

describe("test reference: standard normal distribution function", () => {
  // Values from Python 3 math.erfc, an independent libm implementation:
  //   python3 -c "import math; print(repr(0.5*math.erfc(-x/math.sqrt(2))))"
  const python: [number, number][] = [
    [0.5, 0.6914624612740131],
    [1, 0.8413447460685429],
    [2, 0.9772498680518208],
    [3, 0.9986501019683699],
    [-1.96, 0.024997895148220435],
    [-5, 2.866515718791946e-7],
    [-8, 6.220960574271819e-16],
  ];
  it("matches Python's math.erfc to 1e-15 absolute and 1e-13 relative", () => {
    for (const [x, want] of python) {
      const got = normalCdf(x);
      expectClose(got, want, 1e-15, `Phi(${x}) absolute`);
      expectClose(got / want, 1, 1e-13, `Phi(${x}) relative`);
    }
  });
  it("series and continued fraction agree where both converge (2 <= x <= 6)", () => {
    for (let x = 2; x <= 6; x += 0.25) expectClose(1 - normalCdfSeries(x), upperTailContinuedFraction(x), 1e-15, `x=${x}`);
  });
});
