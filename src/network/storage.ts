/**
 * The storage of a built connection: when its declaration's `storage` (or the automatic choice by the
 * pattern's density) says sparse, the connection carries a row-compressed form of its weights that the
 * settler's products use. The dense `weights` array stays the parameters of record (rules, constraints,
 * worker threads, checkpoints and model files read and write it, with exact zeros outside the pattern);
 * the compressed values are gathered from it at the start of every settling, so a change made anywhere
 * is seen by the next settling.
 * @module
 */
import { chooseStorage, maskDensity } from "../kernels/storage.js";
import { compressRows, gatherRows, type RowCompressed } from "../kernels/sparse.js";
import type { KernelBackend } from "../kernels/backend.js";
import { typescriptSparseKernels } from "../kernels/sparse.js";
import type { Dtype, FloatArray } from "../types/index.js";
import type { ConnectionSpec } from "./spec.js";
import { convolutionGeometry, fieldSize, outputUnits, type ConvolutionGeometry } from "../kernels/convolution.js";

/**
 * The row-compressed form of a connection's weights (rows: receiving units, columns: sending units) when
 * its storage resolves to sparse, else null. `mask` is the connection's pattern (rows × columns, non-zero
 * where a weight exists), or null for a full connection (density 1: `"auto"` keeps it dense).
 * @category Network
 */
export function sparseFormFor(
  spec: Pick<ConnectionSpec, "storage">,
  mask: ArrayLike<number | boolean> | null,
  rows: number,
  columns: number,
  dtype: Dtype,
  weights: FloatArray,
  kernels: KernelBackend,
  path: string,
): RowCompressed | null {
  const density = mask === null ? 1 : maskDensity(mask, rows * columns);
  if (chooseStorage(spec.storage, density, dtype, path) === "dense") return null;
  // a full connection stored sparse on request: every entry is stored
  return compressRows(mask ?? new Uint8Array(rows * columns).fill(1), rows, columns, dtype, weights, (kernels.sparse ?? typescriptSparseKernels).allocator);
}

/** Copies the dense weights into the compressed values of every sparse connection (before a settling). @category Network */
export function refreshSparseForms(connections: readonly { readonly sparse?: RowCompressed | null | undefined; readonly weights: FloatArray }[]): void {
  for (const c of connections) if (c.sparse) gatherRows(c.sparse, c.weights);
}

/**
 * A convolution connection's shared kernel in the layout of the convolution kernels (`co × kh × kw × ci`), with
 * where each kernel entry lives in the dense weights, so that the settler's drives run as im2col products
 * (`convolve`). The kernel values are gathered from the dense weights at the start of every settling.
 * @category Network
 */
export interface ConvolutionForm {
  readonly geometry: ConvolutionGeometry;
  /** Per kernel entry: the index in the dense weights of one position that holds it, or -1 (reaches only padding). */
  readonly source: Int32Array;
  /** The kernel values (gathered before each settling). */
  readonly kernel: FloatArray;
}

/** The part of a compiled pattern the convolution form checks itself against. */
interface PatternView {
  readonly kind: string;
  readonly rows: number;
  readonly cols: number;
  readonly rowStart: Int32Array;
  readonly colIndex: Int32Array;
  readonly shared: { readonly parameterOf: Int32Array; readonly count: number } | null;
}

/**
 * The convolution form of a weight-shared convolution connection, or null when the connection is not one the
 * convolution kernels compute: not a `"convolution"` pattern, `storage` other than `"auto"`, wrap-around,
 * different strides or paddings along rows and columns, or a compiled pattern whose stored entries and shared
 * parameters are not exactly those of the kernels' convolution (checked entry by entry, so the two layouts
 * cannot silently disagree).
 * @category Network
 */
export function convolutionFormFor(
  spec: Pick<ConnectionSpec, "storage" | "pattern">,
  pattern: PatternView,
  from: readonly [number, number, number],
  to: readonly [number, number, number],
  oneD: boolean,
  allocate: (n: number) => FloatArray,
): ConvolutionForm | null {
  const p = spec.pattern;
  if (p === undefined || p.kind !== "convolution" || p.wrap || (spec.storage !== undefined && spec.storage !== "auto") || pattern.shared === null) return null;
  const two = (v: number | readonly [number, number], fill: number): [number, number] => (typeof v === "number" ? (oneD ? [fill, v] : [v, v]) : [v[0], v[1]]);
  const k = two(p.kernel, 1);
  const s = two(p.stride, 1);
  const pad = two(p.padding, 0);
  // the kernels take one stride and one padding for both axes
  const stride = oneD ? s[1] : s[0];
  const padding = oneD ? pad[1] : pad[0];
  // (a 1-D layer with padding pads its single row too: the output-size check below refuses it)
  if (!oneD && (s[0] !== s[1] || pad[0] !== pad[1])) return null;
  if (!(from[0] + 2 * padding >= k[0] && from[1] + 2 * padding >= k[1])) return null;
  const g = convolutionGeometry({ height: from[0], width: from[1], channels: from[2], kernelHeight: k[0], kernelWidth: k[1], outChannels: to[2], stride, padding });
  if (g.outHeight !== to[0] || g.outWidth !== to[1] || pattern.rows !== outputUnits(g) || pattern.cols !== g.height * g.width * g.channels) return null;
  const F = fieldSize(g);
  const source = new Int32Array(g.outChannels * F).fill(-1);
  const parameterOfEntry = new Int32Array(g.outChannels * F).fill(-1);
  const entryOfParameter = new Int32Array(pattern.shared.count).fill(-1);
  const { parameterOf } = pattern.shared;
  for (let oy = 0; oy < g.outHeight; oy++)
    for (let ox = 0; ox < g.outWidth; ox++)
      for (let co = 0; co < g.outChannels; co++) {
        const row = (oy * g.outWidth + ox) * g.outChannels + co;
        let at = pattern.rowStart[row]!;
        const end = pattern.rowStart[row + 1]!;
        for (let ky = 0; ky < g.kernelHeight; ky++) {
          const iy = oy * stride - padding + ky;
          if (iy < 0 || iy >= g.height) continue;
          for (let kx = 0; kx < g.kernelWidth; kx++) {
            const ix = ox * stride - padding + kx;
            if (ix < 0 || ix >= g.width) continue;
            for (let ci = 0; ci < g.channels; ci++, at++) {
              const col = (iy * g.width + ix) * g.channels + ci;
              if (at >= end || pattern.colIndex[at] !== col) return null;
              const q = co * F + (ky * g.kernelWidth + kx) * g.channels + ci;
              const par = parameterOf[at]!;
              if (parameterOfEntry[q] === -1 && entryOfParameter[par] === -1) {
                parameterOfEntry[q] = par;
                entryOfParameter[par] = q;
                source[q] = row * pattern.cols + col;
              } else if (parameterOfEntry[q] !== par || entryOfParameter[par] !== q) return null;
            }
          }
        }
        if (at !== end) return null;
      }
  return { geometry: g, source, kernel: allocate(g.outChannels * F) };
}

/** Copies each convolution connection's kernel from its dense weights (before a settling). @category Network */
export function refreshConvolutionForms(connections: readonly { readonly convolution?: ConvolutionForm | null | undefined; readonly weights: FloatArray }[]): void {
  for (const c of connections) {
    const f = c.convolution;
    if (!f) continue;
    for (let q = 0; q < f.source.length; q++) {
      const at = f.source[q]!;
      f.kernel[q] = at < 0 ? 0 : c.weights[at]!;
    }
  }
}
