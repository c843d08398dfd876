import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { bcmPhi, bcmPhiScaled, applyBcmPhi, applyBcmPhiScaled, bcmObjective, bcmThreshold } from "../../src/curves/index.js";
import { createRandom, type RandomStream } from "../../src/random/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";
import { expectEbbflowError } from "../traces/expect-error.js";

const realArb = fc.double({ min: -100, max: 100, noNaN: true });

describe("bcmPhi", () => {
  it("phi(1, 2) = -1, phi(3, 2) = 3, phi(2, 2) = 0", () => {
    // methods.md item 7 [DER]: Bienenstock, Cooper & Munro 1982 (J. Neurosci. 2:32), phi(y, theta) = y (y - theta)
    expect(bcmPhi(1, 2)).toBe(-1);
    expect(bcmPhi(3, 2)).toBe(3);
    expect(bcmPhi(2, 2)).toBe(0);
  });

  it("depresses for 0 < y < theta, potentiates for y > theta, is zero at 0 and theta", () => {
    // methods.md item 7: LTD for 0 < y < theta, LTP for y > theta
    check(
      fc.property(fc.double({ min: 1e-3, max: 100, noNaN: true }), fc.double({ min: 1e-3, max: 0.999, noNaN: true }), fc.double({ min: 1.001, max: 10, noNaN: true }), (theta, below, above) => {
        expect(bcmPhi(below * theta, theta)).toBeLessThan(0);
        expect(bcmPhi(above * theta, theta)).toBeGreaterThan(0);
        expect(bcmPhi(0, theta) === 0).toBe(true); // -0 counts as zero
        expect(bcmPhi(theta, theta)).toBe(0);
      }),
    );
  });

  it("has its minimum -theta^2/4 at y = theta/2 (vertex of the parabola)", () => {
    // algebra: y (y - theta) = (y - theta/2)^2 - theta^2/4
    check(
      fc.property(fc.double({ min: 0, max: 100, noNaN: true }), realArb, (theta, y) => {
        expectClose(bcmPhi(theta / 2, theta), -(theta * theta) / 4, 1e-12, "vertex");
        expect(bcmPhi(y, theta)).toBeGreaterThanOrEqual(-(theta * theta) / 4 - 1e-9);
      }),
    );
  });

  it("bcmPhiScaled equals phi / theta for theta above the floor, and stays finite at theta <= 0", () => {
    // methods.md item 7 [MEM]: variant divided by theta, same zeros
    check(
      fc.property(realArb, fc.double({ min: 1e-3, max: 100, noNaN: true }), (y, theta) => {
        expect(bcmPhiScaled(y, theta)).toBe((y * (y - theta)) / theta);
      }),
    );
    expect(bcmPhiScaled(3, 2)).toBe(1.5);
    expect(bcmPhiScaled(1, 0)).toBe(1e6);
    expect(bcmPhiScaled(1, -1, 0.5)).toBe(4);
    expectEbbflowError(() => bcmPhiScaled(1, 1, 0), "invalid_parameter", "floor");
    expectEbbflowError(() => bcmPhiScaled(1, 1, Number.NaN), "invalid_parameter", "floor");
  });

  it("the lifted forms equal the scalar forms elementwise and may alias", () => {
    check(
      fc.property(fc.array(fc.tuple(realArb, fc.double({ min: 0, max: 100, noNaN: true })), { maxLength: 20 }), (pairs) => {
        const y = Float64Array.from(pairs.map((p) => p[0]));
        const th = Float64Array.from(pairs.map((p) => p[1]));
        const a = applyBcmPhi(new Float64Array(y.length), y, th);
        const b = applyBcmPhiScaled(new Float64Array(y.length), y, th);
        for (let i = 0; i < y.length; i++) {
          expect(a[i]).toBe(bcmPhi(y[i] as number, th[i] as number));
          expect(b[i]).toBe(bcmPhiScaled(y[i] as number, th[i] as number));
        }
        const alias = Float64Array.from(y);
        applyBcmPhi(alias, alias, th);
        expect(Array.from(alias)).toEqual(Array.from(a));
      }),
    );
    expectEbbflowError(() => applyBcmPhi(new Float64Array(2), new Float64Array(1), new Float64Array(2)), "shape_mismatch", "y");
    expectEbbflowError(() => applyBcmPhiScaled(new Float64Array(2), new Float64Array(2), new Float64Array(1)), "shape_mismatch", "theta");
    expectEbbflowError(() => applyBcmPhiScaled(new Float64Array(1), new Float64Array(1), new Float64Array(1), -1), "invalid_parameter", "floor");
  });
});

