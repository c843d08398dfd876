/**
 * ebbflow: biologically constrained, error-driven learning in settling
 * bidirectional networks, with local rules verified against exact gradients.
 *
 * The public surface, export by export (test/api.test.ts snapshots it): a change here is a deliberate
 * change of the API. The BLAS-style kernels live under `ebbflow/kernels`; files, workers, plots and
 * sweeps on disk under `ebbflow/node`.
 * @module
 */

// Building and settling networks
export { Network, buildNetwork, parameterBuffers, parameterSlots, patternProblems, requirePatterns, type BuildOptions, type Connection, type Feedback, type Layer, type LayerRole, type ParameterSlot } from "./network/network.js";
export { type ConvolutionForm } from "./network/storage.js";
export { Settler, Snapshot, energy, type LayerValues, type ObservedTargets, type Phase, type PhaseOptions } from "./network/settle.js";
export { clipKeepsFixedPoints, clippedLayers, type RangedUnit } from "./network/clip.js";
export {
  compilePattern,
  fullPattern,
  layerGeometry,
  maskTransposed,
  parameterGradient,
  parameterPositions,
  patternIssues,
  patternSchema,
  patternViolation,
  profileSchema,
  projectArray,
  type CompiledPattern,
  type Geometry,
  type PatternContext,
  type PatternKind,
  type PatternLayers,
  type PatternSpec,
  type ProfileSpec,
  type TieMode,
} from "./network/pattern.js";
export { adaptationSchema, depressionSchema, initSchema, networkJsonSchema, networkSchema, parseNetwork, safeParseNetwork, type AdaptationSpec, type ConnectionSpec, type DepressionSpec, type DynamicsSpec, type FeedbackSpec, type InhibitionSpec, type InitSpecData, type LayerSpec, type NetworkSpec, type NetworkSpecInput, type ParseResult } from "./network/spec.js";

// Learning rules
export { SettlingRule, batchSizeOf, connectionRate, type Batch, type LearningRule, type RuleState } from "./rules/base.js";
export { BcmRule, bcmRule } from "./rules/bcm.js";
export { parseRule, ruleJsonSchema, ruleSchema, type RuleConfig, type RuleConfigInput, type RuleName } from "./rules/config.js";
export { FormRule, type Combination, type ContrastForm, type PhaseStep, type Product } from "./rules/contrast-form.js";
export { ContrastiveHebbian, GeneRec, SlidingThresholdRule, calciumRule, chlRule, generecRule, layerDepths, phaseContrast, xieSeungFactors, xieSeungRule } from "./rules/contrastive.js";
export { ParameterDelta, applyDelta, projectDelta } from "./rules/delta.js";
export { commonRuleFields, defineRule, rateSchema, type RuleConfigBase, type RuleDescriptor, type RuleSplit } from "./rules/descriptor.js";
export { EquilibriumPropagation, eqpropRule } from "./rules/eqprop.js";
export { FeedforwardRule, backpropRule, createForwardPass, directFeedbackAlignmentRule, feedbackAlignmentRule, feedforwardGradient, forwardOrder, runForward, type FeedforwardConfig, type ForwardPass } from "./rules/feedforward.js";
export { createRule } from "./rules/index.js";
export { ruleDisplayName } from "./rules/names.js";
export { PredictiveCoding, predictiveCodingRule } from "./rules/predictive.js";
export { configWithLoss, ruleObjective } from "./rules/loss-config.js";
export { Registry, builtinRegistry, builtinRules, type AnyRuleConfig, type AnyRuleDescriptor, type RegistryAdditions } from "./rules/registry.js";

