/**
 * Weight-shared (convolution) products on channel-last sheets: a layer of shape `[h, w, c]` keeps unit
 * `(y, x, ch)` at `(y · w + x) · c + ch`, patterns row by row (batch-major). A kernel is `outChannels ×
 * kernelHeight × kernelWidth × channels`, row-major: row `co` of the `outChannels × (kh · kw · c)` matrix `K`.
 *
 * Each product exists twice: a direct loop, and an im2col-style product (the input's receptive fields
 * copied into the rows of a matrix, then one `gemm`: Chellapilla, Puri & Simard, "High performance
 * convolutional neural networks for document processing", 2006). Both compute the dense product of the
 * matrix the convolution stands for (`W[(oy, ox, co), (iy, ix, ci)] = K[co, iy − oy·s + p, ix − ox·s + p, ci]`
 * inside the field, 0 outside); the figures in docs/architecture.md (section "Sparse storage") say which
 * is faster, and {@link convolve} / {@link convolveTransposed} / {@link convolutionChange} use that one.
 * @module
 */
import { fail, requireInteger } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { KernelBackend } from "./backend.js";
import type { ReadonlyFloatArray } from "./types.js";

/**
 * The sizes of one convolution: input sheet, kernel, stride and zero padding, and the output sheet they
 * give (`outHeight = ⌊(height + 2 padding − kernelHeight) / stride⌋ + 1`, likewise the width).
 * @category Kernels
 */
export interface ConvolutionGeometry {
  readonly height: number;
  readonly width: number;
  readonly channels: number;
  readonly kernelHeight: number;
  readonly kernelWidth: number;
  readonly outChannels: number;
  readonly stride: number;
  readonly padding: number;
  readonly outHeight: number;
  readonly outWidth: number;
}

/**
 * The geometry of a convolution, with the output size computed.
 * @throws `EbbflowError` `invalid_parameter` for sizes that are not positive integers (padding ≥ 0) or a
 * kernel larger than the padded input.
 * @category Kernels
 */
export function convolutionGeometry(g: Omit<ConvolutionGeometry, "outHeight" | "outWidth">): ConvolutionGeometry {
  for (const key of ["height", "width", "channels", "kernelHeight", "kernelWidth", "outChannels", "stride"] as const) requireInteger(key, g[key], 1);
  requireInteger("padding", g.padding, 0);
  const outHeight = Math.floor((g.height + 2 * g.padding - g.kernelHeight) / g.stride) + 1;
  const outWidth = Math.floor((g.width + 2 * g.padding - g.kernelWidth) / g.stride) + 1;
  if (!(outHeight >= 1 && outWidth >= 1)) fail("invalid_parameter", "kernelHeight", "a kernel no larger than the padded input", `${g.kernelHeight}×${g.kernelWidth} on ${g.height}×${g.width} padded by ${g.padding}`);
  return { ...g, outHeight, outWidth };
}

/** Units of the input sheet. @category Kernels */
export const inputUnits = (g: ConvolutionGeometry): number => g.height * g.width * g.channels;
/** Units of the output sheet. @category Kernels */
export const outputUnits = (g: ConvolutionGeometry): number => g.outHeight * g.outWidth * g.outChannels;
/** Entries of one receptive field (columns of the im2col matrix, of `K`). @category Kernels */
export const fieldSize = (g: ConvolutionGeometry): number => g.kernelHeight * g.kernelWidth * g.channels;

/**
 * Direct convolution `out = alpha · conv(x, K) + beta · out`, batch × outputUnits; each sum runs over
 * (ky, kx, ci) in row-major order, in float64. `beta = 0` overwrites without reading.
 * @returns `out`.
 * @category Kernels
 */