describe("bcmObjective", () => {
  it("selective fixed point gives R = K^2/12, non-selective R = 1/12", () => {
    // methods.md item 7 [DER]: Intrator & Cooper 1992 objective; K = 2: 0.333333 vs 0.083333
    expectClose(bcmObjective([2, 0]), 0.333333333333, 1e-9, "K=2 selective");
    expectClose(bcmObjective([1, 1]), 0.083333333333, 1e-9, "K=2 non-selective");
    for (const K of [2, 3, 4, 8]) {
      const sel = new Array<number>(K).fill(0);
      sel[K - 1] = K;
      expectClose(bcmObjective(sel), (K * K) / 12, 1e-12, `K=${K} selective`);
      expectClose(bcmObjective(new Array<number>(K).fill(1)), 1 / 12, 1e-12, `K=${K} non-selective`);
    }
  });

  it("its gradient for a linear neuron equals E[phi(y, E[y^2]) x] (finite differences)", () => {
    // methods.md item 7 [DER]: grad_w R = E[y^2 x] - E[y^2] E[y x] = E[phi(y, E[y^2]) x]
    check(
      fc.property(
        fc.integer({ min: 2, max: 4 }),
        fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: 16, maxLength: 16 }),
        fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: 4, maxLength: 4 }),
        (K, flatX, w) => {
          const d = 4;
          const X = Array.from({ length: K }, (_, k) => flatX.slice(k * d, k * d + d));
          const responses = (ww: number[]) => X.map((x) => x.reduce((s, v, i) => s + v * (ww[i] as number), 0));
          const y = responses(w);
          const theta = y.reduce((s, v) => s + v * v, 0) / K;
          for (let i = 0; i < d; i++) {
            const analytic = X.reduce((s, x, k) => s + (bcmPhi(y[k] as number, theta) * (x[i] as number)) / K, 0);
            const h = 1e-5;
            const wp = w.slice();
            const wm = w.slice();
            wp[i] = (wp[i] as number) + h;
            wm[i] = (wm[i] as number) - h;
            const numeric = (bcmObjective(responses(wp)) - bcmObjective(responses(wm))) / (2 * h);
            expect(Math.abs(numeric - analytic)).toBeLessThanOrEqual(1e-7);
          }
        },
      ),
    );
  });

  it("accepts explicit probabilities and validates them", () => {
    // definition: R = E[y^3]/3 - E[y^2]^2/4 with E weighted by the probabilities
    expectClose(bcmObjective([2, 0], [0.5, 0.5]), bcmObjective([2, 0]), 1e-15, "equiprobable");
    expectClose(bcmObjective([1, 3], [0.25, 0.75]), (0.25 + 0.75 * 27) / 3 - (0.25 + 0.75 * 9) ** 2 / 4, 1e-12, "weighted");
    expectEbbflowError(() => bcmObjective([]), "invalid_parameter", "responses");
    expectEbbflowError(() => bcmObjective([1, Number.NaN]), "invalid_parameter", "responses[1]");
    expectEbbflowError(() => bcmObjective([1, 2], [1]), "shape_mismatch", "probabilities");
    expectEbbflowError(() => bcmObjective([1, 2], [0.5, 0.6]), "invalid_parameter", "probabilities");
    expectEbbflowError(() => bcmObjective([1, 2], [1.5, -0.5]), "invalid_parameter", "probabilities[1]");
  });
});

/**
 * Single linear neuron y = w . x on K equiprobable patterns (rows of X), per-sample
 * BCM updates w += eta x phi(y, theta) (methods.md item 7).
 * theta is either exactly E[y^2] over the pattern set, or a low-pass trace of y^2.
 */
function simulateBcm(
  X: readonly (readonly number[])[],
  samples: number,
  threshold: { kind: "exact" } | { kind: "low-pass"; tau: number },
  rng: RandomStream,
  average = 0,
): { responses: number[]; averaged: number[] } {
  const K = X.length;
  const d = (X[0] as readonly number[]).length;
  const eta = 2e-3;
  const init = rng.child("weights");
  const pick = rng.child("patterns");
  const w = new Float64Array(d);
  for (let i = 0; i < d; i++) w[i] = init.between(0.05, 0.15); // small random positive start
  const respond = (x: readonly number[]) => {
    let y = 0;
    for (let i = 0; i < d; i++) y += (w[i] as number) * (x[i] as number);
    return y;
  };
  const trace = threshold.kind === "low-pass" ? bcmThreshold({ tau: threshold.tau, n: 1 }) : undefined;
  const yBuf = new Float64Array(1);
  const sums = new Array<number>(K).fill(0);
  for (let s = 0; s < samples; s++) {
    const x = X[pick.int(K)] as readonly number[];
    const y = respond(x);
    let theta: number;
    if (trace === undefined) {
      theta = 0;
      for (const xm of X) theta += respond(xm) ** 2 / K;
    } else {
      yBuf[0] = y;
      theta = trace.update(yBuf)[0] as number;
    }
    const phi = bcmPhi(y, theta);
    for (let i = 0; i < d; i++) w[i] = (w[i] as number) + eta * (x[i] as number) * phi;
    if (s >= samples - average) X.forEach((xm, k) => (sums[k] = (sums[k] as number) + respond(xm)));
  }
  return { responses: X.map(respond), averaged: sums.map((v) => v / Math.max(1, average)) };
}

