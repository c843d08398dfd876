/**
 * The smoothing coefficient of a first-order low-pass filter and the
 * validation shared by every trace factory.
 * @module
 */
import { fail, requirePositive } from "../errors/index.js";

/**
 * How the continuous filter `tau dy/dt = x - y` is turned into a step:
 * `"exact"` (zero-order hold, `a = 1 - exp(-dt/tau)`) or `"euler"` (`a = dt/tau`).
 * @category Traces
 */
export type TraceMethod = "exact" | "euler";

/**
 * Options shared by every exponential trace.
 * @category Traces
 */
export interface TraceOptions {
  /** Time constant tau, in the same unit as `dt`; finite and > 0. */
  readonly tau: number;
  /** Step dt; finite and > 0. Default 1 (one step per sample, so `tau` counts samples). */
  readonly dt?: number | undefined;
  /** Discretisation; default `"exact"`. */
  readonly method?: TraceMethod | undefined;
}

/** Validated trace timing: the resolved options plus the coefficient. @internal */
export interface ResolvedTiming {
  readonly tau: number;
  readonly dt: number;
  readonly method: TraceMethod;
  readonly coefficient: number;
}

/**
 * Smoothing coefficient `a` of one filter step `y <- y + a (x - y)`.
 *
 * Exact (zero-order hold): `a = 1 - exp(-dt/tau)`, computed as `-expm1(-dt/tau)`
 * so that small `dt/tau` keeps full precision. Euler: `a = dt/tau`, stable only
 * for `dt/tau < 2` and free of overshoot for `dt/tau <= 1`.
 * Reference: the zero-order-hold discretisation of a first-order linear ODE (textbook standard;
 * from memory: Franklin, Powell & Workman 1998, *Digital Control of Dynamic Systems*, 3rd ed., Addison-Wesley).
 *
 * @param tau - time constant, finite and > 0
 * @param dt - step, finite and > 0 (default 1)
 * @param method - `"exact"` (default) or `"euler"`
 * @returns the coefficient `a`, in (0, 1) for `"exact"` and in (0, 2) for `"euler"`
 * @throws {@link EbbflowError} `invalid_parameter` (path `tau`, `dt` or `method`) for a
 *   non-finite or non-positive `tau`/`dt`, an unknown method, Euler with `dt/tau >= 2`,
 *   or a ratio `dt/tau` so small that the coefficient underflows to 0.
 * @category Traces
 * @example
 * ```ts
 * smoothingCoefficient(10, 1);          // 0.09516258196404043
 * smoothingCoefficient(10, 1, "euler"); // 0.1
 * ```
 */
export function smoothingCoefficient(tau: number, dt = 1, method: TraceMethod = "exact"): number {
  return resolveTiming({ tau, dt, method }).coefficient;
}

/** Validates trace timing options once and computes the coefficient. @internal */
export function resolveTiming(options: TraceOptions): ResolvedTiming {
  if (typeof options !== "object" || options === null) fail("invalid_parameter", "options", "an object with tau", options);
  const tau = requirePositive("tau", options.tau);
  const dt = options.dt === undefined ? 1 : requirePositive("dt", options.dt);
  const method = options.method ?? "exact";
  if (method !== "exact" && method !== "euler") fail("invalid_parameter", "method", 'one of "exact", "euler"', method);
  const ratio = dt / tau;
  if (!Number.isFinite(ratio)) fail("invalid_parameter", "tau", `a value for which dt/tau is finite (dt = ${dt})`, tau);
  let coefficient: number;
  if (method === "euler") {
    if (ratio >= 2) {
      fail("invalid_parameter", "dt", `dt < 2*tau = ${2 * tau} (Euler step is unstable for dt/tau >= 2)`, dt);
    }
    coefficient = ratio;
  } else {
    coefficient = -Math.expm1(-ratio);
  }
  if (!(coefficient > 0)) fail("invalid_parameter", "dt", `dt large enough that dt/tau does not underflow (tau = ${tau})`, dt);
  return { tau, dt, method, coefficient };
}
