/**
 * Cascades of identical exponential traces (gamma-kernel filters), scalar and
 * vector, with every stage's output readable.
 * @module
 */
import { fail, requireFinite, requireInteger } from "../errors/index.js";
import { allocate, type Dtype, type FloatArray } from "../types/index.js";
import { resolveTiming, type TraceMethod, type TraceOptions } from "./coefficient.js";
import { readValues, type CascadeState } from "./state.js";
import { resolveDtype } from "./vector.js";
import { stepFilter } from "./step.js";

/**
 * Order in which the stages of a cascade are stepped.
 *
 * - `"no-delay"` (default): stage 1 is stepped first and each later stage reads the
 *   output its predecessor produced in the same step: `y_k[j] = (1-a) y_k[j-1] + a y_{k-1}[j]`,
 *   `y_0 = x`. Identical to chaining `n` scalar traces, each fed the previous one's
 *   new output. Discrete impulse response after step j: `C(j+n-1, n-1) a^n (1-a)^j`.
 * - `"delayed"`: every stage reads its predecessor's output from before the step:
 *   `y_k[j+1] = y_k[j] + a (y_{k-1}[j] - y_k[j])`, so each extra stage adds one step of
 *   delay. Impulse response at time index m: `C(m-1, n-1) a^n (1-a)^(m-n)` for m >= n;
 *   after step j (input index j) the state holds time index m = j + 1.
 *
 * Both converge to the continuous gamma kernel as dt -> 0 (methods item 13, derived).
 * @category Traces
 */
export type CascadeOrdering = "no-delay" | "delayed";

/**
 * Options of a cascade.
 * @category Traces
 */
export interface CascadeOptions extends TraceOptions {
  /** Number of stages n; integer >= 1. */
  readonly stages: number;
  /** Stage ordering; default `"no-delay"`. */
  readonly ordering?: CascadeOrdering | undefined;
  /** Starting output of every stage; finite, default 0. */
  readonly initial?: number | undefined;
}

/**
 * Options of a vector cascade.
 * @category Traces
 */
export interface VectorCascadeOptions extends CascadeOptions {
  /** Number of units; integer >= 1. */
  readonly n: number;
  /** Precision; default `"float64"`. */
  readonly dtype?: Dtype | undefined;
}

/**
 * A scalar cascade of `stages` identical traces `tau dy_k/dt = y_{k-1} - y_k`, `y_0 = x`.
 * @category Traces
 */
export interface TraceCascade {
  /** Time constant of each stage. */
  readonly tau: number;
  /** Step. */
  readonly dt: number;
  /** Discretisation of each stage. */
  readonly method: TraceMethod;
  /** Smoothing coefficient `a` of each stage. */
  readonly coefficient: number;
  /** Number of stages. */
  readonly stages: number;
  /** Stage ordering. */
  readonly ordering: CascadeOrdering;
  /** Output of the last stage. */
  readonly value: number;
  /** Live view of every stage's output: `outputs[k - 1]` is stage k. */
  readonly outputs: Float64Array;
  /** Output of stage `k` (1-based, 1..stages). @throws {@link EbbflowError} `invalid_parameter` (path `k`) if out of range. */
  stage(k: number): number;
  /** Feeds one input sample and returns the last stage's new output. No checks, no allocation. */
  update(x: number): number;
  /** Sets every stage to `value` (default 0). @throws {@link EbbflowError} if `value` is not finite. */
  reset(value?: number): void;
  /** Exports every stage's output as plain data. */
  saveState(): CascadeState;
  /** Restores exported outputs. @throws {@link EbbflowError} if the shape or a value is wrong (state untouched). */
  loadState(state: CascadeState): void;
}

/**
 * A bank of `n` identical cascades over typed vectors; every stage readable.
 * @category Traces
 */
