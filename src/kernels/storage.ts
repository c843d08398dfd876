/**
 * The storage of a connection with a pattern: dense (the full matrix, zeros outside the pattern, kept zero
 * by a mask) or row-compressed ({@link RowCompressed}), and the automatic choice between them.
 * @module
 */
import { fail, requireInteger } from "../errors/index.js";
import type { Dtype } from "../types/index.js";

/**
 * How a connection's weights are stored: `"dense"` (full matrix with a mask), `"sparse"` (row-compressed,
 * only the pattern's entries), or `"auto"` (sparse when the pattern's density is at most
 * {@link SPARSE_DENSITY_CROSSOVER} for the network's dtype, else dense).
 * @category Kernels
 */
export type StorageOption = "dense" | "sparse" | "auto";

/**
 * The density (stored entries / rows × columns) at or below which `"auto"` storage is row-compressed, per
 * dtype. Measured by `npm run bench -- sparse` (density sweep, 512 × 512, batch 16; figures in
 * docs/architecture.md, section "Sparse storage"): at these densities the sparse drive is faster than the
 * dense masked product on every backend (TypeScript, WebAssembly SIMD and relaxed SIMD); the crossover lies
 * near 0.3 on the TypeScript backend, near 0.25 (float64) and 0.12–0.15 (float32) on the WebAssembly
 * backends, whose dense float32 product runs four lanes where the sparse kernels sum in float64.
 * @category Kernels
 */
export const SPARSE_DENSITY_CROSSOVER: Readonly<Record<Dtype, number>> = Object.freeze({ float32: 0.1, float64: 0.2 });

/** Fraction of non-zero entries among the first `length` of `mask`. @category Kernels */
export function maskDensity(mask: ArrayLike<number | boolean>, length = mask.length): number {
  if (length === 0) return 0;
  let n = 0;
  for (let q = 0; q < length; q++) if (mask[q]) n++;
  return n / length;
}

/**
 * The storage a connection gets: the option when it is `"dense"` or `"sparse"`, else by density against
 * {@link SPARSE_DENSITY_CROSSOVER} of the dtype.
 * @throws `EbbflowError` `invalid_parameter` at `path` for an option other than the three.
 * @category Kernels
 */
export function chooseStorage(option: StorageOption | undefined, density: number, dtype: Dtype, path = "storage"): "dense" | "sparse" {
  if (option === undefined || option === "auto") return density <= SPARSE_DENSITY_CROSSOVER[dtype] ? "sparse" : "dense";
  if (option === "dense" || option === "sparse") return option;
  return fail("invalid_parameter", path, '"dense", "sparse" or "auto"', option);
}

/**
 * A local receptive-field mask between two single-channel sheets (rows: the receiving sheet's units,
 * columns: the sending sheet's, row-major positions): receiving unit (oy, ox) sees the `size × size` square
 * of sending units centred on (oy · stride, ox · stride) (for even sizes the extra row and column lie
 * before the centre), clipped at the sheet's edges (no wrap-around). Used by the benchmarks and tests of
 * the storage; the network's patterns come from the pattern declaration.
 * @category Kernels
 */
export function localMask(inHeight: number, inWidth: number, outHeight: number, outWidth: number, size: number, stride: number): Uint8Array {
  for (const [k, v] of Object.entries({ inHeight, inWidth, outHeight, outWidth, size, stride })) requireInteger(k, v, 1);
  const n = inHeight * inWidth;
  const mask = new Uint8Array(outHeight * outWidth * n);
  const lo = Math.floor(size / 2);
  for (let oy = 0; oy < outHeight; oy++)
    for (let ox = 0; ox < outWidth; ox++) {
      const row = (oy * outWidth + ox) * n;
      for (let dy = -lo; dy < size - lo; dy++)
        for (let dx = -lo; dx < size - lo; dx++) {
          const iy = oy * stride + dy;
          const ix = ox * stride + dx;
          if (iy >= 0 && iy < inHeight && ix >= 0 && ix < inWidth) mask[row + iy * inWidth + ix] = 1;
        }
    }
  return mask;
}
