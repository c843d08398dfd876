/**
 * Activity-sparse settling products: the settler's `eta += X·Wᵀ` through a dense weight matrix skips the
 * sending units at exactly zero in each pattern when they are many enough (see `ActiveKernels`).
 * @module
 */
import type { BackendName } from "../kernels/backend.js";
import { ACTIVE_FEEDBACK_CROSSOVER, ACTIVE_PRODUCT_CROSSOVER } from "../kernels/active.js";
import type { FloatArray } from "../types/index.js";
import type { Network } from "./network.js";

type Crossovers = Record<BackendName, { readonly wide: number; readonly narrow: number }>;
let crossoverInUse: Crossovers = { ...ACTIVE_PRODUCT_CROSSOVER };
let feedbackCrossoverInUse: Record<BackendName, number> = { ...ACTIVE_FEEDBACK_CROSSOVER };
/** Receiving units from which a product counts as wide (ACTIVE_PRODUCT_CROSSOVER). */
const WIDE = 64;
/**
 * Products a sending layer runs dense, unlisted, after one listing found it above the crossover: the listing is
 * a pass over the layer's activities, as costly as a narrow product itself (hidden → 10 outputs, profiled), and
 * a layer's density changes slowly over the steps of a settling.
 */
const RECHECK = 8;
/**
 * Fewest receiving-side entries (batch × receiving units) for which a tied-feedback product is listed at all: at
 * batch 1 the 10→500 feedback (10 entries) ran slower sparse at every density (0.4–0.8 of the dense speed, two
 * calls' overhead against a 0.5–0.9 µs product; `npm run bench -- active`), at batch 20 (200 entries) faster below
 * about half.
 */
const FEEDBACK_MIN_ENTRIES = 64;

/**
 * Sets the crossover the settler uses (benchmarks only: 0 times the dense product alone, 1 the active product
 * wherever it is exact); returns the previous one. Not part of the public API. @internal
 */
export function setActiveProductCrossover(c: Crossovers): Crossovers {
  const before = crossoverInUse;
  crossoverInUse = { ...c };
  return before;
}

/**
 * Sets the crossover of the tied-feedback products (fraction of active entries; 0: always dense, above 1: the
 * active product wherever it is exact); returns the previous one. Benchmarks and tests only. @internal
 */
export function setActiveFeedbackCrossover(c: Record<BackendName, number>): Record<BackendName, number> {
  const before = feedbackCrossoverInUse;
  feedbackCrossoverInUse = { ...c };
  return before;
}

/**
 * What the settlers chose since the last reset, per sending layer index the blocks listed and examined, and
 * the same for the tied-feedback products (entries of the receiving layer) and how often a listing was
 * reused within a step (benchmarks and tests read it). @internal
 */
export const activeProductCounts = {
  dense: 0,
  active: 0,
  listedBlocks: [] as number[],
  blocks: [] as number[],
  feedbackDense: 0,
  feedbackActive: 0,
  listedEntries: [] as number[],
  entries: [] as number[],
  reused: 0,
};

/** Per layer: the generation a listing was made in, the array listed and the count listed. */
interface Listings {
  readonly at: Int32Array;
  readonly of: (FloatArray | null)[];
  readonly listed: Int32Array;
}

function listings(layers: number): Listings {
  return { at: new Int32Array(layers), of: new Array<FloatArray | null>(layers).fill(null), listed: new Int32Array(layers) };
}

