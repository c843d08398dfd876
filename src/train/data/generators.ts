/**
 * Small generated data sets: XOR, n-bit parity and random sparse pattern
 * associations. Deterministic (the random one from its seed).
 * @module
 */
import { refuseUnknownOptions } from "../../errors/options.js";
import { fail, requireFinite, requireInteger } from "../../errors/index.js";
import { createRandom, type RandomStream } from "../../random/index.js";
import { makeDataset, type Dataset } from "./dataset.js";

/**
 * Values used for the two binary states in generated sets.
 * @category Data
 */
export interface BinaryCoding {
  /** Value of an "off" bit; default 0. */
  readonly low?: number | undefined;
  /** Value of an "on" bit; default 1. Must differ from `low`. */
  readonly high?: number | undefined;
}

/** Reads and checks a binary coding. */
function coding(options: BinaryCoding): { low: number; high: number } {
  const low = requireFinite("low", options.low ?? 0);
  const high = requireFinite("high", options.high ?? 1);
  if (low === high) fail("invalid_parameter", "high", `a value different from low (${low})`, high);
  return { low, high };
}

/**
 * All `2^bits` binary patterns with their parity as the target: the output is
 * on when an odd number of inputs are on. Pattern `p` (row `p`, from 0) has input
 * `j` on when bit `bits − 1 − j` of `p` is 1, so the rows count in binary with the
 * first input as the most significant bit. Exactly half the patterns are odd.
 *
 * The parity problem, a function a single layer of threshold units cannot compute:
 * Minsky & Papert (1969), Perceptrons, MIT Press; learnt with hidden units by
 * Rumelhart, Hinton & Williams (1986), in Parallel Distributed Processing vol. 1, ch. 8, MIT Press.
 * @category Data
 * @param bits - Number of inputs, an integer in [1, 16].
 * @param options - Values for off/on bits (inputs and target), default 0 and 1.
 * @returns A set named `parity-<bits>` with 2^bits examples, `bits` inputs, 1 target.
 * @throws {@link EbbflowError} `invalid_parameter` with path `bits`, `low` or `high`.
 * @example
 * ```ts
 * parityDataset(3).targets; // Float64Array [0, 1, 1, 0, 1, 0, 0, 1]
 * ```
 */
export function parityDataset(bits: number, options: BinaryCoding = {}): Dataset {
  requireInteger("bits", bits, 1);
  refuseUnknownOptions(options, ["low", "high"]);
  if (bits > 16) fail("invalid_parameter", "bits", "an integer in [1, 16] (2^bits patterns are generated)", bits);
  const { low, high } = coding(options);
  const n = 2 ** bits;
  const inputs = new Float64Array(n * bits);
  const targets = new Float64Array(n);
  for (let p = 0; p < n; p++) {
    let ones = 0;
    for (let j = 0; j < bits; j++) {
      const on = (p >> (bits - 1 - j)) & 1;
      ones += on;
      inputs[p * bits + j] = on === 1 ? high : low;
    }
    targets[p] = ones % 2 === 1 ? high : low;
  }
  return makeDataset({ name: `parity-${bits}`, size: n, inputSize: bits, targetSize: 1, inputs, targets });
}

/**
 * The four exclusive-or patterns: inputs (0,0), (0,1), (1,0), (1,1) in that
 * order, targets 0, 1, 1, 0 (the 2-bit case of {@link parityDataset}). Not
 * linearly separable: Minsky & Papert (1969), Perceptrons, MIT Press.
 * @category Data
 * @param options - Values for off/on bits, default 0 and 1 (for example −1 and 1).
 * @returns A set named `xor` with 4 examples, 2 inputs, 1 target.
 * @throws {@link EbbflowError} `invalid_parameter` with path `low` or `high`.
 * @example
 * ```ts
 * xorDataset().targets; // Float64Array [0, 1, 1, 0]
 * ```
 */
export function xorDataset(options: BinaryCoding = {}): Dataset {
  const ds = parityDataset(2, options);
  return makeDataset({ ...ds, name: "xor" });
}

/**
 * Options of {@link randomAssociation}.
 * @category Data
 */
