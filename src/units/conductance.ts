/**
 * Conductance-based point neuron: steady-state membrane potential, effective
 * time constant, the excitatory conductance that reaches threshold, and a
 * rate read from the excitatory conductance above that value.
 *
 * Units throughout: conductances in nS, potentials in mV, capacitance in pF,
 * injected current in pA (nS x mV = pA), times in ms (pF / nS = ms).
 *
 * Reference for the membrane equation
 * `C dV/dt = g_L (E_L - V) + g_e (E_e - V) + g_i (E_i - V) + I`:
 * Dayan & Abbott 2001, Theoretical Neuroscience (MIT Press), ch. 5.
 * @module
 */
import { fail, requireFinite, requireNonNegative, requirePositive } from "../errors/index.js";
import { saturating, saturatingSlope } from "./saturating.js";

/**
 * Constant conductances and reversal potentials of a point neuron.
 * @category Units
 */
export interface MembraneConductances {
  /** Excitatory conductance g_e, nS, >= 0. */
  readonly gExc: number;
  /** Inhibitory conductance g_i, nS, >= 0. */
  readonly gInh: number;
  /** Leak conductance g_L, nS, > 0. */
  readonly gLeak: number;
  /** Excitatory reversal potential E_e, mV (typically 0). */
  readonly eExc: number;
  /** Inhibitory reversal potential E_i, mV (typically -70 to -80). */
  readonly eInh: number;
  /** Leak reversal (resting) potential E_L, mV (typically about -70). */
  readonly eLeak: number;
  /** Injected current I, pA (default 0). */
  readonly current?: number | undefined;
}

function checkConductances(p: MembraneConductances): void {
  requireNonNegative("gExc", p.gExc);
  requireNonNegative("gInh", p.gInh);
  requirePositive("gLeak", p.gLeak);
  requireFinite("eExc", p.eExc);
  requireFinite("eInh", p.eInh);
  requireFinite("eLeak", p.eLeak);
  if (p.current !== undefined) requireFinite("current", p.current);
}

/**
 * Steady-state membrane potential for constant conductances:
 * `V_ss = (g_L E_L + g_e E_e + g_i E_i + I) / (g_L + g_e + g_i)`, the
 * conductance-weighted mean of the reversal potentials (plus the current term).
 *
 * Reference: Dayan & Abbott 2001, Theoretical Neuroscience, ch. 5.
 * @param p Conductances (nS), reversal potentials (mV) and current (pA).
 * @returns V_ss in mV.
 * @throws EbbflowError `invalid_parameter` (path = the field) for negative
 *   or non-finite conductances, `gLeak <= 0`, or non-finite potentials/current.
 * @category Units
 * @example
 * ```ts
 * steadyStatePotential({ gExc: 10, gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70 }); // -44
 * ```
 */
export function steadyStatePotential(p: MembraneConductances): number {
  checkConductances(p);
  const total = p.gLeak + p.gExc + p.gInh;
  return (p.gLeak * p.eLeak + p.gExc * p.eExc + p.gInh * p.eInh + (p.current ?? 0)) / total;
}

/**
 * Effective membrane time constant under constant conductances:
 * `tau_eff = C / (g_L + g_e + g_i)`.
 *
 * Reference: Dayan & Abbott 2001, Theoretical Neuroscience, ch. 5.
 * @param capacitance Membrane capacitance C, pF, > 0.
 * @param conductances `gExc`, `gInh` (nS, >= 0) and `gLeak` (nS, > 0).
 * @returns tau_eff in ms.
 * @throws EbbflowError `invalid_parameter` at `capacitance`, `gExc`, `gInh` or `gLeak`.
 * @category Units
 * @example
 * ```ts
 * effectiveTimeConstant(200, { gExc: 10, gInh: 5, gLeak: 10 }); // 8
 * ```
 */
export function effectiveTimeConstant(
  capacitance: number,
  conductances: { readonly gExc: number; readonly gInh: number; readonly gLeak: number },
): number {
  requirePositive("capacitance", capacitance);
  requireNonNegative("gExc", conductances.gExc);
  requireNonNegative("gInh", conductances.gInh);
  requirePositive("gLeak", conductances.gLeak);
  return capacitance / (conductances.gLeak + conductances.gExc + conductances.gInh);
}

/**
 * Everything that fixes the threshold excitatory conductance: the membrane
 * conductances other than g_e, and the firing threshold.
 * @category Units
 */
export interface ThresholdConductanceParams {
  /** Inhibitory conductance g_i, nS, >= 0. */
  readonly gInh: number;
  /** Leak conductance g_L, nS, > 0. */
  readonly gLeak: number;
  /** Excitatory reversal potential E_e, mV; must exceed `threshold`. */
  readonly eExc: number;
  /** Inhibitory reversal potential E_i, mV. */
  readonly eInh: number;
  /** Leak reversal potential E_L, mV. */
  readonly eLeak: number;
  /** Firing threshold theta, mV. */
  readonly threshold: number;
  /** Injected current I, pA (default 0). */
  readonly current?: number | undefined;
}

function checkThresholdParams(p: ThresholdConductanceParams): void {
  requireNonNegative("gInh", p.gInh);
  requirePositive("gLeak", p.gLeak);
  requireFinite("eExc", p.eExc);
  requireFinite("eInh", p.eInh);
  requireFinite("eLeak", p.eLeak);
  requireFinite("threshold", p.threshold);
  if (p.current !== undefined) requireFinite("current", p.current);
  if (!(p.eExc > p.threshold)) fail("invalid_parameter", "eExc", `an excitatory reversal potential above threshold (${p.threshold} mV)`, p.eExc);
}

