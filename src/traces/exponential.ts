/**
 * Scalar exponential trace: one first-order low-pass filter.
 * @module
 */
import { requireFinite } from "../errors/index.js";
import { resolveTiming, type TraceMethod, type TraceOptions } from "./coefficient.js";
import { readValues, traceValues, type TraceState } from "./state.js";

/**
 * Options of a scalar exponential trace.
 * @category Traces
 */
export interface ExponentialTraceOptions extends TraceOptions {
  /** Starting output y[0]; finite, default 0. */
  readonly initial?: number | undefined;
}

/**
 * A running average `tau dy/dt = x - y`, stepped by `y <- y + a (x - y)`.
 * @category Traces
 */
export interface ExponentialTrace {
  /** Time constant. */
  readonly tau: number;
  /** Step. */
  readonly dt: number;
  /** Discretisation. */
  readonly method: TraceMethod;
  /** Smoothing coefficient `a` of one step. */
  readonly coefficient: number;
  /** Current output y. */
  readonly value: number;
  /** Feeds one input sample (held over the step) and returns the new output. No checks, no allocation. */
  update(x: number): number;
  /** Sets the output to `value` (default 0). @throws {@link EbbflowError} `invalid_parameter` (path `value`) if not finite. */
  reset(value?: number): void;
  /** Exports the output as plain data. */
  saveState(): TraceState;
  /** Restores an exported output. @throws {@link EbbflowError} if `values` is not one finite number. */
  loadState(state: TraceState): void;
}

class ScalarTrace implements ExponentialTrace {
  readonly tau: number;
  readonly dt: number;
  readonly method: TraceMethod;
  readonly coefficient: number;
  value: number;

  constructor(tau: number, dt: number, method: TraceMethod, coefficient: number, initial: number) {
    this.tau = tau;
    this.dt = dt;
    this.method = method;
    this.coefficient = coefficient;
    this.value = initial;
  }

  update(x: number): number {
    const y = this.value + this.coefficient * (x - this.value);
    this.value = y;
    return y;
  }

  reset(value = 0): void {
    this.value = requireFinite("value", value);
  }

  saveState(): TraceState {
    return { values: [this.value] };
  }

  loadState(state: TraceState): void {
    const buf = new Float64Array(1);
    readValues(traceValues(state), 1, "state.values", buf);
    this.value = buf[0] as number;
  }
}

/**
 * Creates a scalar exponential trace (first-order low-pass filter)
 * `tau dy/dt = x - y`; validates once, then `update` runs unchecked.
 *
 * Step: `y[k+1] = y[k] + a (x[k] - y[k])`, with `a = 1 - exp(-dt/tau)` (exact for
 * an input held constant over the step) or `a = dt/tau` (Euler).
 * Reference: standard first-order filter and its discretisations (methods item 13, derived).
 *
 * @param options - `tau` (> 0), `dt` (> 0, default 1), `method` (`"exact"` default or `"euler"`), `initial` (default 0)
 * @returns a trace whose `update(x)` returns the new output
 * @throws {@link EbbflowError} `invalid_parameter` naming `tau`, `dt`, `method` or `initial`
 * @category Traces
 * @example
 * ```ts
 * const t = exponentialTrace({ tau: 10, dt: 1 });
 * for (let k = 0; k < 10; k++) t.update(1);
 * t.value; // 0.6321205588285577 (= 1 - exp(-1))
 * ```
 */
export function exponentialTrace(options: ExponentialTraceOptions): ExponentialTrace {
  const timing = resolveTiming(options);
  const initial = options.initial === undefined ? 0 : requireFinite("initial", options.initial);
  return new ScalarTrace(timing.tau, timing.dt, timing.method, timing.coefficient, initial);
}