// Training and data
export { TOUCH_PATTERNS, touchStripDataset } from "./demo/touchStrip.js";
export { parseCsvDataset, type CsvDatasetOptions } from "./train/data/csv.js";
export { createDataset, oneHot, subset, type DataBlock, type Dataset, type DatasetOptions } from "./train/data/dataset.js";
export { createLayeredDataset, layerValues, type LayerRows, type LayeredValues } from "./train/data/layered.js";
export { orientedBarsDataset, parityDataset, randomAssociation, type BinaryCoding, type OrientedBarsOptions, type RandomAssociationOptions, xorDataset } from "./train/data/generators.js";
export { datasetToJson, parseJsonDataset } from "./train/data/json.js";
export { createSequenceDataset, isSequenceDataset, parseCsvSequences, parseJsonSequences, sequenceCount, splitSequences, withSequences, type CsvSequenceOptions, type SequenceDataset, type SequenceRows } from "./train/data/sequences.js";
export { carriesTraces, sequenceBatches, sequenceOptionsSchema, SequenceRunner, type CarriesTraces, type SequenceProgress, type SequenceReset } from "./train/sequences.js";
export { TEXTURE_SENSORS, textureMemoryDataset, textureMemoryNetwork, type TextureMemoryNetworkOptions, type TextureMemoryOptions } from "./demo/textureMemory.js";
export { fitScaler, type Scaler, type ScalerKind } from "./train/data/scaling.js";
export { kFold, trainTestSplit, type DatasetSplit, type SplitOptions } from "./train/data/split.js";
export { Trainer, datasetBatch, parseTraining, trainingSchema, type EpochRecord, type StopReason, type TrainerExtras, type TrainerHooks, type TrainerState, type TrainingOptions, type TrainingOptionsInput } from "./train/loop.js";
export { type Metrics, type TiePolicy } from "./train/metrics.js";
export { DEFAULT_OBJECTIVE, LOSS_NAMES, batchLoss, batchLossGradient, lossNameSchema, patternLoss, patternLossGradient, requireLoss, requireObjective, targetRowObserved, type LossName, type Objective } from "./train/loss.js";
export { Optimizer, optimizerSchema, type OptimizerConfig, type OptimizerInput, type OptimizerState } from "./train/optimizer.js";
export { scheduleFactor, scheduleSchema, type Schedule } from "./train/schedule.js";

// Verification: exact gradients and agreement
export { formatAgreement, gradientAgreement, type AgreementOptions, type AgreementReport, type AgreementRow, type GradientReference } from "./verify/agreement.js";
export { finiteDifferenceGradient, freeLoss, recurrentGradient, type VerifyOptions, type VerifySettling } from "./verify/gradient.js";
export { phaseReports, type PhaseReport } from "./verify/phases.js";

// Unit (activation) functions
export { builtinUnitDescriptors, builtinUnits } from "./units/builtins.js";
export { conductanceRate, conductanceRateSlope, createConductanceRate, effectiveTimeConstant, steadyStatePotential, thresholdExcitatoryConductance, type ConductanceRate, type ConductanceRateParams, type MembraneConductances, type ThresholdConductanceParams } from "./units/conductance.js";
export { createUnit, normalizeUnitSpec, tabulateNoisyRate, unitKinds } from "./units/createUnit.js";
export { gaussianAverage, type SmoothingFeature } from "./units/gaussian.js";
export { hardSigmoid, hardSigmoidSlope, hardSigmoidUnit } from "./units/hardSigmoid.js";
export { lifRate, lifRateSlope, type LifParams } from "./units/lif.js";
export { fillLength, liftUnit, type FillFunction, type ScalarUnitParts, unitFromScalars } from "./units/lift.js";
export { linear, linearSlope, linearUnit } from "./units/linear.js";
export { logistic, logisticSlope, logisticSlopeFromOutput, logisticUnit } from "./units/logistic.js";
export { DEFAULT_NOISY_RESOLUTION, noisyRate, noisyRateSlope, noisySchema, noisyUnit, type NoisyRateTable, type NoisySpec } from "./units/noisy.js";
export { UnitRegistry, defineUnit, type AnyUnitSpec, type InputOfDescriptor, type SpecOfDescriptor, type SomeDescriptor, type UnitDescriptor, type UnitSpecInput, unitSpecField } from "./units/registry.js";
export { relu, reluSlope, reluUnit } from "./units/relu.js";
export { saturating, saturatingSlope, saturatingUnit } from "./units/saturating.js";
export { softplus, softplusSlope, softplusSlopeFromOutput, softplusUnit } from "./units/softplus.js";
export { type SpecOf, type UnitFunction, type UnitKernelCall, type UnitKernelKind, type UnitKind, type UnitSmoothing, type UnitSpec } from "./units/spec.js";
export { tanh, tanhSlope, tanhSlopeFromOutput, tanhUnit } from "./units/tanh.js";

