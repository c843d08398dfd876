/**
 * Row-compressed sparse weight storage and its kernels: the net-input drive through a sparse matrix, the
 * feedback drive through its transpose, and the contrastive change restricted to the stored entries.
 *
 * Storage (compressed sparse row, as in Saad, "Iterative Methods for Sparse Linear Systems", 2nd ed.,
 * SIAM 2003, §3.4): row i's stored entries are `values[k]` for `k` in `[rowStart[i], rowStart[i + 1])`,
 * at columns `columns[k]`, ascending within a row.
 *
 * Accuracy: every output of {@link sparseDrive}, {@link sparseDriveTransposed} and
 * {@link sparseSampledProduct} is one sum of products added term by term in a fixed order (ascending k for
 * the drive, ascending row i for the transposed drive, ascending pattern b for the sampled product),
 * accumulated in float64 by these TypeScript kernels. The WebAssembly kernels add the same terms in the
 * same order in the storage precision (f32 lanes for float32), and the relaxed-SIMD build may fuse a
 * multiply and an add. Against the exact value each result is within the inner-product bound
 * `|ŷ − y| ≤ γ_t Σ|terms|`, `γ_t = t u / (1 − t u)` for t terms (Higham, "Accuracy and Stability of
 * Numerical Algorithms", 2nd ed., SIAM 2002, §3.1), plus one rounding of the storage type; in float64 the
 * TypeScript and plain-SIMD results are bit-identical.
 * @module
 */
import { fail, requireInteger } from "../errors/index.js";
import type { Dtype, FloatArray } from "../types/index.js";
import type { ReadonlyFloatArray } from "./types.js";

/**
 * A weight matrix (rows × columns, receiving × sending units) in row-compressed form.
 * @category Kernels
 */
export interface RowCompressed {
  /** Rows (receiving units). */
  readonly rows: number;
  /** Columns (sending units). */
  readonly columns: number;
  /** rows + 1 offsets into `columns`/`values`: row i's entries are `[rowStart[i], rowStart[i + 1])`. */
  readonly rowStart: Int32Array;
  /** Column of each stored entry, ascending within each row. */
  readonly columnIndex: Int32Array;
  /** Value of each stored entry (the weights). */
  readonly values: FloatArray;
}

/**
 * Where a row-compressed matrix's arrays are allocated: the default makes ordinary typed arrays; a WebAssembly
 * backend passes its arena so the kernels read them without copies (see `allocateRowCompressed`).
 * @category Kernels
 */
export interface SparseAllocator {
  readonly values: (dtype: Dtype, n: number) => FloatArray;
  readonly indices: (n: number) => Int32Array;
}

const ordinary: SparseAllocator = {
  values: (dtype, n) => (dtype === "float32" ? new Float32Array(n) : new Float64Array(n)),
  indices: (n) => new Int32Array(n),
};

/**
 * The row-compressed form of the entries of a rows × columns matrix where `mask` is non-zero, with values
 * taken from `dense` (row-major, same shape) when given, else zero.
 * @throws `EbbflowError` `invalid_parameter` when `mask` or `dense` is shorter than rows × columns or the
 * sizes are not integers ≥ 0.
 * @category Kernels
 * @example
 * ```ts
 * const s = compressRows(Uint8Array.of(1, 0, 0, 1), 2, 2, "float64", Float64Array.of(3, 9, 9, 4));
 * // s.rowStart [0, 1, 2], s.columnIndex [0, 1], s.values [3, 4]
 * ```
 */
export function compressRows(
  mask: ArrayLike<number | boolean>,
  rows: number,
  columns: number,
  dtype: Dtype,
  dense?: ReadonlyFloatArray,
  allocator: SparseAllocator = ordinary,
): RowCompressed {
  requireInteger("rows", rows, 0);
  requireInteger("columns", columns, 0);
  if (mask.length < rows * columns) fail("invalid_parameter", "mask", `at least ${rows * columns} entries`, `${mask.length}`);
  if (dense !== undefined && dense.length < rows * columns) fail("invalid_parameter", "dense", `at least ${rows * columns} entries`, `${dense.length}`);
  let nnz = 0;
  for (let q = 0; q < rows * columns; q++) if (mask[q]) nnz++;
  const rowStart = allocator.indices(rows + 1);
  const columnIndex = allocator.indices(nnz);
  const values = allocator.values(dtype, nnz);
  let k = 0;
  for (let i = 0; i < rows; i++) {
    rowStart[i] = k;
    for (let j = 0; j < columns; j++) {
      if (!mask[i * columns + j]) continue;
      columnIndex[k] = j;
      if (dense !== undefined) values[k] = dense[i * columns + j] as number;
      k++;
    }
  }
  rowStart[rows] = k;
  return { rows, columns, rowStart, columnIndex, values };
}

/**
 * Writes the matrix in dense row-major form into `out` (rows × columns): stored entries their values, every
 * other entry exactly zero.
 * @returns `out`.
 * @category Kernels
 */
export function expandRows<T extends FloatArray>(out: T, s: RowCompressed): T {
  out.fill(0, 0, s.rows * s.columns);
  const { rowStart, columnIndex, values, columns } = s;
  for (let i = 0; i < s.rows; i++) for (let k = rowStart[i]!; k < rowStart[i + 1]!; k++) out[i * columns + columnIndex[k]!] = values[k]!;
  return out;
}

/**
 * Copies the stored entries' values from a dense row-major matrix (the inverse of {@link expandRows} on the
 * pattern).
 * @returns `s.values`.
 * @category Kernels
 */
