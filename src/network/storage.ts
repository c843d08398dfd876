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