export interface RandomAssociationOptions {
  /** Number of pattern pairs (integer >= 1). */
  readonly patterns: number;
  /** Units per input pattern (integer >= 1). */
  readonly inputSize: number;
  /** Units per target pattern (integer >= 1). */
  readonly targetSize: number;
  /** On units per input pattern, in [1, inputSize]; default `max(1, round(inputSize / 4))`. */
  readonly activeInputs?: number | undefined;
  /** On units per target pattern, in [1, targetSize]; default `max(1, round(targetSize / 4))`. */
  readonly activeTargets?: number | undefined;
  /** Require every input pattern to differ from every other (default true), so the association is a function. */
  readonly distinctInputs?: boolean | undefined;
  /** Seed of the patterns. */
  readonly seed: number | string;
}

/** Number of ways to choose k of n, as a float (exact while below 2^53). */
function choose(n: number, k: number): number {
  let r = 1;
  for (let i = 1; i <= k; i++) r = (r * (n - k + i)) / i;
  return r;
}

/** Writes one pattern with exactly `active` of `size` units on (positions by a partial Fisher–Yates draw). */
function drawPattern(rng: RandomStream, scratch: Int32Array, out: Float64Array, offset: number, size: number, active: number): void {
  for (let j = 0; j < size; j++) scratch[j] = j;
  for (let j = 0; j < active; j++) {
    const r = j + rng.int(size - j);
    const t = scratch[j] as number;
    scratch[j] = scratch[r] as number;
    scratch[r] = t;
    out[offset + (scratch[j] as number)] = 1;
  }
}

/**
 * Random sparse binary pattern pairs to associate: each input pattern has
 * exactly `activeInputs` units on (value 1, others 0) at random positions, each
 * target pattern exactly `activeTargets`, drawn independently — the kind of
 * random pattern sets used to measure the capacity of associative memories
 * (Willshaw, Buneman & Longuet-Higgins 1969, Nature 222:960–962; from memory).
 *
 * Seeded: inputs come from `createRandom(seed).child("association").child("inputs")`,
 * targets from `.child("targets")`, so the same seed gives the same pairs and
 * changing the target size leaves the inputs unchanged. With `distinctInputs`,
 * an input pattern equal to an earlier one is drawn again.
 * @category Data
 * @param options - Pattern count, sizes, activity and seed.
 * @returns A set named `random-association` with `patterns` examples.
 * @throws {@link EbbflowError} `invalid_parameter` with the option name as path (e.g. `activeInputs`);
 *   `patterns` when more distinct inputs are asked for than C(inputSize, activeInputs).
 * @example
 * ```ts
 * const ds = randomAssociation({ patterns: 20, inputSize: 16, targetSize: 8, seed: 1 });
 * ds.inputs.slice(0, 16).reduce((a, b) => a + b); // 4 (= round(16 / 4) units on)
 * ```
 */
export function randomAssociation(options: RandomAssociationOptions): Dataset {
  if (typeof options !== "object" || options === null) fail("invalid_parameter", "options", "an options object", options);
  refuseUnknownOptions(options, ["patterns", "inputSize", "targetSize", "activeInputs", "activeTargets", "distinctInputs", "seed"]);
  const patterns = requireInteger("patterns", options.patterns, 1);
  const inputSize = requireInteger("inputSize", options.inputSize, 1);
  const targetSize = requireInteger("targetSize", options.targetSize, 1);
  const activeInputs = requireInteger("activeInputs", options.activeInputs ?? Math.max(1, Math.round(inputSize / 4)), 1);
  const activeTargets = requireInteger("activeTargets", options.activeTargets ?? Math.max(1, Math.round(targetSize / 4)), 1);
  if (activeInputs > inputSize) fail("invalid_parameter", "activeInputs", `an integer in [1, ${inputSize}] (inputSize)`, activeInputs);
  if (activeTargets > targetSize) fail("invalid_parameter", "activeTargets", `an integer in [1, ${targetSize}] (targetSize)`, activeTargets);
  const distinct = options.distinctInputs ?? true;
  if (typeof distinct !== "boolean") fail("invalid_parameter", "distinctInputs", "true or false", distinct);
  if (distinct && choose(inputSize, activeInputs) < patterns) {
    fail("invalid_parameter", "patterns", `at most C(${inputSize}, ${activeInputs}) = ${choose(inputSize, activeInputs)} distinct input patterns`, patterns);
  }
  const root = createRandom(options.seed).child("association");
  const inRng = root.child("inputs");
  const outRng = root.child("targets");
  const inputs = new Float64Array(patterns * inputSize);
  const targets = new Float64Array(patterns * targetSize);
  const scratch = new Int32Array(Math.max(inputSize, targetSize));
  const seen = new Set<string>();
  for (let p = 0; p < patterns; p++) {
    const offset = p * inputSize;
    for (;;) {
      inputs.fill(0, offset, offset + inputSize);
      drawPattern(inRng, scratch, inputs, offset, inputSize, activeInputs);
      if (!distinct) break;
      const key = inputs.subarray(offset, offset + inputSize).join("");
      if (!seen.has(key)) {
        seen.add(key);
        break;
      }
    }
  }
  for (let p = 0; p < patterns; p++) drawPattern(outRng, scratch, targets, p * targetSize, targetSize, activeTargets);
  return makeDataset({ name: "random-association", size: patterns, inputSize, targetSize, inputs, targets });
}