export function gatherRows(s: RowCompressed, dense: ReadonlyFloatArray): FloatArray {
  const { rowStart, columnIndex, values, columns } = s;
  for (let i = 0; i < s.rows; i++) for (let k = rowStart[i]!; k < rowStart[i + 1]!; k++) values[k] = dense[i * columns + columnIndex[k]!]!;
  return values;
}

/** Number of stored entries. @category Kernels */
export function storedEntries(s: RowCompressed): number {
  return s.rowStart[s.rows]!;
}

/**
 * Net-input drive through a sparse matrix, `out = alpha · X Wᵀ + beta · out`: `out[b, i] = alpha Σ_k
 * values[k] x[b, columns[k]] + beta out[b, i]` for row i's stored entries k, with `out` batch × rows and `x`
 * batch × columns (row-major, pattern-major). The same product as `gemm(out, x, W, batch, rows, columns,
 * false, true, alpha, beta)` on the dense form. `beta = 0` overwrites `out` without reading it; `alpha = 0`
 * does not read `x`.
 *
 * Aliasing: `out` must not share memory with `x` or `values`.
 * @returns `out`.
 * @category Kernels
 */
export function sparseDrive<T extends FloatArray>(
  out: T,
  values: ReadonlyFloatArray,
  rowStart: Int32Array,
  columnIndex: Int32Array,
  x: ReadonlyFloatArray,
  rows: number,
  columns: number,
  batch: number,
  alpha: number,
  beta: number,
): T {
  for (let b = 0; b < batch; b++) {
    const xo = b * columns;
    const yo = b * rows;
    for (let i = 0; i < rows; i++) {
      const old = beta === 0 ? 0 : beta * out[yo + i]!;
      if (alpha === 0) {
        out[yo + i] = old;
        continue;
      }
      let s = 0;
      const end = rowStart[i + 1]!;
      for (let k = rowStart[i]!; k < end; k++) s += values[k]! * x[xo + columnIndex[k]!]!;
      out[yo + i] = alpha * s + old;
    }
  }
  return out;
}

/**
 * Feedback drive through the transpose of a sparse matrix, `out = alpha · Z W + beta · out`: `out[b, j] =
 * alpha Σ_i W[i, j] z[b, i] + beta out[b, j]`, with `out` batch × columns and `z` batch × rows. The same
 * product as `gemm(out, z, W, batch, columns, rows, false, false, alpha, beta)` on the dense form; each sum
 * runs over rows i in ascending order. `beta = 0` overwrites `out` without reading it.
 *
 * Aliasing: `out` must not share memory with `z` or `values`.
 * @returns `out`.
 * @category Kernels
 */
export function sparseDriveTransposed<T extends FloatArray>(
  out: T,
  values: ReadonlyFloatArray,
  rowStart: Int32Array,
  columnIndex: Int32Array,
  z: ReadonlyFloatArray,
  rows: number,
  columns: number,
  batch: number,
  alpha: number,
  beta: number,
): T {
  const total = batch * columns;
  if (beta === 0) out.fill(0, 0, total);
  else if (beta !== 1) for (let q = 0; q < total; q++) out[q] = beta * out[q]!;
  if (alpha === 0) return out;
  for (let b = 0; b < batch; b++) {
    const zo = b * rows;
    const yo = b * columns;
    for (let i = 0; i < rows; i++) {
      const zi = alpha * z[zo + i]!;
      const end = rowStart[i + 1]!;
      for (let k = rowStart[i]!; k < end; k++) {
        const q = yo + columnIndex[k]!;
        out[q] = out[q]! + values[k]! * zi;
      }
    }
  }
  return out;
}

/**
 * The contrastive change on the stored entries only (a sampled matrix product): `values[k] = alpha Σ_b
 * post[i, b] pre[b, j] + beta values[k]` for each stored entry k = (i, j), with `post` rows × batch
 * (unit-major, as the contrast forms keep the receiving side) and `pre` batch × columns (pattern-major).
 * On the dense form this is `gemm(W, post, pre, rows, columns, batch, false, false, alpha, beta)` read at
 * the stored entries; the entries outside the pattern are never computed. `beta = 0` overwrites without
 * reading.
 *
 * Aliasing: `values` must not share memory with `post` or `pre`.
 * @returns `values`.
 * @category Kernels
 */
export function sparseSampledProduct<T extends FloatArray>(
  values: T,
  rowStart: Int32Array,
  columnIndex: Int32Array,
  post: ReadonlyFloatArray,
  pre: ReadonlyFloatArray,
  rows: number,
  columns: number,
  batch: number,
  alpha: number,
  beta: number,
): T {
  for (let i = 0; i < rows; i++) {
    const po = i * batch;
    const end = rowStart[i + 1]!;
    for (let k = rowStart[i]!; k < end; k++) {
      const old = beta === 0 ? 0 : beta * values[k]!;
      if (alpha === 0) {
        values[k] = old;
        continue;
      }
      const j = columnIndex[k]!;
      let s = 0;
      for (let b = 0; b < batch; b++) s += post[po + b]! * pre[b * columns + j]!;
      values[k] = alpha * s + old;
    }
  }
  return values;
}

/**
 * The sparse kernels of a backend (members as the functions of the same names).
 * @category Kernels
 */
export interface SparseKernels {
  readonly sparseDrive: typeof sparseDrive;
  readonly sparseDriveTransposed: typeof sparseDriveTransposed;
  readonly sparseSampledProduct: typeof sparseSampledProduct;
  /** Allocates a row-compressed matrix's arrays where this backend's kernels read them fastest. */
  readonly allocator: SparseAllocator;
}

/** The TypeScript sparse kernels. @category Kernels */
export const typescriptSparseKernels: SparseKernels = Object.freeze({ sparseDrive, sparseDriveTransposed, sparseSampledProduct, allocator: ordinary });
