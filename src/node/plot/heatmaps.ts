/**
 * Heat maps of weights: a whole matrix, or each row as a small image
 * (receptive fields), coloured on a diverging scale centred on 0.
 * @module
 */
import { fail, requireInteger, requirePositive } from "../../errors/index.js";
import type { FloatArray } from "../../types/index.js";
import type { Connection, Network } from "../../network/network.js";
import { type ChartSpec, VEGA_LITE_SCHEMA, choice, pixels, renderSvg, titleText } from "./render.js";

/** Diverging colour scheme: blue for negative, light grey-white at 0, orange for positive. */
const SCHEME = "blueorange";
/** Largest number of units {@link receptiveFieldsSvg} draws by default. */
const DEFAULT_UNITS = 64;

/** Options of {@link weightMatrixSvg}. @category Plots */
export interface WeightMatrixOptions {
  /** Chart title (default `"weights"`). */
  readonly title?: string | undefined;
  /** Title of the row axis (default `"receiving unit"`: W is receivers × senders). */
  readonly rowLabel?: string | undefined;
  /** Title of the column axis (default `"sending unit"`). */
  readonly colLabel?: string | undefined;
  /**
   * Colour range is [-limit, limit], so 0 is always the scheme's middle colour
   * and equal magnitudes get equally strong colours; values beyond are clamped.
   * Default: the largest |w| (1 if all weights are 0). Fix it to compare plots.
   */
  readonly limit?: number | undefined;
  /** Side of one cell in pixels (default: the larger side fits about 400 px, 2 to 24 px a cell). */
  readonly cellSize?: number | undefined;
}

/** How receptive fields share the colour range. @category Plots */
export type FieldScaling = "shared" | "unit";

/** Options of {@link receptiveFieldsSvg}. @category Plots */
export interface ReceptiveFieldOptions {
  /** Chart title (default `"receptive fields"`). */
  readonly title?: string | undefined;
  /** Which units (rows of W) to draw: a count (the first N, at most the number of rows) or a list of row indices. Default: the first 64. */
  readonly units?: number | readonly number[] | undefined;
  /** Fields per row of the grid (default: ceil(sqrt(number of units drawn))). */
  readonly columns?: number | undefined;
  /** Side of one image pixel in pixels (default: an image side of about 96 px, 1 to 8 px a pixel). */
  readonly pixelSize?: number | undefined;
  /**
   * `"shared"` (default): one colour range [-limit, limit] for all units, so
   * strengths compare across units. `"unit"`: each unit's weights divided by
   * its own largest |w| (range [-1, 1]), so weak units' shapes show too.
   */
  readonly scaling?: FieldScaling | undefined;
  /** Colour limit for `"shared"` scaling (default: the largest |w| among the units drawn; 1 if all are 0). */
  readonly limit?: number | undefined;
}

function checkMatrix(weights: FloatArray, rows: number, cols: number): void {
  if (!(weights instanceof Float32Array || weights instanceof Float64Array)) fail("invalid_parameter", "weights", "a Float32Array or Float64Array", weights);
  requireInteger("rows", rows, 1);
  requireInteger("cols", cols, 1);
  if (weights.length !== rows * cols) fail("shape_mismatch", "weights", `length rows × cols = ${rows * cols}`, weights.length);
  for (let i = 0; i < weights.length; i++) {
    const w = weights[i]!;
    if (!Number.isFinite(w)) fail("invalid_parameter", `weights[${i}]`, `a finite number (row ${Math.floor(i / cols)}, column ${i % cols})`, w);
  }
}

function maxAbs(weights: FloatArray, start: number, end: number): number {
  let m = 0;
  for (let i = start; i < end; i++) {
    const a = Math.abs(weights[i]!);
    if (a > m) m = a;
  }
  return m;
}

function colourLimit(value: unknown, fallback: number): number {
  if (value !== undefined) return requirePositive("options.limit", value);
  return fallback > 0 ? fallback : 1;
}

/** About ten evenly spaced tick values on an axis of n cells. */
function tickValues(n: number): number[] {
  const step = Math.max(1, Math.ceil(n / 10));
  const out: number[] = [];
  for (let i = 0; i < n; i += step) out.push(i);
  return out;
}

