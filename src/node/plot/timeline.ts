/**
 * Activity over time from a {@link Recorder}: a heat map of units × settling steps (patterns side by side),
 * or a raster of the units above a threshold at each step.
 * @module
 */
import { fail, requireFinite, requireInteger } from "../../errors/index.js";
import type { Recorder } from "../../record/recorder.js";
import { type ChartSpec, VEGA_LITE_SCHEMA, pixels, renderSvg, titleText } from "./render.js";

/** Options of {@link timelineSpec}. @category Plots */
export interface TimelineOptions {
  /** Which pattern of the batch (row) to draw (default 0). */
  readonly row?: number | undefined;
  /** Chart title (default: the channel's name). */
  readonly title?: string | undefined;
  /** Draw a raster instead of a heat map: a mark where the value is at least this threshold. */
  readonly raster?: number | undefined;
  /** Side of one cell in pixels (default: about 600 px across, 1 to 12 px a cell). */
  readonly cellSize?: number | undefined;
}

/**
 * The vega-lite specification of a channel over time: x is time (every recorded step of every pattern,
 * in order; field `time`, with `pattern` and `step`), y the unit, colour the value (sequential scale), or
 * with `raster` one mark per unit and step whose value reaches the threshold.
 * @throws EbbflowError `unknown_name` for a channel not recorded; `invalid_parameter` for bad options or
 *   when nothing has been recorded.
 * @category Plots
 */
export function timelineSpec(recorder: Recorder, channel: string, options: TimelineOptions = {}): ChartSpec {
  if (options === null || typeof options !== "object") fail("invalid_parameter", "options", "an options object", options);
  const c = recorder.channel(channel);
  const row = options.row === undefined ? 0 : requireInteger("options.row", options.row, 0);
  if (row >= recorder.batch) fail("invalid_parameter", "options.row", `a row below the batch (${recorder.batch})`, row);
  const threshold = options.raster === undefined ? null : requireFinite("options.raster", options.raster);
  if (recorder.count === 0) fail("invalid_parameter", "recorder", "at least one recorded pattern", "none");
  const title = titleText("options.title", options.title, channel);
  const values: Record<string, number>[] = [];
  let time = 0;
  for (let p = 0; p < recorder.count; p++) {
    for (let s = 1; s <= (recorder.stepCounts[p] as number); s++) {
      for (let j = 0; j < c.size; j++) {
        const v = c.data[((p * recorder.steps + (s - 1)) * recorder.batch + row) * c.size + j] as number;
        if (threshold === null || v >= threshold) values.push({ time, pattern: p, step: s, unit: j, value: v });
      }
      time++;
    }
  }
  const cell = pixels("options.cellSize", options.cellSize, Math.max(1, Math.min(12, Math.floor(600 / Math.max(time, 1)))));
  return {
    $schema: VEGA_LITE_SCHEMA,
    title,
    width: time * cell,
    height: Math.max(c.size * cell, 40),
    data: { values },
    mark: threshold === null ? { type: "rect", aria: false } : { type: "tick", orient: "vertical", aria: false },
    encoding: {
      x: { field: "time", type: threshold === null ? "ordinal" : "quantitative", scale: threshold === null ? { paddingInner: 0, paddingOuter: 0 } : { domain: [0, time] }, axis: { title: "settling step (patterns in order)", labels: false, ticks: false } },
      y: { field: "unit", type: "ordinal", scale: { paddingInner: 0, paddingOuter: 0, domain: Array.from({ length: c.size }, (_, j) => j) }, axis: { title: "unit" } },
      ...(threshold === null ? { color: { field: "value", type: "quantitative", scale: { scheme: "viridis" }, legend: { title: "value" } } } : {}),
    },
  };
}

/** Draws {@link timelineSpec} as SVG (needs the optional plotting packages). @category Plots */
export async function timelineSvg(recorder: Recorder, channel: string, options?: TimelineOptions): Promise<string> {
  return renderSvg(timelineSpec(recorder, channel, options));
}
