/**
 * A bank of identical exponential traces over a typed vector (one per unit).
 * @module
 */
import { fail, requireFinite, requireInteger } from "../errors/index.js";
import { allocate, type Dtype, type FloatArray } from "../types/index.js";
import { resolveTiming, type TraceMethod, type TraceOptions } from "./coefficient.js";
import { readValues, toPlain, traceValues, type TraceState } from "./state.js";
import { stepFilter } from "./step.js";

/**
 * Options of a vector trace.
 * @category Traces
 */
export interface VectorTraceOptions extends TraceOptions {
  /** Number of units (filters in the bank); integer >= 1. */
  readonly n: number;
  /** Precision of the state; default `"float64"`. */
  readonly dtype?: Dtype | undefined;
  /** Starting output of every unit; finite, default 0. */
  readonly initial?: number | undefined;
}

/**
 * A bank of `n` exponential traces `tau dy_i/dt = x_i - y_i` sharing one time
 * constant, stored in one typed array.
 * @category Traces
 */
export interface VectorTrace {
  /** Number of units. */
  readonly n: number;
  /** Precision of {@link VectorTrace.value}. */
  readonly dtype: Dtype;
  /** Time constant. */
  readonly tau: number;
  /** Step. */
  readonly dt: number;
  /** Discretisation. */
  readonly method: TraceMethod;
  /** Smoothing coefficient `a` of one step. */
  readonly coefficient: number;
  /**
   * The outputs, a live view of the internal state (length `n`). Read it freely;
   * writing into it sets the state.
   */
  readonly value: FloatArray;
  /**
   * Feeds one input vector (held over the step): `y_i <- y_i + a (x_i - y_i)`.
   * Writes the internal state, allocates nothing and returns {@link VectorTrace.value}.
   * `input` may be `value` itself (a constant input: no change).
   * @throws {@link EbbflowError} `shape_mismatch` (path `input`) if `input.length !== n` (one O(1) check per call).
   */
  update(input: FloatArray): FloatArray;
  /** Sets every output to `value` (default 0). @throws {@link EbbflowError} `invalid_parameter` (path `value`) if not finite. */
  reset(value?: number): void;
  /** Exports the outputs as plain data (a copy). */
  saveState(): TraceState;
  /** Restores exported outputs. @throws {@link EbbflowError} if `values` is not `n` finite numbers (state untouched). */
  loadState(state: TraceState): void;
}

class BankTrace implements VectorTrace {
  readonly n: number;
  readonly dtype: Dtype;
  readonly tau: number;
  readonly dt: number;
  readonly method: TraceMethod;
  readonly coefficient: number;
  readonly value: FloatArray;

  constructor(n: number, dtype: Dtype, tau: number, dt: number, method: TraceMethod, coefficient: number, initial: number) {
    this.n = n;
    this.dtype = dtype;
    this.tau = tau;
    this.dt = dt;
    this.method = method;
    this.coefficient = coefficient;
    this.value = allocate(dtype, n);
    this.value.fill(initial);
  }

  update(input: FloatArray): FloatArray {
    const y = this.value;
    const n = this.n;
    if (input.length !== n) fail("shape_mismatch", "input", `an array of length ${n}`, input);
    stepFilter(y, 0, input, 0, n, this.coefficient);
    return y;
  }

  reset(value = 0): void {
    this.value.fill(requireFinite("value", value));
  }

  saveState(): TraceState {
    return { values: toPlain(this.value) };
  }

  loadState(state: TraceState): void {
    readValues(traceValues(state), this.n, "state.values", this.value);
  }
}

/**
 * Creates a bank of `n` exponential traces over a Float32Array or Float64Array;
 * validates once, then `update(input)` runs with no per-element checks and no allocation.
 * Each unit follows exactly the scalar step of {@link exponentialTrace}.
 * Reference: standard first-order filter and its discretisations (methods item 13, derived).
 *
 * @param options - `tau`, `dt` (default 1), `method` (default `"exact"`), `n`, `dtype` (default `"float64"`), `initial` (default 0)
 * @returns the trace bank
 * @throws {@link EbbflowError} `invalid_parameter` naming `tau`, `dt`, `method`, `n`, `dtype` or `initial`
 * @category Traces
 * @example
 * ```ts
 * const t = vectorTrace({ tau: 10, n: 3, dtype: "float32" });
 * t.update(new Float32Array([1, 2, 3])); // Float32Array [0.095162585, 0.19032517, 0.28548774]
 * ```
 */
export function vectorTrace(options: VectorTraceOptions): VectorTrace {
  const timing = resolveTiming(options);
  const n = requireInteger("n", options.n, 1);
  const dtype = resolveDtype(options.dtype);
  const initial = options.initial === undefined ? 0 : requireFinite("initial", options.initial);
  return new BankTrace(n, dtype, timing.tau, timing.dt, timing.method, timing.coefficient, initial);
}

/** Validates a dtype option (default float64). @internal */
export function resolveDtype(dtype: unknown): Dtype {
  if (dtype === undefined) return "float64";
  if (dtype !== "float32" && dtype !== "float64") fail("invalid_parameter", "dtype", 'one of "float32", "float64"', dtype);
  return dtype;
}
