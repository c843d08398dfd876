/**
 * Gauss–Legendre rule and Gaussian averages: published nodes, polynomial
 * exactness, Gaussian moments, and closed-form averages of kinked functions.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { gaussLegendre } from "../../src/units/gaussian.js";
import { gaussianAverage, hardSigmoid, relu } from "../../src/units/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";
import { normalCdf, noisyReluClosedForm } from "./normalReference.js";

const reluKink = [{ at: 0, width: 0, kink: true }] as const;

describe("gaussLegendre", () => {
  it("matches the 10-point rule of an independent implementation", () => {
    // numpy 2.4.6: python3 -c "import numpy as np; print(np.polynomial.legendre.leggauss(10))"
    // (the same values appear in Abramowitz & Stegun 1964, Table 25.4; from memory)
    const nodes = [0.14887433898163122, 0.4333953941292472, 0.6794095682990244, 0.8650633666889845, 0.9739065285171717];
    const weights = [0.2955242247147528, 0.2692667193099965, 0.219086362515982, 0.1494513491505804, 0.06667134430868814];
    const rule = gaussLegendre(10);
    for (let i = 0; i < 5; i++) {
      expectClose(rule.nodes[5 + i] as number, nodes[i] as number, 2e-16, `node ${i}`);
      expectClose(rule.nodes[4 - i] as number, -(nodes[i] as number), 2e-16, `mirrored node ${i}`);
      expectClose(rule.weights[5 + i] as number, weights[i] as number, 4e-16, `weight ${i}`);
      expectClose(rule.weights[4 - i] as number, weights[i] as number, 4e-16, `mirrored weight ${i}`);
    }
  });
  it("integrates every polynomial of degree <= 2n-1 exactly on [-1, 1] (defining property)", () => {
    for (let n = 1; n <= 16; n++) {
      const { nodes, weights } = gaussLegendre(n);
      for (let k = 0; k <= 2 * n - 1; k++) {
        let s = 0;
        for (let i = 0; i < n; i++) s += (weights[i] as number) * (nodes[i] as number) ** k;
        expectClose(s, k % 2 === 0 ? 2 / (k + 1) : 0, 1e-14, `n=${n} k=${k}`);
      }
    }
  });
});

describe("gaussianAverage", () => {
  it("gives the standard normal moments E[Z^2k] = (2k-1)!! (textbook)", () => {
    const doubleFactorial = [1, 1, 3, 15, 105, 945, 10395];
    for (let k = 0; k < doubleFactorial.length - 1; k++) {
      expectClose(gaussianAverage((t) => t ** (2 * k), 0, 1), doubleFactorial[k] as number, 1e-14, `k=${k}`);
      // odd moments vanish; rounding scales with the size of the integrand, E[Z^(2k+2)]
      expectClose(gaussianAverage((t) => t ** (2 * k + 1), 0, 1), 0, 1e-14 * (doubleFactorial[k + 1] as number), `odd k=${k}`);
    }
  });
  // |a sigma| <= 2 keeps the shifted peak 8 standard deviations inside the window [-10, 10]
  it("gives the log-normal mean E[exp(a(x + sigma Z))] = exp(a x + a^2 sigma^2 / 2) (textbook)", () => {
    check(
      fc.property(fc.double({ min: -1, max: 1, noNaN: true }), fc.double({ min: -3, max: 3, noNaN: true }), fc.double({ min: 0.05, max: 2, noNaN: true }), (a, x, s) => {
        const want = Math.exp(a * x + (a * a * s * s) / 2);
        expectClose(gaussianAverage((t) => Math.exp(a * t), x, s) / want, 1, 1e-13, `a=${a} x=${x} s=${s}`);
      }),
    );
  });
  it("averages the rectifier to x Phi(x/sigma) + sigma phi(x/sigma) (common practice)", () => {
    check(
      fc.property(fc.double({ min: -20, max: 20, noNaN: true }), fc.double({ min: 0.01, max: 5, noNaN: true }), (x, s) => {
        expectClose(gaussianAverage(relu, x, s, reluKink), noisyReluClosedForm(x, s), 1e-14, `x=${x} s=${s}`);
      }),
      200,
    );
  });
  it("averages a unit step to Phi(x/sigma), splitting at the jump (textbook)", () => {
    const step = (t: number) => (t >= 0 ? 1 : 0);
    for (const x of [-3, -0.7, 0, 0.2, 1.5]) {
      expectClose(gaussianAverage(step, x, 0.8, [{ at: 0, width: 0, kink: true }]), normalCdf(x / 0.8), 1e-15, `x=${x}`);
    }
  });
  it("averages the hard sigmoid to R(x) - R(x-1), R the averaged rectifier, since clip(t,0,1) = relu(t) - relu(t-1) [DER]", () => {
    const kinks = [
      { at: 0, width: 0, kink: true },
      { at: 1, width: 0, kink: true },
    ];
    for (const x of [-2, -0.3, 0, 0.5, 1, 1.7, 4]) {
      const want = noisyReluClosedForm(x, 0.4) - noisyReluClosedForm(x - 1, 0.4);
      expectClose(gaussianAverage(hardSigmoid, x, 0.4, kinks), want, 1e-15, `x=${x}`);
    }
  });
  it("resolves a logistic far steeper than the noise when told its width (E = 1/2 at the centre, = Phi(x/sigma) in the step limit)", () => {
    const g = 1e6;
    const f = (t: number) => 1 / (1 + Math.exp(-g * t));
    expectClose(gaussianAverage(f, 0, 1, [{ at: 0, width: 1 / g }]), 0.5, 1e-14);
    // E[logistic(g t)] - Phi(x) ~ -phi'(x) pi^2 / (6 g^2), about 4e-13 for g = 1e6
    // [DER: the error logistic(g t) - step(t) is odd with first moment -pi^2 / (6 g^2)]
    for (const x of [-2, -0.5, 0.3, 1.1]) expectClose(gaussianAverage(f, x, 1, [{ at: 0, width: 1 / g }]), normalCdf(x), 1e-11, `x=${x}`);
  });
});