export function convolveDirect<T extends FloatArray>(out: T, kernel: ReadonlyFloatArray, x: ReadonlyFloatArray, g: ConvolutionGeometry, batch: number, alpha: number, beta: number): T {
  const { height: H, width: W, channels: C, kernelHeight: KH, kernelWidth: KW, outChannels: CO, stride: S, padding: P, outHeight: HO, outWidth: WO } = g;
  const F = KH * KW * C;
  const nIn = H * W * C;
  const nOut = HO * WO * CO;
  for (let b = 0; b < batch; b++) {
    const xo = b * nIn;
    for (let oy = 0; oy < HO; oy++) {
      for (let ox = 0; ox < WO; ox++) {
        const o = b * nOut + (oy * WO + ox) * CO;
        for (let co = 0; co < CO; co++) {
          let s = 0;
          const ko = co * F;
          for (let ky = 0; ky < KH; ky++) {
            const iy = oy * S - P + ky;
            if (iy < 0 || iy >= H) continue;
            for (let kx = 0; kx < KW; kx++) {
              const ix = ox * S - P + kx;
              if (ix < 0 || ix >= W) continue;
              const xq = xo + (iy * W + ix) * C;
              const kq = ko + (ky * KW + kx) * C;
              for (let ci = 0; ci < C; ci++) s += kernel[kq + ci]! * x[xq + ci]!;
            }
          }
          out[o + co] = alpha * s + (beta === 0 ? 0 : beta * out[o + co]!);
        }
      }
    }
  }
  return out;
}

/**
 * Direct transposed convolution (the feedback through the same kernel): `out = alpha · convᵀ(z, K) + beta ·
 * out`, `out` batch × inputUnits, `z` batch × outputUnits. `beta = 0` overwrites without reading.
 * @returns `out`.
 * @category Kernels
 */
export function convolveTransposedDirect<T extends FloatArray>(out: T, kernel: ReadonlyFloatArray, z: ReadonlyFloatArray, g: ConvolutionGeometry, batch: number, alpha: number, beta: number): T {
  const { height: H, width: W, channels: C, kernelHeight: KH, kernelWidth: KW, outChannels: CO, stride: S, padding: P, outHeight: HO, outWidth: WO } = g;
  const F = KH * KW * C;
  const nIn = H * W * C;
  const nOut = HO * WO * CO;
  const total = batch * nIn;
  if (beta === 0) out.fill(0, 0, total);
  else if (beta !== 1) for (let q = 0; q < total; q++) out[q] = beta * out[q]!;
  if (alpha === 0) return out;
  for (let b = 0; b < batch; b++) {
    const xo = b * nIn;
    for (let oy = 0; oy < HO; oy++) {
      for (let ox = 0; ox < WO; ox++) {
        const o = b * nOut + (oy * WO + ox) * CO;
        for (let co = 0; co < CO; co++) {
          const zc = alpha * z[o + co]!;
          if (zc === 0) continue;
          const ko = co * F;
          for (let ky = 0; ky < KH; ky++) {
            const iy = oy * S - P + ky;
            if (iy < 0 || iy >= H) continue;
            for (let kx = 0; kx < KW; kx++) {
              const ix = ox * S - P + kx;
              if (ix < 0 || ix >= W) continue;
              const xq = xo + (iy * W + ix) * C;
              const kq = ko + (ky * KW + kx) * C;
              for (let ci = 0; ci < C; ci++) out[xq + ci] = out[xq + ci]! + kernel[kq + ci]! * zc;
            }
          }
        }
      }
    }
  }
  return out;
}

/**
 * Direct change of a shared kernel: `K = alpha · Σ_b Σ_positions post[b, pos, co] · x[b, field(pos)] + beta · K`
 * (each shared weight receives the sum of its positions' products: the gradient of a shared weight), with
 * `post` batch × outputUnits and `x` batch × inputUnits (pattern-major). `beta = 0` overwrites without reading.
 * @returns `kernel`.
 * @category Kernels
 */
export function convolutionChangeDirect<T extends FloatArray>(kernel: T, post: ReadonlyFloatArray, x: ReadonlyFloatArray, g: ConvolutionGeometry, batch: number, alpha: number, beta: number): T {
  const { height: H, width: W, channels: C, kernelHeight: KH, kernelWidth: KW, outChannels: CO, stride: S, padding: P, outHeight: HO, outWidth: WO } = g;
  const F = KH * KW * C;
  const nIn = H * W * C;
  const nOut = HO * WO * CO;
  for (let co = 0; co < CO; co++) {
    for (let ky = 0; ky < KH; ky++) {
      for (let kx = 0; kx < KW; kx++) {
        for (let ci = 0; ci < C; ci++) {
          let s = 0;
          for (let b = 0; b < batch; b++) {
            for (let oy = 0; oy < HO; oy++) {
              const iy = oy * S - P + ky;
              if (iy < 0 || iy >= H) continue;
              for (let ox = 0; ox < WO; ox++) {
                const ix = ox * S - P + kx;
                if (ix < 0 || ix >= W) continue;
                s += post[b * nOut + (oy * WO + ox) * CO + co]! * x[b * nIn + (iy * W + ix) * C + ci]!;
              }
            }
          }
          const q = co * F + (ky * KW + kx) * C + ci;
          kernel[q] = alpha * s + (beta === 0 ? 0 : beta * kernel[q]!);
        }
      }
    }
  }
  return kernel;
}

