/**
 * Unit (activation) functions: scalar rates and their slopes, the lifting
 * template that applies them over typed arrays, validated unit objects made
 * from specs, the noise-averaged rate, and point-neuron rates.
 * @module
 */
export { conductanceRate, conductanceRateSlope, createConductanceRate, effectiveTimeConstant, steadyStatePotential, thresholdExcitatoryConductance } from "./conductance.js";
export type { ConductanceRate, ConductanceRateParams, MembraneConductances, ThresholdConductanceParams } from "./conductance.js";
export { createUnit } from "./createUnit.js";
export { gaussianAverage } from "./gaussian.js";
export type { SmoothingFeature } from "./gaussian.js";
export { hardSigmoid, hardSigmoidSlope } from "./hardSigmoid.js";
export { lifRate, lifRateSlope } from "./lif.js";
export type { LifParams } from "./lif.js";
export { liftUnit } from "./lift.js";
export type { FillFunction } from "./lift.js";
export { linear, linearSlope } from "./linear.js";
export { logistic, logisticSlope, logisticSlopeFromOutput } from "./logistic.js";
export { noisyRate, noisyRateSlope, tabulateNoisyRate } from "./noisy.js";
export type { NoisyRateTable } from "./noisy.js";
export { relu, reluSlope } from "./relu.js";
export { saturating, saturatingSlope } from "./saturating.js";
export { softplus, softplusSlope, softplusSlopeFromOutput } from "./softplus.js";
export { DEFAULT_NOISY_RESOLUTION, normaliseUnitSpec, unitKinds } from "./spec.js";
export type { SpecOf, UnitFunction, UnitKind, UnitSpec } from "./spec.js";
export { tanh, tanhSlope, tanhSlopeFromOutput } from "./tanh.js";