/** Options of {@link orientedBarsDataset}. @category Data */
export interface OrientedBarsOptions {
  /** Rows and columns of the square sensor sheet (default 8). */
  readonly size?: number | undefined;
  /** Number of bar orientations, evenly spaced over 180° from horizontal (default 4: 0°, 45°, 90°, 135°). */
  readonly orientations?: number | undefined;
  /** Offsets of the bar from the sheet's centre per orientation, evenly spaced over ±size/2 (default 2·size − 1). */
  readonly offsets?: number | undefined;
  /** Width σ of a bar's Gaussian cross-section, in sensor spacings (default 0.6). */
  readonly width?: number | undefined;
}

/**
 * Oriented bars on a square sensor sheet: every orientation at every offset across the sheet, each
 * sensor's value `exp(−d²/2σ²)` for its distance d from the bar's centre line (a scenario of our own
 * for topographic maps). Targets are one-hot orientations (labels 0..orientations−1); inputs are
 * row-major over the sheet (the layer shape `[size, size]`).
 * @category Data
 * @param options - Sheet size, orientations, offsets and bar width.
 * @returns A set named `oriented-bars-<size>` with orientations × offsets examples.
 * @throws {@link EbbflowError} `invalid_parameter` naming the option.
 * @example
 * ```ts
 * const bars = orientedBarsDataset({ size: 8 });
 * bars.size; // 60 (4 orientations × 15 offsets)
 * ```
 */
export function orientedBarsDataset(options: OrientedBarsOptions = {}): Dataset {
  refuseUnknownOptions(options, ["size", "orientations", "offsets", "width"]);
  const size = requireInteger("size", options.size ?? 8, 2);
  const k = requireInteger("orientations", options.orientations ?? 4, 2);
  const offsets = requireInteger("offsets", options.offsets ?? 2 * size - 1, 1);
  const sigma = requireFinite("width", options.width ?? 0.6);
  if (!(sigma > 0)) fail("invalid_parameter", "width", "a width > 0", sigma);
  if (size > 256) fail("invalid_parameter", "size", "an integer in [2, 256]", size);
  const n = k * offsets;
  const inputs = new Float64Array(n * size * size);
  const targets = new Float64Array(n * k);
  const labels = new Int32Array(n);
  const c = (size - 1) / 2;
  let p = 0;
  for (let o = 0; o < k; o++) {
    const theta = (o * Math.PI) / k;
    // the bar's normal (−sin θ, cos θ): a sensor at (row, col) lies at signed distance ((col − c)(−sin θ) ... ) from the centre line
    const nx = -Math.sin(theta);
    const ny = Math.cos(theta);
    for (let s = 0; s < offsets; s++) {
      const shift = offsets === 1 ? 0 : -size / 2 + (s * size) / (offsets - 1);
      for (let r = 0; r < size; r++)
        for (let q = 0; q < size; q++) {
          // x to the right, y upwards (row 0 at the top)
          const x = q - c;
          const y = c - r;
          const d = x * nx + y * ny - shift;
          inputs[p * size * size + r * size + q] = Math.exp((-d * d) / (2 * sigma * sigma));
        }
      targets[p * k + o] = 1;
      labels[p] = o;
      p++;
    }
  }
  const classNames = Array.from({ length: k }, (_, o) => `${Math.round((o * 180) / k)}°`);
  return makeDataset({ name: `oriented-bars-${size}`, size: n, inputSize: size * size, targetSize: k, inputs, targets, labels, classNames });
}
