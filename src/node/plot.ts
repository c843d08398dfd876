/**
 * Plots as SVG: learning curves from training results (JSON Lines), mean
 * curves with bands across runs, weight heat maps and receptive fields.
 * Charts are vega-lite specifications rendered by vega's headless SVG renderer.
 * @module
 */
export { readResults, loadResults } from "./plot/results.js";
export type { ResultsMetrics, ResultsHeaderLine, ResultsEpochLine, ResultsStopReason, ResultsEndLine, Results } from "./plot/results.js";
export { renderSvg, writeSvg, PLOT_INSTALL } from "./plot/render.js";
export type { ChartSpec } from "./plot/render.js";
export { learningCurveSpec, learningCurveSvg, summarizeEpochs, bandCurveSpec, bandCurveSvg } from "./plot/curves.js";
export type { CurveSplit, LabelledRun, LearningCurveOptions, BandKind, BandCurveOptions, RunGroup, BandPoint } from "./plot/curves.js";
export { weightMatrixSpec, weightMatrixSvg, receptiveFieldsSpec, receptiveFieldsSvg, connectionFieldLayout, connectionFieldsSvg } from "./plot/heatmaps.js";
export type { WeightMatrixOptions, FieldScaling, ReceptiveFieldOptions } from "./plot/heatmaps.js";
export { timelineSpec, timelineSvg } from "./plot/timeline.js";
export type { TimelineOptions } from "./plot/timeline.js";