// Running-average traces
export { traceCascade, type CascadeOptions, type CascadeOrdering, type TraceCascade, type VectorCascade, type VectorCascadeOptions, vectorCascade } from "./traces/cascade.js";
export { smoothingCoefficient, type TraceMethod, type TraceOptions } from "./traces/coefficient.js";
export { traceDifference } from "./traces/difference.js";
export { exponentialTrace, type ExponentialTrace, type ExponentialTraceOptions } from "./traces/exponential.js";
export { type CascadeState, type TraceState } from "./traces/state.js";
export { type VectorTrace, type VectorTraceOptions, vectorTrace } from "./traces/vector.js";

// Plasticity curves and sliding thresholds
export { applyBcmPhi, applyBcmPhiScaled, bcmObjective, bcmPhi, bcmPhiScaled } from "./curves/bcm.js";
export { calciumControl, type CalciumControl, type CalciumControlOptions, type CalciumControlParameters } from "./curves/calcium-control.js";
export { applyCalciumCurve, calciumCurve } from "./curves/calcium-curve.js";
export { bcmThreshold, blendedThreshold, slowTraceThreshold, type BlendedThreshold, type BlendedThresholdOptions, type BlendedThresholdState, type SlidingThreshold } from "./curves/thresholds.js";

// Random streams and initialisers
export { RandomStream, createRandom, fillGlorotNormal, fillGlorotUniform, fillNormal, fillUniform, initialize, randomStreamStateSchema, type Arc4State, type InitSpec, type RandomStreamState } from "./random/index.js";

// Files: experiments and model files
export { dataSourceSchema, experimentJsonSchema, experimentSchema, parseExperiment, type Experiment } from "./config/experiment.js";
export { MODEL_FORMAT, MODEL_VERSION, modelFromData, modelToData, modelToJson, type ModelFile } from "./config/modelFile.js";

// Sweeps
export { SWEEP_PLAN_FORMAT, configurationIdOf, expandSweep, runIdOf, safeParseRunConfig, type RunConfig, type RunData, type SweepAssignment, type SweepConfiguration, type SweepPlan, type SweepRun } from "./sweep/expand.js";
export { drawSchema, parseSweepFile, sweepJsonSchema, sweepSchema, type DrawSpec, type DrawSpecInput, type SweepFile, type SweepFileInput } from "./sweep/schema.js";
export { studentTCdf, studentTQuantile, summarizeSample, type SampleSummary } from "./sweep/stats.js";
export { formatSummaryTable, summarizeRuns, type ConfigurationSummary, type RunFinal, type SweepSummary } from "./sweep/summary.js";

// Interop: ndarray-layout views and inputs, NumPy .npy / .npz files
export { biasView, feedbackView, flatBatch, isNdArrayLike, ndView, recordView, rowMajorStrides, rowMajorValues, stateView, weightView, type BatchInput, type LayerInputs, type NdArrayLike, type NdView } from "./interop/ndarray.js";
export { Recorder, type PatternLabel, type RecordChannel, type RecordedChannel, type RecorderOptions } from "./record/recorder.js";
export { decodeNpy, decodeNpyText, encodeNpy, encodeNpyText, type NpyArray, type NumericArray } from "./interop/npy.js";
export { crc32, readZip, writeZip } from "./interop/zip.js";
export { arrayToCsv, modelArrays, modelFromNpz, modelToNpz, type ModelArray } from "./interop/model.js";

// Kernel backends (the kernels themselves: ebbflow/kernels)
export { type BackendName, type KernelBackend } from "./kernels/backend.js";
export { typescriptBackend } from "./kernels/typescript-backend.js";
export { loadWasmKernels, loadWasmKernelsSync, selectBackend, selectBackendAsync, type BackendChoice, wasmRelaxedSimdSupported, wasmSimdSupported } from "./kernels/wasm/loader.js";
export { type WasmBackendOptions, type WasmKernelBackend, type WasmSharedMemory } from "./kernels/wasm/wasm-backend.js";

// Errors and numbers
export { finiteField, integerField, nonNegativeField, positiveField } from "./errors/fields.js";
export { EbbflowError, formatIssue, type ErrorCode, type Issue } from "./errors/index.js";
export { refuseUnknownOptions } from "./errors/options.js";
export { DEFAULT_RESOURCE_LIMITS, resourceLimits, setResourceLimits, type ResourceLimits } from "./limits/index.js";
export { type Dtype, type FloatArray } from "./types/index.js";
