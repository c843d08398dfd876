/**
 * Metrics of a network's outputs against targets, and the readout that produces the outputs.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import { patternLoss, requireLoss, type LossName } from "./loss.js";

/** Metrics of one evaluation. @category Training */
export type Metrics = {
  /** Sum over examples and output units of (y − t)². */
  readonly sse: number;
  /** Mean over examples of the training loss (`training.loss`, see {@link LossName}) on the read-out. */
  readonly loss: number;
  /** Mean over examples of −Σ [t ln y + (1 − t) ln(1 − y)], y clipped to [1e-12, 1 − 1e-12] (each output read as a probability). */
  readonly binaryCrossEntropy: number;
  /** Mean over examples of −Σ t ln softmax(y)_k (the outputs read as logits of one categorical prediction). */
  readonly softmaxCrossEntropy: number;
  /** Fraction of examples classified correctly (see {@link accumulateMetrics} for the readout). */
  readonly accuracy: number;
  /** Mean cosine between output and target vectors (0 for a zero vector). */
  readonly cosine: number;
  /** Examples whose largest output was shared by two or more units (counted as wrong). */
  readonly ties: number;
  /** Number of examples. */
  readonly examples: number;
};

/** Running sums of {@link Metrics}. @category Training */
export class MetricSums {
  /** The loss summed into `loss`. */
  readonly lossName: LossName;
  sse = 0;
  loss = 0;
  binaryCrossEntropy = 0;
  softmaxCrossEntropy = 0;
  correct = 0;
  cosine = 0;
  ties = 0;
  examples = 0;

  /** Sums for the training loss `loss` (default the squared error). */
  constructor(loss: LossName = "squared-error") {
    this.lossName = requireLoss("loss", loss);
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
 * shared by two or more units (saturated outputs tie), the example counts as wrong and as a tie.
 * @category Training
 */
export function accumulateMetrics(sums: MetricSums, y: FloatArray, t: ArrayLike<number>, batch: number, k: number): void {
  for (let p = 0; p < batch; p++) {
    let sse = 0;
    let yy = 0;
    let tt = 0;
    let yt = 0;
    let best = Number.NEGATIVE_INFINITY;
    let bestAt = -1;
    let tied = false;
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
      } else if (a === best) tied = true;
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
    } else if (tied) sums.ties++;
    else if (bestAt === tAt) sums.correct++;
    sums.examples++;
  }
}
