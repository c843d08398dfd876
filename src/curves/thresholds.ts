/**
 * Sliding thresholds for plasticity curves, built on exponential traces:
 * a slower trace of the same coactivity (error-driven), the long-term average of
 * the squared postsynaptic activity (BCM, self-organising), and a weighted blend of the two.
 * @module
 */
import { EbbflowError, fail, requireInteger } from "../errors/index.js";
import { allocate, type Dtype, type FloatArray } from "../types/index.js";
import { vectorTrace, type TraceState, type VectorTrace, type VectorTraceOptions } from "../traces/index.js";

/**
 * A threshold per element, tracking a running average; `update` allocates nothing.
 * @category Curves
 */
export interface SlidingThreshold {
  /** Number of threshold elements. */
  readonly n: number;
  /** Current thresholds (live view, length n). */
  readonly value: FloatArray;
  /** The underlying trace. */
  readonly trace: VectorTrace;
  /**
   * Feeds one sample and returns {@link SlidingThreshold.value}.
   * @throws {@link EbbflowError} `shape_mismatch` (path `input`) if the input length is not n.
   */
  update(input: FloatArray): FloatArray;
  /** Sets every threshold to `value` (default 0). */
  reset(value?: number): void;
  /** Exports the thresholds as plain data. */
  saveState(): TraceState;
  /** Restores exported thresholds (validates length and finiteness). */
  loadState(state: TraceState): void;
}

/**
 * Error-driven threshold: a slower exponential trace of the same coactivity the
 * curve receives, `τ_slow dθ/dt = x - θ`. With `x` a faster trace of coactivity,
 * `calciumCurve(fast, θ)` in its linear region equals `fast - slow`: with the fast trace led by the
 * target-driven (clamped) state and the slow one by the prediction (free state), "clamped minus free".
 *
 * @param options - trace options (`tau`, `dt`, `method`, `n`, `dtype`, `initial`); the slow
 *   time constant should exceed the fast trace's
 * @returns the threshold; `update(coactivity)` steps the slow trace
 * @throws {@link EbbflowError} `invalid_parameter` naming the offending option
 * @category Curves
 * @example
 * ```ts
 * const slow = slowTraceThreshold({ tau: 50, n: 2 });
 * slow.update(new Float64Array([1, 0.5])); // Float64Array [0.0198013266932447, 0.00990066334662235]
 * ```
 */
export function slowTraceThreshold(options: VectorTraceOptions): SlidingThreshold {
  const trace = vectorTrace(options);
  return {
    n: trace.n,
    value: trace.value,
    trace,
    update: (input: FloatArray) => trace.update(input),
    reset: (value?: number) => trace.reset(value),
    saveState: () => trace.saveState(),
    loadState: (state: TraceState) => trace.loadState(state),
  };
}

class SquaredTraceThreshold implements SlidingThreshold {
  readonly n: number;
  readonly value: FloatArray;
  readonly trace: VectorTrace;
  private readonly squares: FloatArray;

  constructor(trace: VectorTrace) {
    this.trace = trace;
    this.n = trace.n;
    this.value = trace.value;
    this.squares = allocate(trace.dtype, trace.n);
  }

  update(input: FloatArray): FloatArray {
    const n = this.n;
    if (input.length !== n) fail("shape_mismatch", "input", `an array of length ${n}`, input);
    const sq = this.squares;
    for (let i = 0; i < n; i++) {
      const y = input[i] as number;
      sq[i] = y * y;
    }
    return this.trace.update(sq);
  }

  reset(value?: number): void {
    this.trace.reset(value);
  }

  saveState(): TraceState {
    return this.trace.saveState();
  }

  loadState(state: TraceState): void {
    this.trace.loadState(state);
  }
}

/**
 * BCM sliding threshold: the running average of the squared postsynaptic activity,
 * `τ_θ dθ/dt = y^2 - θ`, an online estimate of `θ = E[y^2]`
 * (Intrator & Cooper 1992, Neural Networks 5:3; Law & Cooper 1994, PNAS 91:7797; methods item 7).
 * Keep `τ_θ` well below the weights' time scale: a slow threshold makes BCM oscillate
 * (Udeigwe, Munro & Ermentrout 2017, J. Math. Neurosci. 7:2).
 *
 * @param options - trace options; `n` is the number of postsynaptic units
 * @returns the threshold; `update(y)` feeds the activities y (it squares them)
 * @throws {@link EbbflowError} `invalid_parameter` naming the offending option
 * @category Curves
 * @example
 * ```ts
 * const theta = bcmThreshold({ tau: 50, n: 1 });
 * theta.update(new Float64Array([2])); // Float64Array [0.0792053067729788] (= (1 - e^{-1/50}) * 4)
 * ```
 */
