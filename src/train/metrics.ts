/**
 * Metrics of a network's outputs against targets, and the readout that produces the outputs.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import { patternLoss, requireLoss, targetRowObserved, type LossName } from "./loss.js";
import { fail } from "../errors/index.js";

/**
 * Metrics of one evaluation. Each observed read-out (an example's output layer whose targets are not
 * NaN) counts once: with one output layer a read-out is an example; with several, the overall metrics
 * pool the read-outs of every output layer and `layers` holds each layer's own.
 * @category Training
 */
export type Metrics = {
  /** Sum over examples and output units of (y − t)². */
  readonly sse: number;
  /** Mean over examples of the training loss (`training.loss`, see {@link LossName}) on the read-out. */
  readonly loss: number;
  /** Mean over examples of −Σ [t ln y + (1 − t) ln(1 − y)], y clipped to [1e-12, 1 − 1e-12] (each output read as a probability). */
  readonly binaryCrossEntropy: number;
  /** Mean over examples of −Σ t ln softmax(y)_k (the outputs read as logits of one categorical prediction). */
  readonly softmaxCrossEntropy: number;
  /** Fraction of examples classified correctly (arg-max read-out after the free phase, ties scored by the tie policy). */
  readonly accuracy: number;
  /** Mean cosine between output and target vectors (0 for a zero vector). */
  readonly cosine: number;
  /** Examples whose largest output was shared by two or more units (scored by the tie policy, see {@link TiePolicy}). */
  readonly ties: number;
  /** Number of observed read-outs (examples, with one output layer and every target observed). */
  readonly examples: number;
  /** Per output layer, when the network has more than one: the same metrics over that layer's observed read-outs. */
  readonly layers?: Readonly<Record<string, Metrics>> | undefined;
};

/**
 * How the arg-max read-out scores an example whose largest output is shared by several units:
 * `"wrong"` (default) counts it as wrong; `"first"` takes the first of the tied units (lowest index);
 * `"random"` takes one of them uniformly at random from a seeded stream.
 * @category Training
 */
export type TiePolicy = "wrong" | "first" | "random";

/** Running sums of {@link Metrics}. @category Training */
export class MetricSums {
  /** The loss summed into `loss`. */
  readonly lossName: LossName;
  /** How ties for the largest output are scored. */
  readonly tiePolicy: TiePolicy;
  /** Uniform numbers in [0, 1) for the `"random"` tie policy. */
  readonly uniform: (() => number) | null;
  sse = 0;
  loss = 0;
  binaryCrossEntropy = 0;
  softmaxCrossEntropy = 0;
  correct = 0;
  cosine = 0;
  ties = 0;
  examples = 0;

  /**
   * Sums for the training loss `loss` (default the squared error) and a tie policy (default `"wrong"`;
   * `"random"` needs `uniform`, a seeded source of numbers in [0, 1)).
   */
  constructor(loss: LossName = "squared-error", ties: TiePolicy = "wrong", uniform: (() => number) | null = null) {
    this.lossName = requireLoss("loss", loss);
    if (ties !== "wrong" && ties !== "first" && ties !== "random") fail("invalid_parameter", "ties", "wrong, first or random", ties);
    if (ties === "random" && uniform === null) fail("invalid_parameter", "uniform", "a seeded source of uniform numbers for the random tie policy", uniform);
    this.tiePolicy = ties;
    this.uniform = uniform;
  }

  /** Adds another set of sums (of the same loss) into these: pooling read-outs of several output layers. */
  add(other: MetricSums): this {
    this.sse += other.sse;
    this.loss += other.loss;
    this.binaryCrossEntropy += other.binaryCrossEntropy;
    this.softmaxCrossEntropy += other.softmaxCrossEntropy;
    this.correct += other.correct;
    this.cosine += other.cosine;
    this.ties += other.ties;
    this.examples += other.examples;
    return this;
  }

  /** The averaged metrics. */
  result(): Metrics {
    const n = Math.max(1, this.examples);
    return {
      sse: this.sse,
      loss: this.loss / n,
      binaryCrossEntropy: this.binaryCrossEntropy / n,
      softmaxCrossEntropy: this.softmaxCrossEntropy / n,
      accuracy: this.correct / n,
      cosine: this.cosine / n,
      ties: this.ties,
      examples: this.examples,
    };
  }
}

/**
 * Adds a batch of outputs (B×K) against targets (B×K) to `sums`.
 * Readout (common practice): with one output unit, the class is `y > 0.5` against `t > 0.5`; with
 * several, the arg-max of the outputs against the arg-max of the targets. When the largest output is
 * shared by two or more units (saturated outputs tie), the example counts as a tie and is scored by the
 * sums' tie policy ({@link TiePolicy}; by default as wrong). A pattern whose target row is NaN (not
 * observed) is skipped.
 * @category Training
 */
export function accumulateMetrics(sums: MetricSums, y: FloatArray, t: ArrayLike<number>, batch: number, k: number): void {
  for (let p = 0; p < batch; p++) {
    if (!targetRowObserved(t, p * k, k)) continue;
    let sse = 0;
    let yy = 0;
    let tt = 0;
    let yt = 0;
    let best = Number.NEGATIVE_INFINITY;
    let bestAt = -1;
    let tied = false;
    let count = 1;
    let tBest = Number.NEGATIVE_INFINITY;
    let tAt = -1;
    for (let j = 0; j < k; j++) {
      const a = y[p * k + j] as number;
      const b = t[p * k + j] as number;
      sse += (a - b) ** 2;
      yy += a * a;
      tt += b * b;
      yt += a * b;
      if (a > best) {
        best = a;
        bestAt = j;
        tied = false;
        count = 1;
      } else if (a === best) {
        tied = true;
        count++;
      }
      if (b > tBest) {
        tBest = b;
        tAt = j;
      }
    }
    const off = p * k;
    sums.sse += sse;
    const bce = patternLoss("binary-cross-entropy", y, t, off, k);
    const sce = patternLoss("softmax-cross-entropy", y, t, off, k);
    sums.binaryCrossEntropy += bce;
    sums.softmaxCrossEntropy += sce;
    sums.loss += sums.lossName === "squared-error" ? 0.5 * sse : sums.lossName === "binary-cross-entropy" ? bce : sce;
    sums.cosine += yy > 0 && tt > 0 ? yt / Math.sqrt(yy * tt) : 0;
    if (k === 1) {
      if ((best > 0.5) === (tBest > 0.5)) sums.correct++;
    } else if (tied) {
      sums.ties++;
      if (sums.tiePolicy === "first") {
        if (bestAt === tAt) sums.correct++;
      } else if (sums.tiePolicy === "random") {
        // the r-th of the tied units, r uniform in 0 .. count−1
        let r = Math.min(count - 1, Math.floor((sums.uniform as () => number)() * count));
        let pick = bestAt;
        for (let j = bestAt; j < k; j++) {
          if ((y[p * k + j] as number) !== best) continue;
          if (r-- === 0) {
            pick = j;
            break;
          }
        }
        if (pick === tAt) sums.correct++;
      }
    } else if (bestAt === tAt) sums.correct++;
    sums.examples++;
  }
}
