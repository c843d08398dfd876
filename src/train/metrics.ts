/**
 * Metrics of a network's outputs against targets, and the readout that produces the outputs.
 * @module
 */
import type { FloatArray } from "../types/index.js";

/** Metrics of one evaluation. @category Training */
export type Metrics = {
  /** Sum over examples and output units of (y − t)². */
  readonly sse: number;
  /** Mean over examples of −Σ [t ln y + (1 − t) ln(1 − y)], y clipped to [1e-12, 1 − 1e-12] (outputs read as probabilities). */
  readonly crossEntropy: number;
  /** Fraction of examples classified correctly (arg-max readout after the free phase; ties count as wrong). */
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
  sse = 0;
  crossEntropy = 0;
  correct = 0;
  cosine = 0;
  ties = 0;
  examples = 0;

  /** The averaged metrics. */
  result(): Metrics {
    const n = Math.max(1, this.examples);
    return { sse: this.sse, crossEntropy: this.crossEntropy / n, accuracy: this.correct / n, cosine: this.cosine / n, ties: this.ties, examples: this.examples };
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
    let ce = 0;
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
      const c = Math.min(1 - 1e-12, Math.max(1e-12, a));
      ce -= b * Math.log(c) + (1 - b) * Math.log(1 - c);
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
    sums.sse += sse;
    sums.crossEntropy += ce;
    sums.cosine += yy > 0 && tt > 0 ? yt / Math.sqrt(yy * tt) : 0;
    if (k === 1) {
      if ((best > 0.5) === (tBest > 0.5)) sums.correct++;
    } else if (tied) sums.ties++;
    else if (bestAt === tAt) sums.correct++;
    sums.examples++;
  }
}
