/**
 * Naive reference implementations (textbook triple loops straight from the
 * definitions, float64 arithmetic, no blocking) and data helpers for the
 * kernel tests.
 */
import fc from "fast-check";
import { expect } from "vitest";
import { createRandom } from "../../src/random/index.js";
import type { Dtype, FloatArray } from "../../src/types/index.js";
import { EPS32, EPS64 } from "../helpers/tolerance.js";

/** A reference value with the sum of the magnitudes of the terms that formed it. */
export interface Reference {
  readonly value: Float64Array;
  /** sum of |terms| per entry: the scale that rounding errors are bounded by. */
  readonly magnitude: Float64Array;
}

/** Unit roundoff scale of the storage type: EPS64 for float64, EPS32 for float32. */
export function epsOf(a: FloatArray): number {
  return a instanceof Float32Array ? EPS32 : EPS64;
}

export function make(dtype: Dtype, n: number): FloatArray {
  return dtype === "float32" ? new Float32Array(n) : new Float64Array(n);
}

/** An array of the given dtype with uniform values in [-1, 1) from a seeded stream. */
export function randomArray(dtype: Dtype, n: number, seed: number, stream: string): FloatArray {
  const rng = createRandom(seed).child(stream);
  const out = make(dtype, n);
  for (let i = 0; i < n; i++) out[i] = 2 * rng.uniform() - 1;
  return out;
}

/** C = alpha * op(A) op(B) + beta * C by the definition (BLAS: beta = 0 means C is not read). */
export function naiveGemm(
  c0: ArrayLike<number>,
  a: ArrayLike<number>,
  b: ArrayLike<number>,
  m: number,
  n: number,
  k: number,
  transA: boolean,
  transB: boolean,
  alpha: number,
  beta: number,
): Reference {
  const value = new Float64Array(m * n);
  const magnitude = new Float64Array(m * n);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < n; j++) {
      let s = 0;
      let mag = 0;
      for (let p = 0; p < k; p++) {
        const aip = (transA ? a[p * m + i] : a[i * k + p]) as number;
        const bpj = (transB ? b[j * k + p] : b[p * n + j]) as number;
        s += aip * bpj;
        mag += Math.abs(aip * bpj);
      }
      const old = beta === 0 ? 0 : beta * (c0[i * n + j] as number);
      value[i * n + j] = alpha * s + old;
      magnitude[i * n + j] = Math.abs(alpha) * mag + Math.abs(old);
    }
  }
  return { value, magnitude };
}

/** y = alpha * op(A) x + beta * y with A rows×cols as stored. */
export function naiveGemv(
  y0: ArrayLike<number>,
  a: ArrayLike<number>,
  x: ArrayLike<number>,
  rows: number,
  cols: number,
  trans: boolean,
  alpha: number,
  beta: number,
): Reference {
  const len = trans ? cols : rows;
  const inner = trans ? rows : cols;
  const value = new Float64Array(len);
  const magnitude = new Float64Array(len);
  for (let i = 0; i < len; i++) {
    let s = 0;
    let mag = 0;
    for (let p = 0; p < inner; p++) {
      const aip = (trans ? a[p * cols + i] : a[i * cols + p]) as number;
      const t = aip * (x[p] as number);
      s += t;
      mag += Math.abs(t);
    }
    const old = beta === 0 ? 0 : beta * (y0[i] as number);
    value[i] = alpha * s + old;
    magnitude[i] = Math.abs(alpha) * mag + Math.abs(old);
  }
  return { value, magnitude };
}

/**
 * Asserts |actual - value| <= factor * (eps * magnitude + tiny) entry by entry:
 * the standard forward error bound for a sum of products, |error| <= gamma_n *
 * sum |terms| with gamma_n about n * unit roundoff (Higham 2002, Accuracy and
 * Stability of Numerical Algorithms, 2nd ed., SIAM, section 3.1; from
 * memory), plus one smallest subnormal of the storage type per rounding for
 * results that underflow. Prints index, actual, expected, delta and bound on
 * failure.
 */
export function expectWithinBound(actual: ArrayLike<number>, ref: Reference, factor: number, eps: number, label: string): void {
  expect(actual.length >= ref.value.length, `${label}: length`).toBe(true);
  for (let q = 0; q < ref.value.length; q++) {
    const got = actual[q] as number;
    const want = ref.value[q] as number;
    const tiny = eps === EPS32 ? 2 ** -149 : 2 ** -1074;
    const bound = factor * (eps * (ref.magnitude[q] as number) + tiny);
    const delta = Math.abs(got - want);
    if (!(delta <= bound)) {
      expect.fail(`${label}[${q}]: actual=${got} expected=${want} delta=${delta} bound=${bound}`);
    }
  }
}

/** Asserts exact equality entry by entry (NaN equals NaN), printing the first difference. */
export function expectExact(actual: ArrayLike<number>, expected: ArrayLike<number>, label: string): void {
  expect(actual.length, `${label}: length`).toBe(expected.length);
  for (let q = 0; q < expected.length; q++) {
    const got = actual[q] as number;
    const want = expected[q] as number;
    if (!Object.is(got, want) && !(got === want)) expect.fail(`${label}[${q}]: actual=${got} expected=${want}`);
  }
}

/** fast-check arbitraries shared by the kernel property tests. */
export const arb = {
  dim: fc.integer({ min: 1, max: 17 }),
  dtype: fc.constantFrom<Dtype>("float32", "float64"),
  seed: fc.integer({ min: 0, max: 0x7fffffff }),
  /** scales including the special cases 0 and 1 */
  alpha: fc.oneof(fc.constantFrom(0, 1, -1), fc.double({ min: -3, max: 3, noNaN: true })),
  beta: fc.oneof(fc.constantFrom(0, 1, -0.5), fc.double({ min: -3, max: 3, noNaN: true })),
};