/**
 * The excitatory conductance that holds the steady-state potential exactly at
 * threshold. Setting `V_ss = theta` in the steady-state equation and solving
 * the linear equation for g_e gives
 * `g_e* = (g_L (theta - E_L) + g_i (theta - E_i) - I) / (E_e - theta)`.
 *
 * A negative result means that V_ss is above threshold even with no
 * excitation (then every `gExc >= 0` is above threshold).
 * @param p Conductances (nS), potentials (mV), threshold (mV), current (pA).
 * @returns g_e* in nS.
 * @throws EbbflowError `invalid_parameter` for bad fields (path = field name),
 *   including `eExc <= threshold` (threshold unreachable by excitation).
 * @category Units
 * @example
 * ```ts
 * thresholdExcitatoryConductance({ gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70, threshold: -50 }); // 7
 * ```
 */
export function thresholdExcitatoryConductance(p: ThresholdConductanceParams): number {
  checkThresholdParams(p);
  return thresholdConductanceUnchecked(p);
}

function thresholdConductanceUnchecked(p: ThresholdConductanceParams): number {
  const th = p.threshold;
  return (p.gLeak * (th - p.eLeak) + p.gInh * (th - p.eInh) - (p.current ?? 0)) / (p.eExc - th);
}

/**
 * Parameters of {@link conductanceRate}: the threshold conductance parameters
 * plus the gain of the saturating read-out.
 * @category Units
 */
export interface ConductanceRateParams extends ThresholdConductanceParams {
  /** Gain of the read-out, 1/nS, > 0: the rate is one half at `1 / gain` nS above g_e*. */
  readonly gain: number;
}

/**
 * A rate read from the excitatory conductance above its threshold value:
 * with `u = gain * max(0, gExc - g_e*)` and `g_e*` from
 * {@link thresholdExcitatoryConductance}, the rate is `u / (u + 1)`, a
 * normalised rate in [0, 1) (multiply by a maximum rate for Hz).
 *
 * Working in conductance units keeps the threshold condition exact (the
 * rate is positive exactly when V_ss exceeds threshold) while the read-out is
 * linear in g_e near threshold. The read-out is the hyperbolic-ratio form
 * with exponent 1 (Naka & Rushton 1966, J. Physiol. 185:536).
 *
 * Validates on every call; for hot loops make a {@link ConductanceRate} with
 * {@link createConductanceRate}.
 * @param gExc Excitatory conductance, nS, >= 0.
 * @param params Other conductances, potentials, threshold and gain.
 * @returns The normalised rate, in [0, 1).
 * @throws EbbflowError `invalid_parameter` at `gExc`, `gain` or any field of `params`.
 * @category Units
 * @example
 * ```ts
 * const p = { gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70, threshold: -50, gain: 0.5 };
 * conductanceRate(7, p); // 0 (g_e* = 7 nS)
 * conductanceRate(9, p); // 0.5
 * ```
 */
export function conductanceRate(gExc: number, params: ConductanceRateParams): number {
  requireNonNegative("gExc", gExc);
  return createConductanceRate(params).value(gExc);
}

/**
 * Slope of {@link conductanceRate} with respect to `gExc`:
 * `gain / (u + 1)^2` at and above g_e* (the active side at the kink), 0 below.
 * @param gExc Excitatory conductance, nS, >= 0.
 * @param params Other conductances, potentials, threshold and gain.
 * @returns The slope, 1/nS.
 * @throws EbbflowError `invalid_parameter` as for {@link conductanceRate}.
 * @category Units
 * @example
 * ```ts
 * const p = { gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70, threshold: -50, gain: 0.5 };
 * conductanceRateSlope(9, p); // 0.125
 * ```
 */
export function conductanceRateSlope(gExc: number, params: ConductanceRateParams): number {
  requireNonNegative("gExc", gExc);
  return createConductanceRate(params).slope(gExc);
}

/**
 * A validated conductance read-out (see {@link conductanceRate}); `value` and
 * `slope` do no checks.
 * @category Units
 */
export interface ConductanceRate {
  /** The excitatory conductance g_e* that holds V_ss at threshold, nS. */
  readonly thresholdConductance: number;
  /** Gain of the read-out, 1/nS. */
  readonly gain: number;
  /** Normalised rate for excitatory conductance `gExc` (nS). */
  value(gExc: number): number;
  /** Slope of the rate with respect to `gExc`, 1/nS. */
  slope(gExc: number): number;
}

/**
 * Validates the parameters once and returns the read-out of
 * {@link conductanceRate} as a fast object.
 * @param params Other conductances, potentials, threshold and gain.
 * @returns The read-out.
 * @throws EbbflowError `invalid_parameter` (path = field name).
 * @category Units
 * @example
 * ```ts
 * const r = createConductanceRate({ gInh: 5, gLeak: 10, eExc: 0, eInh: -80, eLeak: -70, threshold: -50, gain: 0.5 });
 * r.thresholdConductance; // 7
 * r.value(9); // 0.5
 * ```
 */
export function createConductanceRate(params: ConductanceRateParams): ConductanceRate {
  checkThresholdParams(params);
  const gain = requirePositive("gain", params.gain);
  const threshold = thresholdConductanceUnchecked(params);
  return Object.freeze({
    thresholdConductance: threshold,
    gain,
    value: (gExc: number) => saturating(gExc, gain, threshold),
    slope: (gExc: number) => saturatingSlope(gExc, gain, threshold),
  });
}
