/** Tolerance helpers, defined once per precision (style.md practice 7). */
import { expect } from "vitest";

/** Machine epsilon of float64 and float32. */
export const EPS64 = 2 ** -52;
export const EPS32 = 2 ** -23;

/** Relative-or-absolute closeness: |a - b| <= tol * max(1, |b|). */
export function close(actual: number, expected: number, tol: number): boolean {
  return Math.abs(actual - expected) <= tol * Math.max(1, Math.abs(expected));
}

/** Asserts closeness and prints x, actual, expected, delta and tolerance on failure. */
export function expectClose(actual: number, expected: number, tol: number, label = ""): void {
  const delta = Math.abs(actual - expected);
  const ok = Number.isFinite(actual) && delta <= tol * Math.max(1, Math.abs(expected));
  expect(ok, `${label} actual=${actual} expected=${expected} delta=${delta} tol=${tol}`).toBe(true);
}

/** Asserts elementwise closeness of two arrays. */
export function expectAllClose(actual: ArrayLike<number>, expected: ArrayLike<number>, tol: number, label = ""): void {
  expect(actual.length, `${label} length`).toBe(expected.length);
  for (let i = 0; i < expected.length; i++) expectClose(actual[i] as number, expected[i] as number, tol, `${label}[${i}]`);
}

/** Relative error ||a - b|| / ||b||. */
export function relativeError(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let num = 0;
  let den = 0;
  for (let i = 0; i < b.length; i++) {
    const d = (a[i] as number) - (b[i] as number);
    num += d * d;
    den += (b[i] as number) ** 2;
  }
  return Math.sqrt(num) / Math.sqrt(den);
}