export interface VectorCascade {
  /** Number of units. */
  readonly n: number;
  /** Precision. */
  readonly dtype: Dtype;
  /** Time constant of each stage. */
  readonly tau: number;
  /** Step. */
  readonly dt: number;
  /** Discretisation of each stage. */
  readonly method: TraceMethod;
  /** Smoothing coefficient `a` of each stage. */
  readonly coefficient: number;
  /** Number of stages. */
  readonly stages: number;
  /** Stage ordering. */
  readonly ordering: CascadeOrdering;
  /** Last stage's outputs (live view, length n). */
  readonly value: FloatArray;
  /** Live view of stage `k`'s outputs (1-based). @throws {@link EbbflowError} `invalid_parameter` (path `k`) if out of range. */
  stage(k: number): FloatArray;
  /**
   * Feeds one input vector; writes every stage, allocates nothing, returns the last stage.
   * @throws {@link EbbflowError} `shape_mismatch` (path `input`) if `input.length !== n`.
   */
  update(input: FloatArray): FloatArray;
  /** Sets every stage of every unit to `value` (default 0). */
  reset(value?: number): void;
  /** Exports all stages as plain data (`stages[k-1]` has n values). */
  saveState(): CascadeState;
  /** Restores exported stages. @throws {@link EbbflowError} if the shape or a value is wrong (state untouched). */
  loadState(state: CascadeState): void;
}

interface ResolvedCascade {
  readonly tau: number;
  readonly dt: number;
  readonly method: TraceMethod;
  readonly coefficient: number;
  readonly stages: number;
  readonly ordering: CascadeOrdering;
  readonly initial: number;
}

function resolveCascade(options: CascadeOptions): ResolvedCascade {
  const timing = resolveTiming(options);
  const stages = requireInteger("stages", options.stages, 1);
  const ordering = options.ordering ?? "no-delay";
  if (ordering !== "no-delay" && ordering !== "delayed") fail("invalid_parameter", "ordering", 'one of "no-delay", "delayed"', ordering);
  const initial = options.initial === undefined ? 0 : requireFinite("initial", options.initial);
  return { ...timing, stages, ordering, initial };
}

function requireStage(k: number, stages: number): number {
  if (typeof k !== "number" || !Number.isInteger(k) || k < 1 || k > stages) fail("invalid_parameter", "k", `an integer stage in 1..${stages}`, k);
  return k;
}

function readCascadeState(state: unknown, stages: number, n: number, out: FloatArray): void {
  if (typeof state !== "object" || state === null) fail("invalid_parameter", "state", "an object { stages: number[][] }", state);
  const list = (state as { stages?: unknown }).stages;
  if (!Array.isArray(list)) fail("invalid_parameter", "state.stages", `an array of ${stages} arrays`, list);
  if (list.length !== stages) fail("shape_mismatch", "state.stages", `an array of length ${stages}`, list);
  const scratch = allocate(out instanceof Float32Array ? "float32" : "float64", stages * n);
  for (let k = 0; k < stages; k++) readValues(list[k], n, `state.stages[${k}]`, scratch, k * n);
  out.set(scratch);
}

class ScalarCascade implements TraceCascade {
  readonly tau: number;
  readonly dt: number;
  readonly method: TraceMethod;
  readonly coefficient: number;
  readonly stages: number;
  readonly ordering: CascadeOrdering;
  readonly outputs: Float64Array;
  private readonly delayed: boolean;

  constructor(r: ResolvedCascade) {
    this.tau = r.tau;
    this.dt = r.dt;
    this.method = r.method;
    this.coefficient = r.coefficient;
    this.stages = r.stages;
    this.ordering = r.ordering;
    this.delayed = r.ordering === "delayed";
    this.outputs = new Float64Array(r.stages).fill(r.initial);
  }

  get value(): number {
    return this.outputs[this.stages - 1] as number;
  }

  stage(k: number): number {
    return this.outputs[requireStage(k, this.stages) - 1] as number;
  }

  update(x: number): number {
    const y = this.outputs;
    const a = this.coefficient;
    const last = this.stages - 1;
    if (this.delayed) {
      for (let k = last; k > 0; k--) {
        const yk = y[k] as number;
        y[k] = yk + a * ((y[k - 1] as number) - yk);
      }
      const y0 = y[0] as number;
      y[0] = y0 + a * (x - y0);
    } else {
      let input = x;
      for (let k = 0; k <= last; k++) {
        const yk = y[k] as number;
        input = yk + a * (input - yk);
        y[k] = input;
      }
    }
    return y[last] as number;
  }

  reset(value = 0): void {
    this.outputs.fill(requireFinite("value", value));
  }

  saveState(): CascadeState {
    return { stages: Array.from(this.outputs, (v) => [v]) };
  }

  loadState(state: CascadeState): void {
    readCascadeState(state, this.stages, 1, this.outputs);
  }
}

