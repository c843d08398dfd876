/**
 * Input feature scaling fitted on one data set (the training part) and applied
 * unchanged to others (the test part), so no test statistics leak into training.
 * @module
 */
import { fail, requireInteger } from "../../errors/index.js";
import { makeDataset, type Dataset } from "./dataset.js";

/**
 * How inputs are rescaled: `min-max` maps each input's training range to
 * [0, 1]; `z-score` subtracts each input's training mean and divides by its
 * standard deviation (population form, divisor n). Both are common practice.
 * @category Data
 */
export type ScalerKind = "min-max" | "z-score";

/**
 * A fitted per-input affine map `x' = (x − offset[j]) × scale[j]`.
 * Inputs constant in the fitting set get `scale = 1` (they map to 0).
 * @category Data
 */
export interface Scaler {
  /** The rescaling fitted. */
  readonly kind: ScalerKind;
  /** Per-input offset (training minimum or mean). */
  readonly offset: Float64Array;
  /** Per-input factor (1 / range or 1 / standard deviation). */
  readonly scale: Float64Array;
  /**
   * The set with rescaled inputs (targets, labels and names unchanged), named
   * `<name>/scaled`. Values outside the fitting range may fall outside [0, 1].
   * @throws {@link EbbflowError} `shape_mismatch` (path `ds.inputSize`) if the input width differs from the fitted one;
   *   `invalid_parameter` (path `<name>:inputs[i][j]`) if a rescaled value overflows.
   */
  apply(ds: Dataset): Dataset;
  /** Rescales one input row into `out` (may be the same array as `row`); returns `out`. No checks, no allocation. */
  applyRow<T extends Float64Array | Float32Array>(out: T, row: ArrayLike<number>): T;
}

/**
 * Fits a {@link Scaler} on the inputs of `ds` (fit on the training part only).
 * @category Data
 * @param ds - The fitting set (at least one example).
 * @param kind - `min-max` (default) or `z-score`.
 * @returns The fitted scaler.
 * @throws {@link EbbflowError} `invalid_parameter` with path `ds.size` for an empty set, `kind` for an unknown kind.
 * @example
 * ```ts
 * const { train, test } = trainTestSplit(ds, 0.2, 1);
 * const scaler = fitScaler(train, "z-score");
 * const [trainS, testS] = [scaler.apply(train), scaler.apply(test)];
 * ```
 */
export function fitScaler(ds: Dataset, kind: ScalerKind = "min-max"): Scaler {
  if (kind !== "min-max" && kind !== "z-score") return fail("unknown_name", "kind", 'one of "min-max", "z-score"', kind);
  requireInteger("ds.size", ds.size, 1);
  const { size: n, inputSize: w, inputs } = ds;
  const offset = new Float64Array(w);
  const scale = new Float64Array(w);
  for (let j = 0; j < w; j++) {
    let a: number;
    let b: number;
    if (kind === "min-max") {
      a = Infinity;
      b = -Infinity;
      for (let i = 0; i < n; i++) {
        const v = inputs[i * w + j] as number;
        if (v < a) a = v;
        if (v > b) b = v;
      }
      const range = b - a;
      offset[j] = a;
      scale[j] = range > 0 && Number.isFinite(1 / range) ? 1 / range : 1;
    } else {
      let mean = 0;
      for (let i = 0; i < n; i++) mean += inputs[i * w + j] as number;
      mean /= n;
      let ss = 0;
      for (let i = 0; i < n; i++) {
        const d = (inputs[i * w + j] as number) - mean;
        ss += d * d;
      }
      const sd = Math.sqrt(ss / n);
      offset[j] = mean;
      scale[j] = sd > 0 && Number.isFinite(1 / sd) ? 1 / sd : 1;
    }
  }
  const applyRow = <T extends Float64Array | Float32Array>(out: T, row: ArrayLike<number>): T => {
    for (let j = 0; j < w; j++) out[j] = ((row[j] as number) - (offset[j] as number)) * (scale[j] as number);
    return out;
  };
  return Object.freeze({
    kind,
    offset,
    scale,
    applyRow,
    apply(target: Dataset): Dataset {
      if (target.inputSize !== w) fail("shape_mismatch", "ds.inputSize", `${w} inputs (as fitted)`, target.inputSize);
      const out = new Float64Array(target.size * w);
      for (let i = 0; i < target.size; i++) applyRow(out.subarray(i * w, (i + 1) * w), target.inputs.subarray(i * w, (i + 1) * w));
      for (let k = 0; k < out.length; k++) {
        if (!Number.isFinite(out[k] as number)) {
          fail("invalid_parameter", `${target.name}:inputs[${Math.floor(k / w)}][${k % w}]`, "a value whose rescaled form is finite", target.inputs[k]);
        }
      }
      return makeDataset({ ...target, name: `${target.name}/scaled`, inputs: out });
    },
  });
}