/**
 * Colour encoding of `level` = weight / limit on [-1, 1] (clamped beyond), so
 * 0 is the scheme's middle colour; the legend shows level × limit. Colouring
 * the ratio rather than the weight keeps vega's tick maths away from extreme
 * magnitudes (a limit of 1e-310 would make its legend fail).
 */
function diverging(limit: number, title: string) {
  return {
    field: "level",
    type: "quantitative" as const,
    scale: { type: "linear" as const, domain: [-1, 1], scheme: SCHEME, clamp: true },
    legend: { title, titleLimit: 400, values: [-1, -0.5, 0, 0.5, 1], labelExpr: `format(datum.value * ${String(limit)}, '.3~g')` },
  };
}

/** Clamps to [-1, 1] (a ratio beyond the colour limit, possibly ±Infinity for a tiny limit). */
function clampUnit(v: number): number {
  return v > 1 ? 1 : v < -1 ? -1 : v;
}

function options0<T>(options: T | undefined): Partial<T> {
  if (options === undefined) return {};
  if (typeof options !== "object" || options === null) fail("invalid_parameter", "options", "an options object", options);
  return options;
}

/**
 * Builds the vega-lite specification of {@link weightMatrixSvg} (inline data;
 * fields `row`, `col`, `weight`, and `level` = weight / limit, which is coloured), for embedding or restyling.
 * @param weights - Row-major matrix, `rows` × `cols`.
 * @param rows - Number of rows (receiving units).
 * @param cols - Number of columns (sending units).
 * @param options - See {@link WeightMatrixOptions}.
 * @returns A vega-lite specification.
 * @throws EbbflowError as {@link weightMatrixSvg}.
 * @category Plots
 */
export function weightMatrixSpec(weights: FloatArray, rows: number, cols: number, options?: WeightMatrixOptions): ChartSpec {
  checkMatrix(weights, rows, cols);
  const o = options0(options);
  const title = titleText("options.title", o.title, "weights");
  const rowLabel = titleText("options.rowLabel", o.rowLabel, "receiving unit");
  const colLabel = titleText("options.colLabel", o.colLabel, "sending unit");
  const limit = colourLimit(o.limit, maxAbs(weights, 0, weights.length));
  const cell = pixels("options.cellSize", o.cellSize, Math.max(2, Math.min(24, Math.floor(400 / Math.max(rows, cols)))));
  const values: { row: number; col: number; weight: number; level: number }[] = new Array(rows * cols);
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      const w = weights[r * cols + c]!;
      values[r * cols + c] = { row: r, col: c, weight: w, level: clampUnit(w / limit) };
    }
  }
  return {
    $schema: VEGA_LITE_SCHEMA,
    title,
    width: cols * cell,
    height: rows * cell,
    data: { values },
    mark: { type: "rect", aria: false },
    encoding: {
      x: { field: "col", type: "ordinal", scale: { paddingInner: 0, paddingOuter: 0 }, axis: { title: colLabel, values: tickValues(cols), labelAngle: 0 } },
      y: { field: "row", type: "ordinal", scale: { paddingInner: 0, paddingOuter: 0 }, axis: { title: rowLabel, values: tickValues(rows) } },
      color: diverging(limit, "weight"),
    },
  };
}

/**
 * Draws a weight matrix as an SVG heat map: one cell per weight (row r at the
 * r-th band from the top, column c at the c-th band from the left), coloured
 * on a diverging scale centred on 0 (blue negative, orange positive).
 * @param weights - Row-major matrix, `rows` × `cols` (a connection's W is receivers × senders).
 * @param rows - Number of rows, integer >= 1.
 * @param cols - Number of columns, integer >= 1.
 * @param options - Title, axis titles, colour limit, cell size.
 * @returns SVG text.
 * @throws EbbflowError `shape_mismatch` (path `weights`) if the length is not
 *   rows × cols; `invalid_parameter` for a non-finite weight (path `weights[i]`),
 *   bad sizes or options.
 * @category Plots
 * @example
 * ```ts
 * const svg = await weightMatrixSvg(net.connections[0].weights, 3, 4, { title: "in → hidden" });
 * ```
 */
export async function weightMatrixSvg(weights: FloatArray, rows: number, cols: number, options?: WeightMatrixOptions): Promise<string> {
  return renderSvg(weightMatrixSpec(weights, rows, cols, options));
}

