/**
 * Seeded random streams and weight initialisers. One seed drives everything;
 * named sub-streams keep consumers independent, so adding a consumer never
 * shifts the numbers another consumer sees.
 * @module
 */
import seedrandom from "seedrandom";
import { z } from "zod";
import type { FloatArray } from "../types/index.js";
import { savedDataIssues } from "../errors/saved.js";
import { EbbflowError, issue, requireFinite, requireInteger, requireNonNegative, fail, type Issue } from "../errors/index.js";

/** The ARC4 generator's state (the key schedule `S` and the two indices), as plain JSON data. @category Random */
export interface Arc4State {
  readonly i: number;
  readonly j: number;
  readonly S: readonly number[];
}

const byte = z.number().int({ error: "an integer in [0, 255]" }).min(0, { error: "an integer in [0, 255]" }).max(255, { error: "an integer in [0, 255]" });

/**
 * Schema of a saved {@link RandomStreamState}: the ARC4 key schedule must be a permutation of 0..255 (every
 * state the generator reaches is one), the indices bytes, the spare normal deviate finite or null.
 * @category Random
 */
export const randomStreamStateSchema = z
  .object({
    name: z.string(),
    prng: z
      .object({
        i: byte,
        j: byte,
        S: z
          .array(byte)
          .length(256, { error: "256 entries" })
          .refine((s) => new Set(s).size === 256, { error: "a permutation of 0..255 (an ARC4 key schedule)" }),
      })
      .strict(),
    spare: z.number().refine(Number.isFinite, { error: "a finite number" }).nullable(),
  })
  .strict();

/** Saved state of a {@link RandomStream}, for checkpoints. @category Random */
export interface RandomStreamState {
  readonly name: string;
  readonly prng: Arc4State;
  readonly spare: number | null;
}

/**
 * A deterministic stream of random numbers (ARC4 from seedrandom).
 * @category Random
 */
export class RandomStream {
  /** The stream's full name (root seed and sub-stream path). */
  readonly name: string;
  private prng: seedrandom.StatefulPRNG<seedrandom.State.Arc4>;
  private spare: number | null = null;

  /** @internal Use {@link createRandom} or {@link RandomStream.child}. */
  constructor(name: string, state?: Arc4State) {
    this.name = name;
    this.prng = state === undefined ? seedrandom(name, { state: true }) : seedrandom("", { state: state as unknown as seedrandom.State.Arc4 });
  }

  /** Uniform number in [0, 1) with 53 bits of randomness. */
  uniform(): number {
    return this.prng.double();
  }

  /** Uniform number in [lo, hi). */
  between(lo: number, hi: number): number {
    return lo + (hi - lo) * this.prng.double();
  }

  /** Uniform integer in [0, n). */
  int(n: number): number {
    return Math.floor(this.prng.double() * n);
  }

  /** Standard normal number (Box–Muller; Box & Muller 1958, Ann. Math. Stat. 29:610). */
  normal(): number {
    if (this.spare !== null) {
      const s = this.spare;
      this.spare = null;
      return s;
    }
    let u = 0;
    while (u <= Number.MIN_VALUE) u = this.prng.double();
    const v = this.prng.double();
    const r = Math.sqrt(-2 * Math.log(u));
    this.spare = r * Math.sin(2 * Math.PI * v);
    return r * Math.cos(2 * Math.PI * v);
  }

  /** +1 or -1 with equal probability. */
  sign(): number {
    return this.prng.double() < 0.5 ? -1 : 1;
  }

  /** Shuffles `array` in place (Fisher–Yates; Knuth, TAOCP vol. 2, Algorithm P) and returns it. */
  shuffle<T extends { length: number; [i: number]: unknown }>(array: T): T {
    for (let i = array.length - 1; i > 0; i--) {
      const j = this.int(i + 1);
      const t = array[i];
      array[i] = array[j];
      array[j] = t;
    }
    return array;
  }

  /** A permutation of 0..n-1. */
  permutation(n: number): Int32Array {
    const p = new Int32Array(n);
    for (let i = 0; i < n; i++) p[i] = i;
    return this.shuffle(p);
  }

  /**
   * An independent sub-stream named `name`. Its numbers depend only on this
   * stream's name and `name`, never on how many numbers were drawn before.
   */
  child(name: string): RandomStream {
    return new RandomStream(`${this.name}/${name}`);
  }

  /** Exports the state (for checkpoints); {@link RandomStream.fromState} restores it. */
  saveState(): RandomStreamState {
    return { name: this.name, prng: structuredCloneState(this.prng.state()), spare: this.spare };
  }

  /**
   * Restores a stream saved with {@link RandomStream.saveState}. The state is checked in full first (see
   * `randomStateIssues`): a damaged one is an error, never a stream that hangs or draws other numbers.
   * @param path - Where the state sits, for errors (e.g. `trainer.shuffle`).
   * @throws {@link EbbflowError} `parse_error` naming the bad field.
   */
  static fromState(state: RandomStreamState, path = "state"): RandomStream {
    const problems = randomStateIssues(state, path);
    if (problems.length > 0) throw new EbbflowError(problems);
    const s = new RandomStream(state.name, structuredCloneState(state.prng));
    s.spare = state.spare;
    return s;
  }
}

