/**
 * Learning curves: one line per run, and mean curves with a shaded band
 * across runs (for sweeps over seeds).
 * @module
 */
import { fail } from "../../errors/index.js";
import type { ResultsMetrics, Results } from "./results.js";
import { type ChartSpec, VEGA_LITE_SCHEMA, choice, flag, pixels, renderSvg, titleText } from "./render.js";

/** Which split of the data a curve shows; `"both"` draws train solid and test dashed. @category Plots */
export type CurveSplit = "train" | "test" | "both";

/** One run to draw, with its legend label. @category Plots */
export interface LabelledRun {
  /** Legend label; labels must be distinct. */
  readonly label: string;
  readonly results: Results;
}

/** Options of {@link learningCurveSvg}. @category Plots */
export interface LearningCurveOptions {
  /** Metric name, e.g. `"sse"`, `"binaryCrossEntropy"`, `"softmaxCrossEntropy"`, `"loss"`, `"accuracy"`, `"cosine"`. */
  readonly metric: string;
  /** Split to draw (default `"train"`). */
  readonly split?: CurveSplit | undefined;
  /** Chart title (default `"<metric> per epoch"`). */
  readonly title?: string | undefined;
  /**
   * Logarithmic y axis (default false). Values must then be >= 0; values
   * below 1e-300, such as an error that reached exactly 0, have no place on
   * the axis and are left out (the line ends there). On a linear axis, values
   * within 1e-280 of 0 are drawn at 0.
   */
  readonly logY?: boolean | undefined;
  /** Width of the plotting area in pixels (default 480). */
  readonly width?: number | undefined;
  /** Height of the plotting area in pixels (default 300). */
  readonly height?: number | undefined;
  /** Mark each epoch with a point (default: only when some curve has a single epoch, which a line alone would not show). */
  readonly points?: boolean | undefined;
}

/** How the band around a mean curve is drawn. @category Plots */
export type BandKind = "range" | "sd";

/** Options of {@link bandCurveSvg}. @category Plots */
export interface BandCurveOptions extends LearningCurveOptions {
  /**
   * Band: `"range"` (default) spans min to max across the runs at each epoch;
   * `"sd"` spans mean - sd to mean + sd, sd the sample standard deviation
   * (divisor n - 1; zero width when only one run reached the epoch).
   */
  readonly band?: BandKind | undefined;
}

/** One group of runs (e.g. one rule across seeds) with its legend label. @category Plots */
export interface RunGroup {
  /** Legend label; labels must be distinct. */
  readonly label: string;
  /** The runs to summarise (at least one). */
  readonly runs: readonly Results[];
}

/** Summary of one metric across runs at one epoch. @category Plots */
export interface BandPoint {
  readonly epoch: number;
  /** Number of runs that reported the metric at this epoch. */
  readonly n: number;
  /** Arithmetic mean. */
  readonly mean: number;
  /** Sample standard deviation (divisor n - 1); 0 when n = 1; Infinity only if the true value exceeds the largest double. */
  readonly sd: number;
  readonly min: number;
  readonly max: number;
}

interface SeriesPoint {
  readonly epoch: number;
  readonly value: number;
}

const SPLITS: readonly CurveSplit[] = ["train", "test", "both"];
const BANDS: readonly BandKind[] = ["range", "sd"];

/**
 * On a linear axis, values closer to 0 than this are drawn at 0: vega's tick
 * maths fails (a crash, not a warning) when all values lie within about
 * 1e-307 of each other but differ. No plot can show the difference anyway.
 */
const FLUSH_TO_ZERO = 1e-280;

/** Smallest value drawn on a log axis (0 has no place there, and vega's log ticks fail on subnormal values). */
const LOG_MIN = 1e-300;

function drawn(v: number, log: boolean): number {
  return !log && Math.abs(v) < FLUSH_TO_ZERO ? 0 : v;
}

function splitsOf(split: CurveSplit): ("train" | "test")[] {
  return split === "both" ? ["train", "test"] : [split];
}

function requireMetric(value: unknown): string {
  if (typeof value !== "string" || value.length === 0) fail("invalid_parameter", "options.metric", 'a metric name such as "sse"', value);
  return value;
}

function requireResults(path: string, results: unknown): Results {
  const r = results as Results | undefined;
  if (typeof r !== "object" || r === null || !Array.isArray(r.epochs)) fail("invalid_parameter", path, "results as returned by readResults", results);
  if (r.epochs.length === 0) fail("invalid_parameter", `${path}.epochs`, "at least one epoch (the run is empty)", r.epochs);
  return r;
}

/**
 * The points of one metric in one split of a run, in epoch order. Epochs that
 * did not report the metric are left out (a line joins the points around them).
 */
