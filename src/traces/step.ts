/**
 * The filter step over typed arrays, written once per state precision so each
 * loop sees one array type (monomorphic element access in V8).
 * @module
 */
import type { FloatArray } from "../types/index.js";

/** Steps `y[yOff + i] += a (x[xOff + i] - y[yOff + i])` for i < n; Float64Array state. @internal */
export function stepFloat64(y: Float64Array, yOff: number, x: FloatArray, xOff: number, n: number, a: number): void {
  for (let i = 0; i < n; i++) {
    const yi = y[yOff + i] as number;
    y[yOff + i] = yi + a * ((x[xOff + i] as number) - yi);
  }
}

/** Steps `y[yOff + i] += a (x[xOff + i] - y[yOff + i])` for i < n; Float32Array state. @internal */
export function stepFloat32(y: Float32Array, yOff: number, x: FloatArray, xOff: number, n: number, a: number): void {
  for (let i = 0; i < n; i++) {
    const yi = y[yOff + i] as number;
    y[yOff + i] = yi + a * ((x[xOff + i] as number) - yi);
  }
}

/** Applies the step for whichever precision `y` has. @internal */
export function stepFilter(y: FloatArray, yOff: number, x: FloatArray, xOff: number, n: number, a: number): void {
  if (y instanceof Float32Array) stepFloat32(y, yOff, x, xOff, n, a);
  else stepFloat64(y, yOff, x, xOff, n, a);
}