/**
 * The receptive fields of a batch as the rows of a matrix: `columns` is (batch · outHeight · outWidth) ×
 * fieldSize, row `(b, oy, ox)` holding the field's inputs in (ky, kx, ci) order, zero where the field
 * reaches into the padding.
 * @returns `columns`.
 * @category Kernels
 */
export function fieldsToRows<T extends FloatArray>(columns: T, x: ReadonlyFloatArray, g: ConvolutionGeometry, batch: number): T {
  const { height: H, width: W, channels: C, kernelHeight: KH, kernelWidth: KW, stride: S, padding: P, outHeight: HO, outWidth: WO } = g;
  const F = KH * KW * C;
  const nIn = H * W * C;
  let r = 0;
  for (let b = 0; b < batch; b++) {
    const xo = b * nIn;
    for (let oy = 0; oy < HO; oy++) {
      for (let ox = 0; ox < WO; ox++, r += F) {
        for (let ky = 0; ky < KH; ky++) {
          const iy = oy * S - P + ky;
          const ro = r + ky * KW * C;
          if (iy < 0 || iy >= H) {
            columns.fill(0, ro, ro + KW * C);
            continue;
          }
          for (let kx = 0; kx < KW; kx++) {
            const ix = ox * S - P + kx;
            const q = ro + kx * C;
            if (ix < 0 || ix >= W) columns.fill(0, q, q + C);
            else {
              const xq = xo + (iy * W + ix) * C;
              for (let ci = 0; ci < C; ci++) columns[q + ci] = x[xq + ci]!;
            }
          }
        }
      }
    }
  }
  return columns;
}

/**
 * Adds the rows of a receptive-field matrix back onto the sheets they came from (the adjoint of
 * {@link fieldsToRows}): `out[b, field(pos)] += columns[(b, pos)]`.
 * @returns `out`.
 * @category Kernels
 */
export function rowsToFields<T extends FloatArray>(out: T, columns: ReadonlyFloatArray, g: ConvolutionGeometry, batch: number): T {
  const { height: H, width: W, channels: C, kernelHeight: KH, kernelWidth: KW, stride: S, padding: P, outHeight: HO, outWidth: WO } = g;
  const F = KH * KW * C;
  const nIn = H * W * C;
  let r = 0;
  for (let b = 0; b < batch; b++) {
    const xo = b * nIn;
    for (let oy = 0; oy < HO; oy++) {
      for (let ox = 0; ox < WO; ox++, r += F) {
        for (let ky = 0; ky < KH; ky++) {
          const iy = oy * S - P + ky;
          if (iy < 0 || iy >= H) continue;
          for (let kx = 0; kx < KW; kx++) {
            const ix = ox * S - P + kx;
            if (ix < 0 || ix >= W) continue;
            const xq = xo + (iy * W + ix) * C;
            const q = r + (ky * KW + kx) * C;
            for (let ci = 0; ci < C; ci++) out[xq + ci] = out[xq + ci]! + columns[q + ci]!;
          }
        }
      }
    }
  }
  return out;
}

/** Elements of the im2col work array for a batch: (batch · outHeight · outWidth) × fieldSize. @category Kernels */
export const fieldRowsLength = (g: ConvolutionGeometry, batch: number): number => batch * g.outHeight * g.outWidth * fieldSize(g);

/**
 * im2col convolution: the fields copied into `work` ({@link fieldsToRows}), then `out = alpha · work Kᵀ +
 * beta · out` by the backend's `gemm` (the output rows (b, oy, ox) × outChannels are the channel-last sheet).
 * `work` needs {@link fieldRowsLength} elements.
 * @returns `out`.
 * @category Kernels
 */