function series(path: string, results: Results, metric: string, split: "train" | "test", log: boolean): SeriesPoint[] {
  const points: SeriesPoint[] = [];
  let last = -Infinity;
  for (let i = 0; i < results.epochs.length; i++) {
    const record = results.epochs[i]!;
    const where = `${path}.epochs[${i}]`;
    if (typeof record.epoch !== "number" || !Number.isInteger(record.epoch) || record.epoch <= last) {
      fail("invalid_parameter", `${where}.epoch`, last === -Infinity ? "an integer" : `an integer > ${last} (epochs strictly increasing)`, record.epoch);
    }
    last = record.epoch;
    const metrics: ResultsMetrics | undefined = record[split];
    const value = metrics !== undefined && Object.prototype.hasOwnProperty.call(metrics, metric) ? metrics[metric] : undefined;
    if (value === undefined) continue;
    if (typeof value !== "number" || !Number.isFinite(value)) fail("invalid_parameter", `${where}.${split}.${metric}`, "a finite number", value);
    if (log && value < 0) fail("invalid_parameter", `${where}.${split}.${metric}`, "a value >= 0 (the y axis is logarithmic)", value);
    points.push({ epoch: record.epoch, value });
  }
  if (points.length === 0) fail("invalid_parameter", path, `epochs reporting "${metric}" in the ${split} metrics`, `${results.epochs.length} epochs without it`);
  return points;
}

function requireLabels(path: string, items: readonly { label: unknown }[]): string[] {
  if (!Array.isArray(items) || items.length === 0) fail("invalid_parameter", path, "at least one entry", items);
  const labels: string[] = [];
  for (let i = 0; i < items.length; i++) {
    const label = (items[i] as { label: unknown } | undefined)?.label;
    if (typeof label !== "string" || label.length === 0) fail("invalid_parameter", `${path}[${i}].label`, "a non-empty string", label);
    if (labels.includes(label)) fail("invalid_parameter", `${path}[${i}].label`, "a label not used by another entry", label);
    labels.push(label);
  }
  return labels;
}

function epochDomain(epochs: readonly number[]): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const e of epochs) {
    if (e < lo) lo = e;
    if (e > hi) hi = e;
  }
  return lo === hi ? [lo - 0.5, hi + 0.5] : [lo, hi];
}

interface CommonOptions {
  metric: string;
  split: CurveSplit;
  title: string;
  logY: boolean;
  width: number;
  height: number;
  points: boolean | undefined;
}

function commonOptions(options: LearningCurveOptions): CommonOptions {
  if (typeof options !== "object" || options === null) fail("invalid_parameter", "options", "an options object with a metric", options);
  const metric = requireMetric(options.metric);
  return {
    metric,
    split: choice("options.split", options.split, SPLITS, "train"),
    title: titleText("options.title", options.title, `${metric} per epoch`),
    logY: flag("options.logY", options.logY, false),
    width: pixels("options.width", options.width, 480),
    height: pixels("options.height", options.height, 300),
    points: options.points === undefined ? undefined : flag("options.points", options.points, false),
  };
}

/** Encodings shared by both kinds of curve chart. */
function axes(o: CommonOptions, epochs: readonly number[]) {
  return {
    x: {
      field: "epoch",
      type: "quantitative" as const,
      scale: { domain: epochDomain(epochs), nice: false },
      axis: { title: "epoch", tickMinStep: 1, format: "d" },
    },
    y: {
      field: "value",
      type: "quantitative" as const,
      scale: o.logY ? { type: "log" as const } : { zero: false },
      axis: { title: o.split === "both" ? o.metric : `${o.metric} (${o.split})` },
    },
  };
}

function splitDash(o: CommonOptions) {
  return o.split === "both"
    ? { strokeDash: { field: "split", type: "nominal" as const, scale: { domain: ["train", "test"] }, legend: { title: "split" } } }
    : {};
}

/**
 * Builds the vega-lite specification of {@link learningCurveSvg} (inline data;
 * fields `run`, `split`, `epoch`, `value`), for embedding or restyling.
 * @param runs - Runs to draw, each with a distinct label.
 * @param options - See {@link LearningCurveOptions}.
 * @returns A vega-lite specification.
 * @throws EbbflowError `invalid_parameter` as {@link learningCurveSvg}.
 * @category Plots
 */