function remember(memo: Listings, l: number, generation: number, x: FloatArray, listed: number): void {
  memo.at[l] = generation;
  memo.of[l] = x;
  memo.listed[l] = listed;
}

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
  /** Per layer that receives through tied dense feedback: its non-zero entries (the blocks' arrays where a block is one entry). */
  private readonly entryIndex: (Int32Array | null)[];
  private readonly entryStart: (Int32Array | null)[];
  /** Per such layer: tied-feedback products left to run dense without listing. */
  private readonly denseForFeedback: Int32Array;
  /**
   * Listings made since the activities last changed ({@link ActiveDrive.activitiesChanged}): per layer, the
   * generation and the array listed, and the count, for the blocks and for the entries (the same listing where
   * a block is one entry), so that a layer listed for one product is not listed again for the next.
   */
  private generation = 1;
  private readonly blockListing: Listings;
  private readonly entryListing: Listings;
  /** Whether the backend's blocks are single entries (TypeScript): then one listing serves both products. */
  private readonly entryBlocks: boolean;

  constructor(
    private readonly net: Network,
    private readonly batch: number,
  ) {
    const a = net.kernels.active;
    // layers that send through a dense weight matrix (forward, or as the source of separate feedback), and
    // layers whose activities drive tied dense feedback (eta_from += gain · X_to · W)
    const sends = net.layers.map(() => false);
    const feeds = net.layers.map(() => false);
    for (const c of net.connections) {
      if (c.sparse || c.convolution || c.spec.depression !== undefined) continue;
      sends[c.from] = true;
      if (c.feedback.kind === "separate") sends[c.to] = true;
      if (c.feedback.kind === "tied" && c.feedback.gain !== 0) feeds[c.to] = true;
    }
    this.entryBlocks = a !== undefined && a.blockWidth(net.dtype) === 1;
    const L = net.layers.length;
    // where blocks are single entries, a layer that both sends and feeds back has one listing
    this.index = net.layers.map((l) => (a && (sends[l.index] || (this.entryBlocks && feeds[l.index])) ? a.indices(batch * l.size) : null));
    this.start = net.layers.map((l) => (a && (sends[l.index] || (this.entryBlocks && feeds[l.index])) ? a.indices(batch + 1) : null));
    this.entryIndex = net.layers.map((l, i) => (a && feeds[l.index] ? (this.entryBlocks ? this.index[i]! : a.indices(batch * l.size)) : null));
    this.entryStart = net.layers.map((l, i) => (a && feeds[l.index] ? (this.entryBlocks ? this.start[i]! : a.indices(batch + 1)) : null));
    this.denseFor = new Int32Array(L);
    this.denseForFeedback = new Int32Array(L);
    this.blockListing = listings(L);
    this.entryListing = listings(L);
  }

  /** The settler calls this whenever layer activities may have changed (each step, each phase): listings made before are stale. */
  activitiesChanged(): void {
    this.generation++;
  }

  /** Layer `l`'s listing as blocks or as entries: this generation's listing of the same array, or a new one. */
  private listing(x: FloatArray, m: number, l: number, asBlocks: boolean): number {
    const memo = asBlocks ? this.blockListing : this.entryListing;
    if (memo.at[l] === this.generation && memo.of[l] === x) {
      activeProductCounts.reused++;
      return memo.listed[l]!;
    }
    const a = this.net.kernels.active!;
    const listed = asBlocks ? a.listActive(x, this.batch, m, this.index[l]!, this.start[l]!) : a.listEntries(x, this.batch, m, this.entryIndex[l]!, this.entryStart[l]!);
    remember(memo, l, this.generation, x, listed);
    // where a block is one entry the same listing serves the other kind of product
    if (this.entryBlocks) remember(asBlocks ? this.entryListing : this.blockListing, l, this.generation, x, listed);
    this.count(l, listed, m, asBlocks);
    return listed;
  }

  /** Adds a listing of layer `l` (as blocks or as entries; on TypeScript one listing is both) to the counts the benchmarks read. */
  private count(l: number, listed: number, m: number, asBlocks: boolean): void {
    const counts = activeProductCounts;
    if (asBlocks || this.entryBlocks) {
      counts.listedBlocks[l] = (counts.listedBlocks[l] ?? 0) + listed;
      counts.blocks[l] = (counts.blocks[l] ?? 0) + this.batch * Math.floor(m / this.net.kernels.active!.blockWidth(this.net.dtype));
    }
    if (!asBlocks || this.entryBlocks) {
      counts.listedEntries[l] = (counts.listedEntries[l] ?? 0) + listed;
      counts.entries[l] = (counts.entries[l] ?? 0) + this.batch * m;
    }
  }

  /**
   * Tied feedback `eta (B×n) += alpha · X_to (B×m) · W` (W m×n, stored receiving × sending): the active product
   * when the backend has one that is exact at this shape and fewer than the crossover of the receiving layer's
   * entries are non-zero, else the dense `gemm`. The same bits either way (finite weights).
   */
  feedback(eta: FloatArray, x: FloatArray, w: FloatArray, n: number, m: number, to: number, alpha: number): void {
    const K = this.net.kernels;
    const a = K.active;
    const B = this.batch;
    const limit = feedbackCrossoverInUse[K.name] ?? 0;
    if (a && this.entryIndex[to] && limit > 0 && B * m >= FEEDBACK_MIN_ENTRIES && a.exactNN(B, m)) {
      if (this.denseForFeedback[to]! > 0) {
        this.denseForFeedback[to]!--;
        activeProductCounts.feedbackDense++;
        K.gemm(eta, x, w, B, n, m, false, false, alpha, 1);
        return;
      }
      const listed = this.listing(x, m, to, false);
      if (listed < limit * B * m) {
        activeProductCounts.feedbackActive++;
        a.activeProductNN(eta, x, w, B, n, m, this.entryIndex[to]!, this.entryStart[to]!, alpha, 1);
        return;
      }
      this.denseForFeedback[to] = RECHECK;
    }
    activeProductCounts.feedbackDense++;
    K.gemm(eta, x, w, B, n, m, false, false, alpha, 1);
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
      const listed = this.listing(x, m, from, true);
      const blocks = B * Math.floor(m / a.blockWidth(this.net.dtype));
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
