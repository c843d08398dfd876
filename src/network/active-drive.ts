/**
 * Activity-sparse settling products: the settler's `eta += X·Wᵀ` through a dense weight matrix skips the
 * sending units at exactly zero in each pattern when they are many enough (see `ActiveKernels`).
 * @module
 */
import type { BackendName } from "../kernels/backend.js";
import { ACTIVE_PRODUCT_CROSSOVER } from "../kernels/active.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "./network.js";

type Crossovers = Record<BackendName, { readonly wide: number; readonly narrow: number }>;
let crossoverInUse: Crossovers = { ...ACTIVE_PRODUCT_CROSSOVER };
/** Receiving units from which a product counts as wide (ACTIVE_PRODUCT_CROSSOVER). */
const WIDE = 64;
/**
 * Products a sending layer runs dense, unlisted, after one listing found it above the crossover: the listing is
 * a pass over the layer's activities, as costly as a narrow product itself (hidden → 10 outputs, profiled), and
 * a layer's density changes slowly over the steps of a settling.
 */
const RECHECK = 8;

/**
 * Sets the crossover the settler uses (benchmarks only: 0 times the dense product alone, 1 the active product
 * wherever it is exact); returns the previous one. Not part of the public API. @internal
 */
export function setActiveProductCrossover(c: Crossovers): Crossovers {
  const before = crossoverInUse;
  crossoverInUse = { ...c };
  return before;
}

/** What the settlers chose since the last reset, and per sending layer index the blocks listed and examined (benchmarks read it). @internal */
export const activeProductCounts = { dense: 0, active: 0, listedBlocks: [] as number[], blocks: [] as number[] };

/**
 * Per settler: one index list per sending layer, and the choice between the dense and the activity-sparse
 * product made per call from the measured fraction of active blocks.
 * @internal
 */
export class ActiveDrive {
  private readonly index: (Int32Array | null)[];
  private readonly start: (Int32Array | null)[];
  /** Per sending layer: products left to run dense without listing (after one found it too dense). */
  private readonly denseFor: Int32Array;

  constructor(
    private readonly net: Network,
    private readonly batch: number,
  ) {
    const a = net.kernels.active;
    // layers that send through a dense weight matrix (forward, or as the source of separate feedback)
    const sends = net.layers.map(() => false);
    for (const c of net.connections) {
      if (c.sparse || c.convolution || c.spec.depression !== undefined) continue;
      sends[c.from] = true;
      if (c.feedback.kind === "separate") sends[c.to] = true;
    }
    this.index = net.layers.map((l) => (a && sends[l.index] ? a.indices(batch * l.size) : null));
    this.start = net.layers.map((l) => (a && sends[l.index] ? a.indices(batch + 1) : null));
    this.denseFor = new Int32Array(net.layers.length);
  }

  /**
   * `eta (B×n) += X_from (B×m) · Wᵀ` (W n×m): the active product when the backend has one that is exact at this
   * shape and fewer than the crossover of the sending layer's blocks are active, else the dense `gemm`. The
   * result is the same bits either way (finite weights).
   */
  product(eta: FloatArray, x: FloatArray, w: FloatArray, n: number, m: number, from: number, alpha: number): void {
    const K = this.net.kernels;
    const a = K.active;
    const index = this.index[from];
    const start = this.start[from];
    const B = this.batch;
    const c = crossoverInUse[K.name];
    const limit = c === undefined ? 0 : n >= WIDE ? c.wide : c.narrow;
    if (a && index && start && limit > 0 && a.exact(B, m)) {
      if (this.denseFor[from]! > 0) {
        // found too dense lately: the listing would cost more than it saves; look again after RECHECK products
        this.denseFor[from]!--;
        activeProductCounts.dense++;
        K.gemm(eta, x, w, B, n, m, false, true, alpha, 1);
        return;
      }
      const listed = a.listActive(x, B, m, index, start);
      const blocks = B * Math.floor(m / a.blockWidth(this.net.dtype));
      const counts = activeProductCounts;
      counts.listedBlocks[from] = (counts.listedBlocks[from] ?? 0) + listed;
      counts.blocks[from] = (counts.blocks[from] ?? 0) + blocks;
      if (listed < limit * blocks) {
        activeProductCounts.active++;
        a.activeProduct(eta, x, w, B, n, m, index, start, alpha, 1);
        return;
      }
      this.denseFor[from] = RECHECK;
    }
    activeProductCounts.dense++;
    K.gemm(eta, x, w, B, n, m, false, true, alpha, 1);
  }
}