function chooseUnits(value: unknown, rows: number): number[] {
  if (value === undefined) value = Math.min(rows, DEFAULT_UNITS);
  if (typeof value === "number") {
    const n = Math.min(requireInteger("options.units", value, 1), rows);
    return Array.from({ length: n }, (_, i) => i);
  }
  if (!Array.isArray(value) || value.length === 0) fail("invalid_parameter", "options.units", "a count >= 1 or a non-empty list of row indices", value);
  const seen = new Set<number>();
  for (let i = 0; i < value.length; i++) {
    const u: unknown = value[i];
    if (typeof u !== "number" || !Number.isInteger(u) || u < 0 || u >= rows) fail("invalid_parameter", `options.units[${i}]`, `a row index in [0, ${rows - 1}]`, u);
    if (seen.has(u)) fail("invalid_parameter", `options.units[${i}]`, "an index not listed before", u);
    seen.add(u);
  }
  return [...value] as number[];
}

/**
 * Builds the vega-lite specification of {@link receptiveFieldsSvg} (inline
 * data; fields `unit`, `x`, `y`, `weight`, and `level`, the coloured value:
 * weight / limit, or weight / the unit's max |weight|), for
 * embedding or restyling.
 * @param weights - Row-major matrix, `rows` × `cols`, cols = imageWidth × imageHeight.
 * @param rows - Number of units (rows).
 * @param cols - Number of inputs per unit (columns).
 * @param imageWidth - Image width in pixels.
 * @param imageHeight - Image height in pixels.
 * @param options - See {@link ReceptiveFieldOptions}.
 * @returns A vega-lite specification.
 * @throws EbbflowError as {@link receptiveFieldsSvg}.
 * @category Plots
 */
export function receptiveFieldsSpec(
  weights: FloatArray,
  rows: number,
  cols: number,
  imageWidth: number,
  imageHeight: number,
  options?: ReceptiveFieldOptions,
): ChartSpec {
  checkMatrix(weights, rows, cols);
  requireInteger("imageWidth", imageWidth, 1);
  requireInteger("imageHeight", imageHeight, 1);
  if (imageWidth * imageHeight !== cols) fail("shape_mismatch", "cols", `imageWidth × imageHeight = ${imageWidth * imageHeight}`, cols);
  const o = options0(options);
  const title = titleText("options.title", o.title, "receptive fields");
  const units = chooseUnits(o.units, rows);
  const columns = o.columns === undefined ? Math.ceil(Math.sqrt(units.length)) : requireInteger("options.columns", o.columns, 1);
  const pixel = pixels("options.pixelSize", o.pixelSize, Math.max(1, Math.min(8, Math.round(96 / Math.max(imageWidth, imageHeight)))));
  const scaling = choice("options.scaling", o.scaling, ["shared", "unit"], "shared");
  if (scaling === "unit" && o.limit !== undefined) fail("invalid_parameter", "options.limit", 'no limit with scaling "unit" (each unit spans [-1, 1])', o.limit);
  let shared = 0;
  for (const u of units) shared = Math.max(shared, maxAbs(weights, u * cols, (u + 1) * cols));
  const limit = scaling === "unit" ? 1 : colourLimit(o.limit, shared);
  const values: { unit: number; x: number; y: number; weight: number; level: number }[] = [];
  for (const u of units) {
    const own = maxAbs(weights, u * cols, (u + 1) * cols);
    const divide = scaling === "unit" ? (own > 0 ? own : 1) : limit;
    for (let y = 0; y < imageHeight; y++) {
      for (let x = 0; x < imageWidth; x++) {
        const w = weights[u * cols + y * imageWidth + x]!;
        values.push({ unit: u, x, y, weight: w, level: clampUnit(w / divide) });
      }
    }
  }
  return {
    $schema: VEGA_LITE_SCHEMA,
    title,
    data: { values },
    columns,
    spacing: 6,
    facet: {
      field: "unit",
      type: "ordinal",
      sort: units,
      title: null,
      header: { labelExpr: "'unit ' + datum.value", labelPadding: 2 },
    },
    spec: {
      width: imageWidth * pixel,
      height: imageHeight * pixel,
      mark: { type: "rect", aria: false },
      encoding: {
        x: { field: "x", type: "ordinal", scale: { paddingInner: 0, paddingOuter: 0 }, axis: null },
        y: { field: "y", type: "ordinal", scale: { paddingInner: 0, paddingOuter: 0 }, axis: null },
        color: diverging(scaling === "unit" ? 1 : limit, scaling === "unit" ? "weight / unit's max |w|" : "weight"),
      },
    },
  };
}