export function bcmThreshold(options: VectorTraceOptions): SlidingThreshold {
  return new SquaredTraceThreshold(vectorTrace(options));
}

/**
 * Options of a blended threshold. Thresholds are laid out like a weight matrix:
 * row i = postsynaptic unit i, column j = presynaptic unit j (`post × pre`, row-major).
 * @category Curves
 */
export interface BlendedThresholdOptions {
  /** Number of postsynaptic units (rows); integer >= 1. */
  readonly post: number;
  /** Number of presynaptic units (columns); integer >= 1, default 1 (one threshold per unit). */
  readonly pre?: number | undefined;
  /** Share m of the error-driven (slow-trace) part, in [0, 1]: `θ = m θ_slow + (1 - m) θ_bcm`. */
  readonly errorShare: number;
  /** Timing of the slow coactivity trace (`tau`, `dt`, `method`, `initial`). */
  readonly slow: Omit<VectorTraceOptions, "n" | "dtype">;
  /** Timing of the BCM trace of y^2 (`tau`, `dt`, `method`, `initial`). */
  readonly bcm: Omit<VectorTraceOptions, "n" | "dtype">;
  /** Precision; default `"float64"`. */
  readonly dtype?: Dtype | undefined;
}

/**
 * Saved state of a blended threshold.
 * @category Curves
 */
export interface BlendedThresholdState {
  /** The slow coactivity trace (post × pre values). */
  readonly slow: TraceState;
  /** The BCM trace (one value per postsynaptic unit). */
  readonly bcm: TraceState;
}

/**
 * A weighted blend of the error-driven and the BCM threshold.
 * @category Curves
 */
export interface BlendedThreshold {
  /** Rows (postsynaptic units). */
  readonly post: number;
  /** Columns (presynaptic units). */
  readonly pre: number;
  /** Share of the error-driven (slow-trace) part. */
  readonly errorShare: number;
  /** Blended thresholds, `post × pre` row-major (live view). */
  readonly value: FloatArray;
  /** The error-driven part (post × pre). */
  readonly slow: SlidingThreshold;
  /** The BCM part (one per postsynaptic unit). */
  readonly bcm: SlidingThreshold;
  /**
   * Steps both parts and writes `value[i*pre + j] = m slow[i*pre + j] + (1 - m) bcm[i]`.
   * Allocates nothing; returns `value`.
   * @throws {@link EbbflowError} `shape_mismatch` (path `coactivity` or `postActivity`) if
   *   `coactivity.length !== post*pre` or `postActivity.length !== post`; nothing is updated then.
   */
  update(coactivity: FloatArray, postActivity: FloatArray): FloatArray;
  /** Resets both parts to `value` (default 0) and recomputes the blend. */
  reset(value?: number): void;
  /** Exports both parts. */
  saveState(): BlendedThresholdState;
  /** Restores both parts (validated before anything is written) and recomputes the blend. */
  loadState(state: BlendedThresholdState): void;
}

class WeightedThreshold implements BlendedThreshold {
  readonly post: number;
  readonly pre: number;
  readonly errorShare: number;
  readonly value: FloatArray;
  readonly slow: SlidingThreshold;
  readonly bcm: SlidingThreshold;

  constructor(post: number, pre: number, errorShare: number, slow: SlidingThreshold, bcm: SlidingThreshold, dtype: Dtype) {
    this.post = post;
    this.pre = pre;
    this.errorShare = errorShare;
    this.slow = slow;
    this.bcm = bcm;
    this.value = allocate(dtype, post * pre);
    this.combine();
  }

  private combine(): void {
    const m = this.errorShare;
    const rest = 1 - m;
    const pre = this.pre;
    const s = this.slow.value;
    const b = this.bcm.value;
    const out = this.value;
    for (let i = 0, o = 0; i < this.post; i++) {
      const bi = rest * (b[i] as number);
      for (let j = 0; j < pre; j++, o++) out[o] = m * (s[o] as number) + bi;
    }
  }

  update(coactivity: FloatArray, postActivity: FloatArray): FloatArray {
    // Both lengths are checked before either part moves, so a bad call changes nothing.
    if (coactivity.length !== this.slow.n) fail("shape_mismatch", "coactivity", `an array of length ${this.slow.n} (post * pre)`, coactivity);
    if (postActivity.length !== this.post) fail("shape_mismatch", "postActivity", `an array of length ${this.post} (post)`, postActivity);
    this.slow.update(coactivity);
    this.bcm.update(postActivity);
    this.combine();
    return this.value;
  }

