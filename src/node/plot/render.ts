/**
 * Rendering of chart specifications to SVG text (vega-lite compiled to vega,
 * drawn by vega's headless SVG renderer) and writing SVG files atomically.
 * @module
 */
import * as vega from "vega";
import { compile, type TopLevelSpec } from "vega-lite";
import { fail, requireInteger } from "../../errors/index.js";
import { writeFileAtomic } from "../files.js";

/** JSON Schema address of the chart specifications built here. */
export const VEGA_LITE_SCHEMA = "https://vega.github.io/schema/vega-lite/v6.json";

/**
 * Renders a vega-lite chart specification to SVG text: the spec is compiled
 * to vega, parsed, and drawn headless (no browser, no canvas).
 * @param spec - A vega-lite specification with inline data.
 * @returns The SVG document as text (starts with `<svg`).
 * @category Plots
 * @example
 * ```ts
 * const svg = await renderSvg({ data: { values: [{ x: 1, y: 2 }] }, mark: "point",
 *   encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } } });
 * svg.startsWith("<svg"); // true
 * ```
 */
export async function renderSvg(spec: TopLevelSpec): Promise<string> {
  const compiled = compile(spec);
  const view = new vega.View(vega.parse(compiled.spec), { renderer: "none" });
  try {
    return await view.toSVG();
  } finally {
    view.finalize();
  }
}

/**
 * Writes SVG text to a file atomically (temporary file, flush, rename).
 * @param file - Target path (usually ending in `.svg`).
 * @param svg - SVG document text, as returned by the plotting functions.
 * @throws EbbflowError `invalid_parameter` (path `svg`) if `svg` is not SVG
 *   text; `io_error` if the file cannot be written.
 * @category Plots
 */
export async function writeSvg(file: string, svg: string): Promise<void> {
  if (typeof file !== "string" || file.length === 0) fail("invalid_parameter", "file", "a file path", file);
  if (typeof svg !== "string" || !svg.trimStart().startsWith("<svg")) fail("invalid_parameter", "svg", "SVG text starting with <svg", typeof svg === "string" ? svg.slice(0, 20) : svg);
  await writeFileAtomic(file, svg);
}

/** Validates an optional pixel size: an integer >= 1, or the default. */
export function pixels(path: string, value: unknown, fallback: number): number {
  return value === undefined ? fallback : requireInteger(path, value, 1);
}

/** Validates an optional title: a string, or the default. */
export function titleText(path: string, value: unknown, fallback: string): string {
  if (value === undefined) return fallback;
  if (typeof value !== "string") fail("invalid_parameter", path, "a string", value);
  return value;
}

/** Validates an optional boolean flag. */
export function flag(path: string, value: unknown, fallback: boolean): boolean {
  if (value === undefined) return fallback;
  if (typeof value !== "boolean") fail("invalid_parameter", path, "true or false", value);
  return value;
}

/** Validates an optional choice among fixed words. */
export function choice<T extends string>(path: string, value: unknown, allowed: readonly T[], fallback: T): T {
  if (value === undefined) return fallback;
  if (typeof value !== "string" || !(allowed as readonly string[]).includes(value)) {
    fail("invalid_parameter", path, `one of ${allowed.map((a) => `"${a}"`).join(", ")}`, value);
  }
  return value as T;
}
