/**
 * Seeded random streams and weight initialisers. One seed drives everything;
 * named sub-streams keep consumers independent, so adding a consumer never
 * shifts the numbers another consumer sees.
 * @module
 */
import seedrandom from "seedrandom";
import type { FloatArray } from "../types/index.js";
import { EbbflowError, issue, requireFinite, requireInteger, requireNonNegative, fail, type Issue } from "../errors/index.js";

/** The ARC4 generator's state (the key schedule `S` and the two indices), as plain JSON data. @category Random */
export interface Arc4State {
  readonly i: number;
  readonly j: number;
  readonly S: readonly number[];
}

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
   * {@link randomStateIssues}): a damaged one is an error, never a stream that hangs or draws other numbers.
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
 * Problems of a saved random-stream state: `name` a string, `prng.i` and `prng.j` integers in [0, 255],
 * `prng.S` a permutation of 0..255 (the ARC4 key schedule always is one; Rivest's RC4 as described by
 * Schneier, Applied Cryptography, 2nd ed., 1996, sec. 17.1), `spare` null or a finite number.
 * @param state - The state as data.
 * @param path - Its path, for the issues.
 * @returns The problems (empty when the state is valid).
 * @category Random
 */
export function randomStateIssues(state: unknown, path = "state"): Issue[] {
  const out: Issue[] = [];
  const byte = (v: unknown) => typeof v === "number" && Number.isInteger(v) && v >= 0 && v <= 255;
  if (state === null || typeof state !== "object" || Array.isArray(state)) return [issue("parse_error", path, "a random-stream state { name, prng, spare }", state)];
  const s = state as Record<string, unknown>;
  for (const k of Object.keys(s)) if (k !== "name" && k !== "prng" && k !== "spare") out.push(issue("parse_error", `${path}.${k}`, "no such field (unknown key)", s[k]));
  if (typeof s.name !== "string") out.push(issue("parse_error", `${path}.name`, "the stream's name as a string", s.name));
  if (!(s.spare === null || (typeof s.spare === "number" && Number.isFinite(s.spare)))) out.push(issue("parse_error", `${path}.spare`, "null or a finite number", s.spare));
  const p = s.prng as Record<string, unknown> | null | undefined;
  if (p === null || typeof p !== "object" || Array.isArray(p)) {
    out.push(issue("parse_error", `${path}.prng`, "an ARC4 state { i, j, S }", p));
    return out;
  }
  for (const k of Object.keys(p)) if (k !== "i" && k !== "j" && k !== "S") out.push(issue("parse_error", `${path}.prng.${k}`, "no such field (unknown key)", p[k]));
  if (!byte(p.i)) out.push(issue("parse_error", `${path}.prng.i`, "an integer in [0, 255]", p.i));
  if (!byte(p.j)) out.push(issue("parse_error", `${path}.prng.j`, "an integer in [0, 255]", p.j));
  const S = p.S;
  if (!Array.isArray(S) || S.length !== 256) {
    out.push(issue("parse_error", `${path}.prng.S`, "an array of 256 integers (a permutation of 0..255)", S));
    return out;
  }
  const seen = new Uint8Array(256);
  for (let k = 0; k < 256; k++) {
    const v = S[k] as unknown;
    if (!byte(v)) {
      out.push(issue("parse_error", `${path}.prng.S[${k}]`, "an integer in [0, 255]", v));
      return out;
    }
    if (seen[v as number] === 1) {
      out.push(issue("parse_error", `${path}.prng.S[${k}]`, "a permutation of 0..255 (each value once)", v, "repeated value"));
      return out;
    }
    seen[v as number] = 1;
  }
  return out;
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
export function initialise<T extends FloatArray>(out: T, spec: InitSpec, rng: RandomStream, fanIn: number, fanOut: number): T {
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