export function learningCurveSpec(runs: readonly LabelledRun[], options: LearningCurveOptions): ChartSpec {
  const o = commonOptions(options);
  const labels = requireLabels("runs", runs);
  const values: { run: string; split: string; epoch: number; value: number }[] = [];
  let shortest = Infinity;
  for (let i = 0; i < runs.length; i++) {
    const results = requireResults(`runs[${i}].results`, runs[i]!.results);
    for (const split of splitsOf(o.split)) {
      const all = series(`runs[${i}].results`, results, o.metric, split, o.logY);
      const points = o.logY ? all.filter((p) => p.value >= LOG_MIN) : all;
      if (points.length === 0) fail("invalid_parameter", `runs[${i}].results`, `some ${split} "${o.metric}" value >= ${LOG_MIN} to draw on a log axis`, "only zeros");
      shortest = Math.min(shortest, points.length);
      for (const p of points) values.push({ run: labels[i]!, split, epoch: p.epoch, value: drawn(p.value, o.logY) });
    }
  }
  return {
    $schema: VEGA_LITE_SCHEMA,
    title: o.title,
    width: o.width,
    height: o.height,
    data: { values },
    mark: { type: "line", point: o.points ?? shortest < 2 },
    encoding: {
      ...axes(o, values.map((v) => v.epoch)),
      color: { field: "run", type: "nominal", scale: { domain: labels }, legend: { title: "run" } },
      ...splitDash(o),
    },
  };
}

/**
 * Draws learning curves as SVG: one line per run (legend by label), epochs on
 * x, the chosen metric on y. With `split: "both"` each run has a solid train
 * line and a dashed test line.
 * @param runs - Runs to draw (at least one, distinct labels, each with at least one epoch).
 * @param options - Metric, split, title, log axis, size; see {@link LearningCurveOptions}.
 * @returns SVG text.
 * @throws EbbflowError `invalid_parameter` for an empty list of runs, an empty
 *   run, a repeated label, a run that never reports the metric, a non-finite
 *   metric value (path `runs[i].results.epochs[j].<split>.<metric>`), a
 *   negative value or a curve of only zeros on a log axis, or bad options.
 * @category Plots
 * @example
 * ```ts
 * const svg = await learningCurveSvg([{ label: "seed 1", results }], { metric: "sse", split: "both" });
 * await writeSvg("sse.svg", svg);
 * ```
 */
export async function learningCurveSvg(runs: readonly LabelledRun[], options: LearningCurveOptions): Promise<string> {
  return renderSvg(learningCurveSpec(runs, options));
}

function summarise(path: string, runs: readonly Results[], metric: string, split: "train" | "test", log: boolean): BandPoint[] {
  if (!Array.isArray(runs) || runs.length === 0) fail("invalid_parameter", path, "at least one run", runs);
  const byEpoch = new Map<number, number[]>();
  for (let i = 0; i < runs.length; i++) {
    const results = requireResults(`${path}[${i}]`, runs[i]);
    for (const p of series(`${path}[${i}]`, results, metric, split, log)) {
      const list = byEpoch.get(p.epoch);
      if (list === undefined) byEpoch.set(p.epoch, [p.value]);
      else list.push(p.value);
    }
  }
  const out: BandPoint[] = [];
  for (const epoch of [...byEpoch.keys()].sort((a, b) => a - b)) {
    const xs = byEpoch.get(epoch)!;
    const n = xs.length;
    let min = Infinity;
    let max = -Infinity;
    for (const x of xs) {
      if (x < min) min = x;
      if (x > max) max = x;
    }
    // beyond 1e150 (or below 1e-150) squared deviations overflow (or underflow):
    // there, work on x / max|x| in [-1, 1]; elsewhere on x itself (exact textbook sums)
    const big = Math.max(Math.abs(min), Math.abs(max));
    const scale = big > 1e150 || big < 1e-150 ? big : 1;
    let mean = 0;
    let sd = 0;
    if (scale > 0) {
      let m = 0;
      if (scale === 1) {
        for (const x of xs) m += x;
        m /= n;
      } else for (const x of xs) m += x / scale / n;
      // two-pass sample variance: common practice for numerical stability
      let ss = 0;
      for (const x of xs) ss += (x / scale - m) ** 2;
      // the clamp keeps min <= mean <= max despite rounding (n equal values give that value)
      mean = Math.min(max, Math.max(min, m * scale));
      sd = n > 1 ? Math.sqrt(ss / (n - 1)) * scale : 0;
    }
    out.push({ epoch, n, mean, sd, min, max });
  }
  return out;
}

/**
 * Summarises one metric across runs, epoch by epoch: count, mean, sample
 * standard deviation (divisor n - 1), min and max. At each epoch only the runs
 * that reported the metric there count (runs stopped early drop out, so the
 * tail of a summary may rest on fewer runs: see `n`).
 * @param runs - At least one run, each with at least one epoch reporting the metric.
 * @param metric - Metric name, e.g. `"sse"`.
 * @param split - `"train"` or `"test"`.
 * @returns One point per epoch reported by any run, in epoch order.
 * @throws EbbflowError `invalid_parameter` as {@link learningCurveSvg} (paths `runs[i]...`).
 * @category Plots
 * @example
 * ```ts
 * summarizeEpochs([a, b, c], "sse", "train")[0]; // { epoch: 1, n: 3, mean: 2, sd: 1, min: 1, max: 3 } for sse 1, 2, 3
 * ```
 */