function identity(K: number): number[][] {
  return Array.from({ length: K }, (_, k) => Array.from({ length: K }, (_, j) => (j === k ? 1 : 0)));
}

/** Asserts a selective response vector: one entry at `preferred`, the rest near 0. */
function expectSelective(responses: number[], preferred: number, tol: number): void {
  const winner = responses.indexOf(Math.max(...responses));
  responses.forEach((y, k) => {
    if (k === winner) expect(Math.abs(y - preferred), `responses ${responses}`).toBeLessThanOrEqual(tol * preferred);
    else expect(Math.abs(y), `responses ${responses}`).toBeLessThanOrEqual(tol * preferred);
  });
}

describe("BCM with a sliding threshold selects one pattern (methods.md item 7)", () => {
  it("K = 2 orthonormal patterns, exact theta = E[y^2]: responses reach (2, 0) up to which pattern wins", () => {
    // methods.md item 7 [DER, numerically verified]: selective fixed point y_pref = K, theta = 2
    for (const seed of [1, 2, 3]) expectSelective(simulateBcm(identity(2), 60_000, { kind: "exact" }, createRandom(seed)).responses, 2, 1e-6);
  });

  it("K = 4 orthonormal patterns, exact theta: preferred response 4, others 0", () => {
    // methods.md item 7 [DER, numerically verified]: selective fixed point y_pref = 4, theta = 4
    for (const seed of [1, 2]) expectSelective(simulateBcm(identity(4), 80_000, { kind: "exact" }, createRandom(seed)).responses, 4, 1e-6);
  });

  it("K = 2 non-orthogonal X = [[1, 0.5], [0.2, 1]], exact theta: responses (2, 0) up to which pattern wins", () => {
    // methods.md item 7 [DER, numerically verified]: selective point for linearly independent patterns, theta = 2
    for (const seed of [1, 2, 3]) {
      expectSelective(
        simulateBcm(
          [
            [1, 0.5],
            [0.2, 1],
          ],
          60_000,
          { kind: "exact" },
          createRandom(seed),
        ).responses,
        2,
        1e-6,
      );
    }
  });

  it("K = 2 with a low-pass threshold (tau = 50 samples) fluctuates around response 2 (within 5%)", () => {
    // methods.md item 7 [DER, numerically verified]: "ends fluctuating around response about 2", tolerance about 5%
    for (const seed of [1, 2]) {
      const { averaged } = simulateBcm(identity(2), 200_000, { kind: "low-pass", tau: 50 }, createRandom(seed), 100_000);
      expectSelective(averaged, 2, 0.05);
    }
  });

  it("the selective end point has the higher objective: R = K^2/12 against 1/12", () => {
    // methods.md item 7 [DER]: the simulated end point is the maximiser found by gradient ascent on R
    const { responses } = simulateBcm(identity(4), 80_000, { kind: "exact" }, createRandom(5));
    expectClose(bcmObjective(responses), 16 / 12, 1e-6, "R selective");
    expect(bcmObjective(responses)).toBeGreaterThan(bcmObjective([1, 1, 1, 1]));
  });

  it("the non-selective point w = (1, 1) is a fixed point that a small perturbation leaves", () => {
    // methods.md item 7 [DER]: non-selective point is a saddle (eigenvalues -p, +p for K = 2)
    const X = identity(2);
    const drift = (w: number[]) => {
      const y = X.map((x) => x[0]! * w[0]! + x[1]! * w[1]!);
      const theta = (y[0]! ** 2 + y[1]! ** 2) / 2;
      return [0, 1].map((i) => X.reduce((s, x, k) => s + (x[i]! * bcmPhi(y[k]!, theta)) / 2, 0));
    };
    expect(drift([1, 1])).toEqual([0, 0]);
    let w = [1 + 1e-3, 1 - 1e-3];
    for (let s = 0; s < 20_000; s++) {
      const g = drift(w);
      w = [w[0]! + 2e-3 * g[0]!, w[1]! + 2e-3 * g[1]!];
    }
    expectSelective(w, 2, 1e-3);
  });
});
