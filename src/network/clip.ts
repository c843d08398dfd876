/**
 * Which layers' states are clipped to their unit's range under energy dynamics (`dynamics.clip`).
 * @module
 */
import type { Network } from "./network.js";

/** The parts of a unit the clipping decision reads (its range and rate). @category Network */
export interface RangedUnit {
  readonly lower: number;
  readonly upper: number;
  value(x: number): number;
  slope(x: number): number;
}

/**
 * Whether clipping a state u to the unit's range [lower, upper] leaves every fixed point of the energy
 * dynamics where it is: the range is bounded, ρ(u) = u at both ends and ρ is flat beyond them (the hard
 * sigmoid). For such a unit a state outside the range has the activity of the nearest end and only drifts
 * back, so the unclipped discretised dynamics chatter across the bound where the clipped ones rest on
 * it (the EqProp authors clip; Scellier & Bengio 2017). Smooth units (logistic, tanh) map their states
 * onto the range through ρ: clipping their states would move fixed points.
 * @category Settling
 */
export function clipKeepsFixedPoints(unit: RangedUnit): boolean {
  const lo = unit.lower;
  const hi = unit.upper;
  if (!Number.isFinite(lo) || !Number.isFinite(hi)) return false;
  return unit.value(lo) === lo && unit.value(hi) === hi && unit.slope(lo - 1) === 0 && unit.slope(hi + 1) === 0;
}

/**
 * Per layer: is its state clipped to its unit's range in a settling step? Only under energy dynamics;
 * `dynamics.clip: true` clips every unit with a bounded range, `false` none, and `"auto"` (the default)
 * the units for which clipping changes no fixed point ({@link clipKeepsFixedPoints}).
 * @category Settling
 */
export function clippedLayers(net: Network): boolean[] {
  const dyn = net.spec.dynamics;
  return net.layers.map((l) => {
    if (dyn.kind !== "energy" || l.role === "input" || dyn.clip === false) return false;
    if (dyn.clip === true) return Number.isFinite(l.unit.lower) && Number.isFinite(l.unit.upper);
    return clipKeepsFixedPoints(l.unit);
  });
}
