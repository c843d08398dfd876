/**
 * The demo scenario (our own invention): an 8-sensor touch strip on a robot fingertip.
 *
 * Two surface textures touch the strip, each at a left or a right offset:
 * - a smooth surface presses one continuous patch, the four sensors of the half it touches:
 *   left `{0,1,2,3}`, right `{4,5,6,7}`;
 * - a striped surface presses two stripes four sensors apart, starting at its offset:
 *   left `{0,1,4,5}`, right `{2,3,6,7}`.
 *
 * Patterns of the same texture share no active sensor, and every smooth pattern overlaps every striped
 * one in two sensors. The task is to name the texture whatever the offset. Both textures' patterns add up
 * to the same vector (every sensor once), so for any weights w, w·smoothL + w·smoothR = w·stripedL +
 * w·stripedR: no single layer of weights with a threshold (or an arg-max over outputs) can put both smooth
 * patterns on one side and both striped patterns on the other. It is the exclusive-or of "which half" and
 * "which phase of stripes", and it needs a hidden layer.
 * @module
 */
import { createDataset, type Dataset } from "../train/data/index.js";

/** Names of the four texture–offset patterns, in the order of {@link touchStripDataset}. @category Demo */
export const TOUCH_PATTERNS = ["smooth-left", "smooth-right", "striped-left", "striped-right"] as const;

const ACTIVE: readonly (readonly number[])[] = [
  [0, 1, 2, 3],
  [4, 5, 6, 7],
  [0, 1, 4, 5],
  [2, 3, 6, 7],
];

/**
 * The touch-strip data set: 4 examples, 8 sensor inputs (1 = pressed), 2 one-hot targets
 * (smooth, striped). `low`/`high` set the target activities (default 0 and 1).
 * @category Demo
 * @example
 * ```ts
 * const ds = touchStripDataset();
 * ds.size; // 4
 * ```
 */
export function touchStripDataset(options: { low?: number; high?: number } = {}): Dataset {
  const low = options.low ?? 0;
  const high = options.high ?? 1;
  const inputs = ACTIVE.map((on) => Array.from({ length: 8 }, (_, s) => (on.includes(s) ? 1 : 0)));
  const targets = [0, 0, 1, 1].map((c) => [c === 0 ? high : low, c === 1 ? high : low]);
  return createDataset("touch-strip", inputs, targets, { labels: [0, 0, 1, 1], classNames: ["smooth", "striped"] });
}
