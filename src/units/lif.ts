/**
 * Firing rate of a leaky integrate-and-fire neuron under constant current.
 *
 * Units: current in nA, resistance in MΩ (so R I is in mV), potentials in mV,
 * times in ms, rates in Hz.
 * @module
 */
import { fail, requireFinite, requireNonNegative, requirePositive } from "../errors/index.js";

/**
 * Parameters of a leaky integrate-and-fire neuron driven by a constant current.
 * @category Units
 */
export interface LifParams {
  /** Constant injected current I, nA. */
  readonly current: number;
  /** Membrane resistance R, MΩ, > 0. */
  readonly resistance: number;
  /** Membrane time constant tau_m, ms, > 0. */
  readonly tauM: number;
  /** Leak (resting) potential E_L, mV. */
  readonly eLeak: number;
  /** Spike threshold V_th, mV. */
  readonly vThreshold: number;
  /** Reset potential V_reset, mV, < vThreshold. */
  readonly vReset: number;
  /** Refractory time t_ref, ms, >= 0 (default 0); V is held at V_reset during it. */
  readonly refractory?: number | undefined;
}

function checkLif(p: LifParams): void {
  requireFinite("current", p.current);
  requirePositive("resistance", p.resistance);
  requirePositive("tauM", p.tauM);
  requireFinite("eLeak", p.eLeak);
  requireFinite("vThreshold", p.vThreshold);
  requireFinite("vReset", p.vReset);
  if (!(p.vReset < p.vThreshold)) fail("invalid_parameter", "vReset", `a reset potential below vThreshold (${p.vThreshold} mV)`, p.vReset);
  if (p.refractory !== undefined) requireNonNegative("refractory", p.refractory);
}

/**
 * Firing rate of a leaky integrate-and-fire neuron for constant current.
 * With `tau_m dV/dt = E_L - V + R I`, reset to V_reset on reaching V_th and
 * held there for t_ref:
 * `r = 1 / (t_ref + tau_m ln((R I + E_L - V_reset) / (R I + E_L - V_th)))`
 * if `R I + E_L > V_th`, else `r = 0` (the rheobase `(V_th - E_L) / R` itself
 * gives 0).
 *
 * Reference: Dayan & Abbott 2001, Theoretical Neuroscience (MIT Press),
 * ch. 5; Gerstner, Kistler, Naud & Paninski 2014, Neuronal Dynamics
 * (Cambridge University Press), ch. 1.
 * @param p Current (nA), resistance (MΩ), tau_m (ms), potentials (mV), refractory time (ms).
 * @returns The rate in Hz (spikes per second).
 * @throws EbbflowError `invalid_parameter` (path = field name) for non-finite
 *   values, `resistance <= 0`, `tauM <= 0`, `refractory < 0` or `vReset >= vThreshold`.
 * @category Units
 * @example
 * ```ts
 * lifRate({ current: 2, resistance: 10, tauM: 10, eLeak: -65, vThreshold: -50, vReset: -65 }); // 72.13475204444818
 * ```
 */
export function lifRate(p: LifParams): number {
  checkLif(p);
  const drive = p.resistance * p.current + p.eLeak;
  if (!(drive > p.vThreshold)) return 0;
  const charge = p.tauM * Math.log((drive - p.vReset) / (drive - p.vThreshold));
  return 1000 / ((p.refractory ?? 0) + charge);
}

/**
 * Slope of {@link lifRate} with respect to the current, in Hz per nA:
 * `dr/dI = r^2 tau_m R (V_th - V_reset) / ((R I + E_L - V_reset)(R I + E_L - V_th)) / 1000`
 * above rheobase (r in Hz), 0 at or below it (the right-hand slope at
 * rheobase is infinite).
 * @param p As for {@link lifRate}.
 * @returns dr/dI in Hz/nA.
 * @throws EbbflowError as for {@link lifRate}.
 * @category Units
 * @example
 * ```ts
 * lifRateSlope({ current: 1, resistance: 10, tauM: 10, eLeak: -65, vThreshold: -50, vReset: -65 }); // 0
 * ```
 */
export function lifRateSlope(p: LifParams): number {
  checkLif(p);
  const drive = p.resistance * p.current + p.eLeak;
  if (!(drive > p.vThreshold)) return 0;
  const a = drive - p.vReset;
  const b = drive - p.vThreshold;
  const interval = (p.refractory ?? 0) + p.tauM * Math.log(a / b); // ms
  // dT/dI = tau_m R (1/a - 1/b) = -tau_m R (V_th - V_reset) / (a b)   [ms/nA]
  const dTdI = (-p.tauM * p.resistance * (p.vThreshold - p.vReset)) / (a * b);
  return (-1000 * dTdI) / (interval * interval);
}
