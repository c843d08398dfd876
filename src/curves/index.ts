/**
 * Plasticity curves and sliding thresholds: a piecewise-linear form of the
 * calcium-control curve (Lisman 1989; Artola, Bröcher & Singer 1990), the BCM
 * function and objective, the calcium-control functions of Shouval, Bear &
 * Cooper (2002), and thresholds that slide with running averages.
 * @module
 */
export { calciumCurve, applyCalciumCurve } from "./calcium-curve.js";
export { bcmPhi, bcmPhiScaled, applyBcmPhi, applyBcmPhiScaled, bcmObjective } from "./bcm.js";
export {
  calciumControl,
  type CalciumControl,
  type CalciumControlOptions,
  type CalciumControlParameters,
} from "./calcium-control.js";
export {
  slowTraceThreshold,
  bcmThreshold,
  blendedThreshold,
  type SlidingThreshold,
  type BlendedThreshold,
  type BlendedThresholdOptions,
  type BlendedThresholdState,
} from "./thresholds.js";
