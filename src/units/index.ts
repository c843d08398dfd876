/**
 * Unit (activation) functions: scalar rates and their slopes, the lifting
 * template that applies them over typed arrays, unit kinds as descriptors in a
 * registry (the built-in kinds and a user's own), validated unit objects made
 * from specs, the noise-averaged rate, and point-neuron rates.
 * @module
 */
export { finiteField, integerField, nonNegativeField, positiveField } from "../errors/fields.js";
export { builtinUnitDescriptors, builtinUnits } from "./builtins.js";
export { conductanceRate, conductanceRateSlope, createConductanceRate, effectiveTimeConstant, steadyStatePotential, thresholdExcitatoryConductance } from "./conductance.js";
export type { ConductanceRate, ConductanceRateParams, MembraneConductances, ThresholdConductanceParams } from "./conductance.js";
export { createUnit, normalizeUnitSpec, tabulateNoisyRate, unitKinds } from "./createUnit.js";
export { gaussianAverage } from "./gaussian.js";
export type { SmoothingFeature } from "./gaussian.js";
export { hardSigmoid, hardSigmoidSlope, hardSigmoidUnit } from "./hardSigmoid.js";
export { lifRate, lifRateSlope } from "./lif.js";
export type { LifParams } from "./lif.js";
export { fillLength, liftUnit, unitFromScalars } from "./lift.js";
export type { FillFunction, ScalarUnitParts } from "./lift.js";
export { linear, linearSlope, linearUnit } from "./linear.js";
export { logistic, logisticSlope, logisticSlopeFromOutput, logisticUnit } from "./logistic.js";
export { DEFAULT_NOISY_RESOLUTION, noisyRate, noisyRateSlope, noisySchema, noisyUnit } from "./noisy.js";
export type { NoisyRateTable, NoisySpec } from "./noisy.js";
export { defineUnit, UnitRegistry, unitSpecField } from "./registry.js";
export type { AnyUnitSpec, InputOfDescriptor, SomeDescriptor, SpecOfDescriptor, UnitDescriptor, UnitSpecInput } from "./registry.js";
export { relu, reluSlope, reluUnit } from "./relu.js";
export { saturating, saturatingSlope, saturatingUnit } from "./saturating.js";
export { softplus, softplusSlope, softplusSlopeFromOutput, softplusUnit } from "./softplus.js";
export type { SpecOf, UnitFunction, UnitKernelCall, UnitKernelKind, UnitKind, UnitSmoothing, UnitSpec } from "./spec.js";
export { tanh, tanhSlope, tanhSlopeFromOutput, tanhUnit } from "./tanh.js";