/**
 * Draws receptive fields as SVG: each chosen row of W (one unit's incoming
 * weights) reshaped to an imageWidth × imageHeight image (input index
 * y × imageWidth + x, row-major, y downwards, as digit images are stored) and
 * shown as a small heat map, in a grid labelled `unit <row>`. Colours are
 * diverging and centred on 0 (blue negative, orange positive).
 * @param weights - Row-major matrix, `rows` × `cols`.
 * @param rows - Number of units, integer >= 1.
 * @param cols - Inputs per unit; must equal imageWidth × imageHeight.
 * @param imageWidth - Image width, integer >= 1 (e.g. 28 for digit images).
 * @param imageHeight - Image height, integer >= 1.
 * @param options - Units to draw, grid columns, pixel size, colour scaling.
 * @returns SVG text.
 * @throws EbbflowError `shape_mismatch` (path `weights` or `cols`), or
 *   `invalid_parameter` for a non-finite weight, bad sizes or options.
 * @category Plots
 * @example
 * ```ts
 * const svg = await receptiveFieldsSvg(w, 100, 784, 28, 28, { units: 16, scaling: "unit" });
 * ```
 */
export async function receptiveFieldsSvg(
  weights: FloatArray,
  rows: number,
  cols: number,
  imageWidth: number,
  imageHeight: number,
  options?: ReceptiveFieldOptions,
): Promise<string> {
  return renderSvg(receptiveFieldsSpec(weights, rows, cols, imageWidth, imageHeight, options));
}

/**
 * The layout of a connection's receptive fields taken from its layers' shapes: the sending layer's
 * geometry gives each field's image (`width` = its columns, `height` = its rows × channels, channel
 * planes stacked top to bottom), the receiving layer's gives the grid (one grid row per row of the
 * receiving sheet: `columns` = its columns × channels), and `weights` holds each unit's field in that
 * image order (a copy; the network's own array when the sending layer has one channel).
 * @param net - The network.
 * @param connection - The connection's label (`from->to`) or the connection itself.
 * @returns The fields' weights (|to| × |from|) in image order, image size and grid columns.
 * @throws EbbflowError `unknown_name` for a label that names no connection.
 * @category Plots
 */
export function connectionFieldLayout(net: Network, connection: string | Connection): { weights: FloatArray; rows: number; cols: number; imageWidth: number; imageHeight: number; columns: number } {
  const c = typeof connection === "string" ? net.connections.find((x) => x.label === connection) : connection;
  if (c === undefined) return fail("unknown_name", "connection", `a connection label (${net.connections.map((x) => x.label).join(", ")})`, connection);
  const [h, w, ch] = net.layers[c.from]!.geometry;
  const post = net.layers[c.to]!.geometry;
  const rows = c.pattern.rows;
  const cols = c.pattern.cols;
  let weights = c.weights;
  if (ch > 1) {
    // (r, c, k) → plane k, row r: image index (k·h + r)·w + c
    weights = new Float64Array(rows * cols);
    for (let u = 0; u < rows; u++) for (let r = 0; r < h; r++) for (let q = 0; q < w; q++) for (let k = 0; k < ch; k++) weights[u * cols + (k * h + r) * w + q] = c.weights[u * cols + (r * w + q) * ch + k] as number;
  }
  return { weights, rows, cols, imageWidth: w, imageHeight: h * ch, columns: post[0] > 1 ? post[1] * post[2] : Math.ceil(Math.sqrt(rows)) };
}

/**
 * Draws a connection's receptive fields laid out by its layers' shapes (see {@link connectionFieldLayout}):
 * each receiving unit's field as an image of the sending sheet, in a grid that follows the receiving
 * sheet. Options as {@link receptiveFieldsSvg} (default: every unit, up to 1024).
 * @category Plots
 * @example
 * ```ts
 * const svg = await connectionFieldsSvg(net, "sensors->map", { scaling: "unit" });
 * ```
 */
export async function connectionFieldsSvg(net: Network, connection: string | Connection, options: ReceptiveFieldOptions = {}): Promise<string> {
  const l = connectionFieldLayout(net, connection);
  return receptiveFieldsSvg(l.weights, l.rows, l.cols, l.imageWidth, l.imageHeight, { units: Math.min(l.rows, 1024), columns: l.columns, ...options });
}