/**
 * Problems of a saved random-stream state, checked with {@link randomStreamStateSchema}, each with its path
 * under `path` (e.g. `trainer.shuffle.prng.S[7]`).
 * @param state - The state as data.
 * @param path - Its path, for the issues.
 * @returns The problems (empty when the state is valid; at most 20).
 * @category Random
 */
export function randomStateIssues(state: unknown, path = "state"): Issue[] {
  const r = randomStreamStateSchema.safeParse(state);
  return r.success ? [] : savedDataIssues(r.error.issues, state, [path]);
}

function structuredCloneState(state: Arc4State | seedrandom.State.Arc4): Arc4State {
  return JSON.parse(JSON.stringify(state)) as Arc4State;
}

/**
 * The root stream for a seed. Use `.child("weights")`, `.child("shuffle")`, ...
 * for each consumer.
 * @category Random
 * @example
 * ```ts
 * const rng = createRandom(42);
 * const w = rng.child("weights").normal();
 * ```
 */
export function createRandom(seed: number | string): RandomStream {
  if (typeof seed === "number") requireFinite("seed", seed);
  else if (typeof seed !== "string") fail("invalid_parameter", "seed", "a number or a string", seed);
  return new RandomStream(`ebbflow:${String(seed)}`);
}


/** Fills `out` with uniform values in [lo, hi); returns `out`. @category Random */
export function fillUniform<T extends FloatArray>(out: T, rng: RandomStream, lo: number, hi: number): T {
  requireFinite("lo", lo);
  requireFinite("hi", hi);
  if (!(hi >= lo)) fail("invalid_parameter", "hi", `a number >= lo (${lo})`, hi);
  for (let i = 0; i < out.length; i++) out[i] = rng.between(lo, hi);
  return out;
}

/** Fills `out` with normal values of the given mean and standard deviation; returns `out`. @category Random */
export function fillNormal<T extends FloatArray>(out: T, rng: RandomStream, mean: number, std: number): T {
  requireFinite("mean", mean);
  requireNonNegative("std", std);
  for (let i = 0; i < out.length; i++) out[i] = mean + std * rng.normal();
  return out;
}

/**
 * Glorot (Xavier) uniform initialisation: U(-l, l), l = sqrt(6 / (fanIn + fanOut)).
 * Glorot & Bengio (2010), "Understanding the difficulty of training deep feedforward neural networks", AISTATS, PMLR 9:249–256.
 * @category Random
 */
export function fillGlorotUniform<T extends FloatArray>(out: T, rng: RandomStream, fanIn: number, fanOut: number): T {
  requireInteger("fanIn", fanIn, 1);
  requireInteger("fanOut", fanOut, 1);
  const limit = Math.sqrt(6 / (fanIn + fanOut));
  return fillUniform(out, rng, -limit, limit);
}

/**
 * Glorot (Xavier) normal initialisation: N(0, 2 / (fanIn + fanOut)).
 * Glorot & Bengio (2010), AISTATS, PMLR 9:249–256.
 * @category Random
 */
export function fillGlorotNormal<T extends FloatArray>(out: T, rng: RandomStream, fanIn: number, fanOut: number): T {
  requireInteger("fanIn", fanIn, 1);
  requireInteger("fanOut", fanOut, 1);
  return fillNormal(out, rng, 0, Math.sqrt(2 / (fanIn + fanOut)));
}

/** A weight initialiser described as data (used by model files). @category Random */
export type InitSpec =
  | { readonly kind: "uniform"; readonly low: number; readonly high: number }
  | { readonly kind: "normal"; readonly mean?: number; readonly std: number }
  | { readonly kind: "glorot-uniform" }
  | { readonly kind: "glorot-normal" }
  | { readonly kind: "constant"; readonly value: number };

/** Fills a |post|×|pre| weight matrix from an {@link InitSpec}; returns `out`. @category Random */
export function initialize<T extends FloatArray>(out: T, spec: InitSpec, rng: RandomStream, fanIn: number, fanOut: number): T {
  switch (spec.kind) {
    case "uniform":
      return fillUniform(out, rng, spec.low, spec.high);
    case "normal":
      return fillNormal(out, rng, spec.mean ?? 0, spec.std);
    case "glorot-uniform":
      return fillGlorotUniform(out, rng, fanIn, fanOut);
    case "glorot-normal":
      return fillGlorotNormal(out, rng, fanIn, fanOut);
    case "constant":
      return out.fill(requireFinite("value", spec.value)) as T;
    default:
      return fail("unknown_name", "init.kind", "one of uniform, normal, glorot-uniform, glorot-normal, constant", (spec as { kind: unknown }).kind);
  }
}
