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
 * A fitted per-input affine map `x' = (x − offset[j]) / divisor[j]`.
 * Inputs constant in the fitting set get `divisor = 1` (they map to 0).
 * @category Data
 */
export interface Scaler {
  /** The rescaling fitted. */
  readonly kind: ScalerKind;
  /** Per-input offset (training minimum or mean). */
  readonly offset: Float64Array;
  /** Per-input divisor (training range or standard deviation; 1 for a constant input). */
  readonly divisor: Float64Array;
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
 * The mean is a running mean and the standard deviation is computed on
 * deviations divided by their largest magnitude, so neither overflows nor
 * underflows for finite data; inputs whose spread lies in the subnormal range
 * (below about 2.2e-308) keep only the few digits such numbers have.
 * @category Data
 * @param ds - The fitting set (at least one example).
 * @param kind - `min-max` (default) or `z-score`.
 * @returns The fitted scaler.
 * @throws {@link EbbflowError} `invalid_parameter` with path `ds.size` for an empty set, or `<name>:inputs` for a column
 *   whose spread overflows (values near ±1.8e308 of both signs); `unknown_name` (path `kind`) for an unknown kind.
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
  const tooWide = (j: number): never =>
    fail("invalid_parameter", `${ds.name}:inputs`, "input columns whose spread (largest − smallest value) is a finite number", "a spread that overflows", `column ${j}`);
  const offset = new Float64Array(w);
  const divisor = new Float64Array(w);
  for (let j = 0; j < w; j++) {
    if (kind === "min-max") {
      let lo = Infinity;
      let hi = -Infinity;
      for (let i = 0; i < n; i++) {
        const v = inputs[i * w + j] as number;
        if (v < lo) lo = v;
        if (v > hi) hi = v;
      }
      const range = hi - lo;
      if (!Number.isFinite(range)) tooWide(j);
      offset[j] = lo;
      divisor[j] = range > 0 ? range : 1;
    } else {
      let mean = 0;
      for (let i = 0; i < n; i++) mean += (inputs[i * w + j] as number) / (i + 1) - mean / (i + 1);
      let big = 0;
      for (let i = 0; i < n; i++) big = Math.max(big, Math.abs((inputs[i * w + j] as number) - mean));
      if (!Number.isFinite(big)) tooWide(j);
      let ss = 0;
      if (big > 0) {
        for (let i = 0; i < n; i++) {
          const d = ((inputs[i * w + j] as number) - mean) / big;
          ss += d * d;
        }
      }
      const sd = big * Math.sqrt(ss / n);
      offset[j] = mean;
      divisor[j] = sd > 0 ? sd : 1;
    }
  }
  const applyRow = <T extends Float64Array | Float32Array>(out: T, row: ArrayLike<number>): T => {
    for (let j = 0; j < w; j++) out[j] = ((row[j] as number) - (offset[j] as number)) / (divisor[j] as number);
    return out;
  };
  return Object.freeze({
    kind,
    offset,
    divisor,
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