class BankCascade implements VectorCascade {
  readonly n: number;
  readonly dtype: Dtype;
  readonly tau: number;
  readonly dt: number;
  readonly method: TraceMethod;
  readonly coefficient: number;
  readonly stages: number;
  readonly ordering: CascadeOrdering;
  readonly value: FloatArray;
  private readonly delayed: boolean;
  /** All stages, stage-major: stage k (1-based) occupies [(k-1) n, k n). */
  private readonly all: FloatArray;
  private readonly views: readonly FloatArray[];

  constructor(r: ResolvedCascade, n: number, dtype: Dtype) {
    this.n = n;
    this.dtype = dtype;
    this.tau = r.tau;
    this.dt = r.dt;
    this.method = r.method;
    this.coefficient = r.coefficient;
    this.stages = r.stages;
    this.ordering = r.ordering;
    this.delayed = r.ordering === "delayed";
    this.all = allocate(dtype, r.stages * n);
    this.all.fill(r.initial);
    const views: FloatArray[] = [];
    for (let k = 0; k < r.stages; k++) views.push(this.all.subarray(k * n, (k + 1) * n));
    this.views = views;
    this.value = views[r.stages - 1] as FloatArray;
  }

  stage(k: number): FloatArray {
    return this.views[requireStage(k, this.stages) - 1] as FloatArray;
  }

  update(input: FloatArray): FloatArray {
    const n = this.n;
    if (input.length !== n) fail("shape_mismatch", "input", `an array of length ${n}`, input);
    const y = this.all;
    const a = this.coefficient;
    const last = this.stages - 1;
    if (this.delayed) {
      // Later stages first, so each reads its predecessor's output from before the step.
      for (let k = last; k > 0; k--) stepFilter(y, k * n, y, (k - 1) * n, n, a);
      stepFilter(y, 0, input, 0, n, a);
    } else {
      stepFilter(y, 0, input, 0, n, a);
      for (let k = 1; k <= last; k++) stepFilter(y, k * n, y, (k - 1) * n, n, a);
    }
    return this.value;
  }

  reset(value = 0): void {
    this.all.fill(requireFinite("value", value));
  }

  saveState(): CascadeState {
    return { stages: this.views.map((v) => Array.from(v)) };
  }

  loadState(state: CascadeState): void {
    readCascadeState(state, this.stages, this.n, this.all);
  }
}

/**
 * Creates a scalar cascade of `stages` identical exponential traces, each stage
 * low-pass filtering the previous one; the impulse response tends to the gamma
 * kernel `t^(n-1) exp(-t/tau) / ((n-1)! tau^n)` as dt -> 0 (methods item 13, derived;
 * n = 2 is the alpha kernel).
 *
 * @param options - `tau`, `dt` (default 1), `method` (default `"exact"`), `stages` (integer >= 1),
 *   `ordering` (default `"no-delay"`, see {@link CascadeOrdering}), `initial` (default 0)
 * @returns the cascade; `update(x)` returns the last stage, `stage(k)` reads stage k
 * @throws {@link EbbflowError} `invalid_parameter` naming `tau`, `dt`, `method`, `stages`, `ordering` or `initial`
 * @category Traces
 * @example
 * ```ts
 * const c = traceCascade({ tau: 5, dt: 1, method: "euler", stages: 2 }); // a = 0.2
 * c.update(1); // 0.04000000000000001 (= a^2)
 * c.stage(1);  // 0.2
 * ```
 */
export function traceCascade(options: CascadeOptions): TraceCascade {
  return new ScalarCascade(resolveCascade(options));
}

/**
 * Creates a bank of `n` identical cascades over a typed vector; every unit follows
 * exactly the scalar {@link traceCascade} step. Validates once; `update` allocates nothing.
 *
 * @param options - as {@link traceCascade}, plus `n` (integer >= 1) and `dtype` (default `"float64"`)
 * @returns the cascade bank
 * @throws {@link EbbflowError} `invalid_parameter` naming the offending option
 * @category Traces
 * @example
 * ```ts
 * const c = vectorCascade({ tau: 5, method: "euler", stages: 2, n: 2 }); // a = 0.2
 * c.update(new Float64Array([1, 2])); // last stage: Float64Array [0.04000000000000001, 0.08000000000000002]
 * c.stage(1);                         // first stage: Float64Array [0.2, 0.4]
 * ```
 */
export function vectorCascade(options: VectorCascadeOptions): VectorCascade {
  const r = resolveCascade(options);
  const n = requireInteger("n", options.n, 1);
  const dtype = resolveDtype(options.dtype);
  return new BankCascade(r, n, dtype);
}