export function convolveByRows<T extends FloatArray>(be: KernelBackend, out: T, kernel: ReadonlyFloatArray, x: ReadonlyFloatArray, g: ConvolutionGeometry, batch: number, alpha: number, beta: number, work: FloatArray): T {
  fieldsToRows(work, x, g, batch);
  return be.gemm(out, work, kernel, batch * g.outHeight * g.outWidth, g.outChannels, fieldSize(g), false, true, alpha, beta);
}

/**
 * im2col transposed convolution: `work = z K` by the backend's `gemm`, then the rows added back onto the
 * sheets ({@link rowsToFields}) after `out` is scaled by `beta`.
 * @returns `out`.
 * @category Kernels
 */
export function convolveTransposedByRows<T extends FloatArray>(be: KernelBackend, out: T, kernel: ReadonlyFloatArray, z: ReadonlyFloatArray, g: ConvolutionGeometry, batch: number, alpha: number, beta: number, work: FloatArray): T {
  const n = batch * inputUnits(g);
  if (beta === 0) be.fill(out, 0, n);
  else if (beta !== 1) be.scale(out, out, beta, n);
  if (alpha === 0) return out;
  be.gemm(work, z, kernel, batch * g.outHeight * g.outWidth, fieldSize(g), g.outChannels, false, false, alpha, 0);
  return rowsToFields(out, work, g, batch);
}

/**
 * im2col change of a shared kernel: the fields copied into `work`, then `K = alpha · postᵀ work + beta · K`
 * by the backend's `gemm` (post viewed as (batch · positions) × outChannels).
 * @returns `kernel`.
 * @category Kernels
 */
export function convolutionChangeByRows<T extends FloatArray>(be: KernelBackend, kernel: T, post: ReadonlyFloatArray, x: ReadonlyFloatArray, g: ConvolutionGeometry, batch: number, alpha: number, beta: number, work: FloatArray): T {
  fieldsToRows(work, x, g, batch);
  return be.gemm(kernel, post, work, g.outChannels, fieldSize(g), batch * g.outHeight * g.outWidth, true, false, alpha, beta);
}

/**
 * The dense matrix a convolution stands for (outputUnits × inputUnits, zeros outside the fields), written
 * into `out`: for checks and for the dense-with-mask storage of a convolution pattern.
 * @returns `out`.
 * @category Kernels
 */
export function convolutionMatrix<T extends FloatArray>(out: T, kernel: ReadonlyFloatArray, g: ConvolutionGeometry): T {
  const { height: H, width: W, channels: C, kernelHeight: KH, kernelWidth: KW, outChannels: CO, stride: S, padding: P, outHeight: HO, outWidth: WO } = g;
  const nIn = H * W * C;
  const F = KH * KW * C;
  out.fill(0, 0, outputUnits(g) * nIn);
  for (let oy = 0; oy < HO; oy++)
    for (let ox = 0; ox < WO; ox++)
      for (let co = 0; co < CO; co++) {
        const row = ((oy * WO + ox) * CO + co) * nIn;
        for (let ky = 0; ky < KH; ky++) {
          const iy = oy * S - P + ky;
          if (iy < 0 || iy >= H) continue;
          for (let kx = 0; kx < KW; kx++) {
            const ix = ox * S - P + kx;
            if (ix < 0 || ix >= W) continue;
            for (let ci = 0; ci < C; ci++) out[row + (iy * W + ix) * C + ci] = kernel[co * F + (ky * KW + kx) * C + ci]!;
          }
        }
      }
  return out;
}

/**
 * The convolution products to use: the im2col forms, measured faster than the direct loops in every case of
 * `npm run bench -- sparse` (about 2–20× on the TypeScript and WebAssembly backends, both dtypes, forward,
 * transposed and kernel change; figures in docs/architecture.md, section "Sparse storage"). Each takes a work
 * array of {@link fieldRowsLength} elements.
 * @category Kernels
 */
export const convolve = convolveByRows;
/** The transposed convolution to use (im2col form; see {@link convolve}). @category Kernels */
export const convolveTransposed = convolveTransposedByRows;
/** The shared-kernel change to use (im2col form; see {@link convolve}). @category Kernels */
export const convolutionChange = convolutionChangeByRows;
