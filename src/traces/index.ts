/**
 * Running-average filters: exponential traces (scalar and vector), cascades of
 * them with every stage readable, and the difference of two traces.
 * @module
 */
export { smoothingCoefficient, type TraceMethod, type TraceOptions } from "./coefficient.js";
export type { TraceState, CascadeState } from "./state.js";
export { exponentialTrace, type ExponentialTrace, type ExponentialTraceOptions } from "./exponential.js";
export { vectorTrace, type VectorTrace, type VectorTraceOptions } from "./vector.js";
export {
  traceCascade,
  vectorCascade,
  type CascadeOrdering,
  type CascadeOptions,
  type VectorCascadeOptions,
  type TraceCascade,
  type VectorCascade,
} from "./cascade.js";
export { traceDifference } from "./difference.js";
