/**
 * A sequence scenario (our own invention): a fingertip's four touch sensors feel one texture at a
 * time sliding past, smooth (sensors `{0,1}` pressed) or ridged (sensors `{2,3}`), and must report
 * whether the texture that passed two patterns ago was ridged. Nothing has passed two patterns ago at
 * the first two positions of a sequence, so the answer there is "no" (0). The answer cannot be read
 * from the current pattern: it needs state carried over from earlier patterns of the sequence.
 * @module
 */
import { createRandom } from "../random/index.js";
import type { NetworkSpecInput } from "../network/spec.js";
import { createSequenceDataset, type SequenceDataset } from "../train/data/sequences.js";

/** Sensor pattern of each texture: smooth, ridged. @category Demo */
export const TEXTURE_SENSORS: readonly (readonly number[])[] = [
  [1, 1, 0, 0],
  [0, 0, 1, 1],
];

/** Options of {@link textureMemoryDataset}. @category Demo */
export interface TextureMemoryOptions {
  /** Number of sequences (default 32). */
  readonly sequences?: number | undefined;
  /** Patterns per sequence (default 8). */
  readonly length?: number | undefined;
  /** Seed of the textures drawn (default 1). */
  readonly seed?: number | string | undefined;
  /** How many patterns back the report looks (default 2). */
  readonly lag?: number | undefined;
  /** Target activity of "no" (default 0; "yes" is 1 − low). The calcium rule needs a low above 0 to depress. */
  readonly low?: number | undefined;
}

/**
 * The texture-memory sequences: each position a texture drawn at random (fair coin, seeded); the
 * target at position t is 1 − low when the texture at t − lag was ridged, else low (also for t < lag).
 * @category Demo
 */
export function textureMemoryDataset(options: TextureMemoryOptions = {}): SequenceDataset {
  const S = options.sequences ?? 32;
  const L = options.length ?? 8;
  const lag = options.lag ?? 2;
  const low = options.low ?? 0;
  const rnd = createRandom(options.seed ?? 1).child("texture-memory");
  const seqs = Array.from({ length: S }, () => {
    const tex = Array.from({ length: L }, () => rnd.int(2));
    return { inputs: tex.map((k) => TEXTURE_SENSORS[k]!.slice()), targets: tex.map((_, t) => [t >= lag && tex[t - lag] === 1 ? 1 - low : low]) };
  });
  return createSequenceDataset(`texture-memory:${lag}`, seqs);
}

/** Options of {@link textureMemoryNetwork}. @category Demo */
export interface TextureMemoryNetworkOptions {
  /**
   * How the hidden layer reads the sensors and memories: `learned` (default; 8 units, the rule trains
   * their weights and the report feeds back into them) or `fixed` (a frozen random expansion, weights
   * uniform in ±`scale`, no feedback from the report: only the report's weights and the biases learn).
   */
  readonly hidden?: "learned" | "fixed" | undefined;
  /** Hidden units (default 8 learned, 16 fixed). */
  readonly size?: number | undefined;
  /** Half-width of the fixed expansion's uniform weights (default 2). */
  readonly scale?: number | undefined;
}

/**
 * The network of the scenario: the sensors feed two slow memory layers in a chain (fixed, frozen copies,
 * tau 20 and 40 by default: each keeps part of its earlier state through a pattern's settling), and a
 * hidden layer reads the sensors and both memories and drives the report. The memories are what carries
 * the past; the rule learns to read it. With `hidden: "fixed"` the hidden layer is a frozen random
 * expansion and only the read-out learns (the calcium rule's changes to a hidden layer reading drifting
 * memories follow the drift more than the error; see the sequences guide).
 * @category Demo
 */
export function textureMemoryNetwork(seed: number | string = 1, taus: readonly [number, number] = [20, 40], steps = 30, options: TextureMemoryNetworkOptions = {}): NetworkSpecInput {
  const copy = [1, 1, 0, 0, 0, 0, 1, 1].map((v) => 3 * v);
  const fixed = options.hidden === "fixed";
  const size = options.size ?? (fixed ? 16 : 8);
  const s = options.scale ?? 2;
  const read = fixed ? { init: { kind: "uniform" as const, low: -s, high: s }, frozen: true } : { init: { kind: "uniform" as const, low: -0.5, high: 0.5 } };
  return {
    seed,
    layers: [
      { name: "sensors", size: 4, role: "input" },
      { name: "recent", size: 2, role: "hidden", unit: { kind: "logistic" }, tau: taus[0], bias: -3 },
      { name: "older", size: 2, role: "hidden", unit: { kind: "logistic" }, tau: taus[1], bias: -1.5 },
      { name: "hidden", size, role: "hidden", unit: { kind: "logistic" } },
      { name: "report", size: 1, role: "output", unit: { kind: "logistic" } },
    ],
    connections: [
      { from: "sensors", to: "recent", weights: copy, frozen: true },
      { from: "recent", to: "older", weights: [3, 0, 0, 3], frozen: true },
      { from: "sensors", to: "hidden", ...read, feedback: { kind: "none" } },
      { from: "recent", to: "hidden", ...read },
      { from: "older", to: "hidden", ...read },
      { from: "hidden", to: "report", init: { kind: "uniform", low: -0.5, high: 0.5 }, feedback: fixed ? { kind: "none" } : { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.5, maxSteps: steps, tolerance: 1e-9 },
  };
}