  reset(value?: number): void {
    this.slow.reset(value);
    this.bcm.reset(value);
    this.combine();
  }

  saveState(): BlendedThresholdState {
    return { slow: this.slow.saveState(), bcm: this.bcm.saveState() };
  }

  loadState(state: BlendedThresholdState): void {
    if (typeof state !== "object" || state === null) fail("invalid_parameter", "state", "an object { slow, bcm }", state);
    // Validate both parts on scratch copies first, so a bad state leaves this one untouched.
    const slowScratch = vectorTrace({ tau: 1, n: this.slow.n, dtype: this.slow.trace.dtype });
    const bcmScratch = vectorTrace({ tau: 1, n: this.bcm.n, dtype: this.bcm.trace.dtype });
    prefixed("state.slow", () => slowScratch.loadState(state.slow));
    prefixed("state.bcm", () => bcmScratch.loadState(state.bcm));
    this.slow.value.set(slowScratch.value);
    this.bcm.value.set(bcmScratch.value);
    this.combine();
  }
}

/** Runs `fn`, prefixing the path of any {@link EbbflowError} it throws with `prefix`. */
function prefixed<T>(prefix: string, fn: () => T): T {
  try {
    return fn();
  } catch (e) {
    if (!(e instanceof EbbflowError)) throw e;
    throw new EbbflowError(
      e.issues.map((i) => ({ ...i, path: i.path.startsWith("state.") ? `${prefix}${i.path.slice("state".length)}` : `${prefix}.${i.path}` })),
    );
  }
}

/**
 * Weighted blend of the error-driven and the BCM threshold,
 * `θ_ij = m θ_slow,ij + (1 - m) θ_bcm,i` with m the error share: m = 1 is purely error-driven
 * (clamped minus free), m = 0 purely self-organising (BCM; Bienenstock, Cooper & Munro 1982,
 * J. Neurosci. 2:32). The BCM part is per postsynaptic unit and shared along its row.
 *
 * @param options - `post`, `pre` (default 1), `errorShare` in [0, 1], `slow` and `bcm` trace timing, `dtype`
 * @returns the blended threshold
 * @throws {@link EbbflowError} `invalid_parameter` naming `post`, `pre`, `errorShare` (also for the
 *   renamed key `mix`, which is refused), `dtype`, or
 *   `slow.tau`, `bcm.dt`, ... for the trace options
 * @category Curves
 * @example
 * ```ts
 * const theta = blendedThreshold({ post: 1, pre: 2, errorShare: 0.5, slow: { tau: 1 }, bcm: { tau: 1 } });
 * theta.update(new Float64Array([1, 0]), new Float64Array([2]));
 * // slow = a·[1, 0], bcm = a·4 with a = 1 - e^-1: Float64Array [1.5803..., 1.2642...]
 * ```
 */
export function blendedThreshold(options: BlendedThresholdOptions): BlendedThreshold {
  if (typeof options !== "object" || options === null) fail("invalid_parameter", "options", "an object", options);
  const post = requireInteger("post", options.post, 1);
  const pre = options.pre === undefined ? 1 : requireInteger("pre", options.pre, 1);
  if ("mix" in options) fail("invalid_parameter", "mix", "the key errorShare (mix was renamed errorShare)", (options as { mix?: unknown }).mix);
  const errorShare = options.errorShare;
  if (typeof errorShare !== "number" || !Number.isFinite(errorShare) || errorShare < 0 || errorShare > 1) fail("invalid_parameter", "errorShare", "a number in [0, 1]", errorShare);
  const dtype = options.dtype;
  if (dtype !== undefined && dtype !== "float32" && dtype !== "float64") fail("invalid_parameter", "dtype", 'one of "float32", "float64"', dtype);
  const resolved: Dtype = dtype ?? "float64";
  if (typeof options.slow !== "object" || options.slow === null) fail("invalid_parameter", "slow", "an object with tau", options.slow);
  if (typeof options.bcm !== "object" || options.bcm === null) fail("invalid_parameter", "bcm", "an object with tau", options.bcm);
  const slow = prefixed("slow", () => slowTraceThreshold({ ...options.slow, n: post * pre, dtype: resolved }));
  const bcm = prefixed("bcm", () => bcmThreshold({ ...options.bcm, n: post, dtype: resolved }));
  return new WeightedThreshold(post, pre, errorShare, slow, bcm, resolved);
}