export function summarizeEpochs(runs: readonly Results[], metric: string, split: "train" | "test"): BandPoint[] {
  requireMetric(metric);
  if (split !== "train" && split !== "test") fail("invalid_parameter", "split", '"train" or "test"', split);
  return summarise("runs", runs, metric, split, false);
}

/**
 * Builds the vega-lite specification of {@link bandCurveSvg} (inline data;
 * fields `group`, `split`, `epoch`, `n`, `value` (the mean), `sd`, `min`,
 * `max`, `lower`, `upper`), for embedding or restyling.
 * @param groups - Groups of runs, each with a distinct label.
 * @param options - See {@link BandCurveOptions}.
 * @returns A vega-lite specification.
 * @throws EbbflowError `invalid_parameter` as {@link bandCurveSvg}.
 * @category Plots
 */
export function bandCurveSpec(groups: readonly RunGroup[], options: BandCurveOptions): ChartSpec {
  const o = commonOptions(options);
  const band = choice("options.band", options.band, BANDS, "range");
  const labels = requireLabels("groups", groups);
  const values: { group: string; split: string; epoch: number; n: number; value: number; sd: number; min: number; max: number; lower: number; upper: number }[] = [];
  let shortest = Infinity;
  for (let g = 0; g < groups.length; g++) {
    for (const split of splitsOf(o.split)) {
      const points = summarise(`groups[${g}].runs`, groups[g]!.runs, o.metric, split, o.logY);
      shortest = Math.min(shortest, points.length);
      for (const p of points) {
        // mean ± sd may pass the largest double: clamp, so the chart stays finite
        const lower = band === "range" ? p.min : Math.max(-Number.MAX_VALUE, p.mean - p.sd);
        const upper = band === "range" ? p.max : Math.min(Number.MAX_VALUE, p.mean + p.sd);
        if (o.logY && !(lower >= LOG_MIN)) {
          const hint = band === "sd" ? 'mean - sd is below it; try band: "range" or a linear axis' : "a run reached 0; use a linear axis";
          fail("invalid_parameter", "options.logY", `band edges >= ${LOG_MIN} on a log axis (group "${labels[g]}", ${split}, epoch ${p.epoch}: ${hint})`, lower);
        }
        values.push({ group: labels[g]!, split, epoch: p.epoch, n: p.n, value: drawn(p.mean, o.logY), sd: p.sd, min: p.min, max: p.max, lower: drawn(lower, o.logY), upper: drawn(upper, o.logY) });
      }
    }
  }
  const { x, y } = axes(o, values.map((v) => v.epoch));
  // the same legend on both layers (a line symbol): legends that differ between layers make vega-lite warn
  const legend = { title: "group", symbolType: "stroke", symbolStrokeWidth: 2, symbolOpacity: 1 };
  const color = { field: "group", type: "nominal" as const, scale: { domain: labels }, legend };
  const bandTitle = band === "range" ? "min to max" : "mean ± sd";
  return {
    $schema: VEGA_LITE_SCHEMA,
    title: { text: o.title, subtitle: `mean across runs; band: ${bandTitle}` },
    width: o.width,
    height: o.height,
    data: { values },
    layer: [
      {
        mark: { type: "area", opacity: 0.25 },
        encoding: { x, y: { field: "lower", type: "quantitative" }, y2: { field: "upper" }, color, detail: { field: "split", type: "nominal" } },
      },
      {
        mark: { type: "line", point: o.points ?? shortest < 2 },
        encoding: { x, y, color, ...splitDash(o) },
      },
    ],
  };
}

/**
 * Draws mean learning curves with a shaded band per group of runs (e.g. one
 * learning rule across seeds): the line is the mean across the group's runs at
 * each epoch, the band spans min to max (`band: "range"`, default) or mean ± sd
 * (`band: "sd"`, sample sd). Runs that stopped early drop out of later epochs.
 * @param groups - Groups to draw (at least one, distinct labels, each with at least one non-empty run).
 * @param options - As {@link learningCurveSvg}, plus `band`.
 * @returns SVG text.
 * @throws EbbflowError `invalid_parameter` as {@link learningCurveSvg}, with
 *   paths `groups[g].runs[i]...`; on a log axis also when a band edge is below 1e-300 (the band of a group in which some run reached 0 cannot be drawn on a log axis: use a linear one).
 * @category Plots
 */
export async function bandCurveSvg(groups: readonly RunGroup[], options: BandCurveOptions): Promise<string> {
  return renderSvg(bandCurveSpec(groups, options));
}
