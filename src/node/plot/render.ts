/**
 * Rendering of chart specifications to SVG text (vega-lite compiled to vega,
 * drawn by vega's headless SVG renderer) and writing SVG files atomically.
 *
 * vega and vega-lite are optional peer dependencies: they are imported on the
 * first render (a dynamic `import()`), never when `ebbflow/node` is imported,
 * and their absence is reported as a typed error naming the install command.
 * The chart specifications are typed here as plain JSON ({@link ChartSpec}),
 * so that ebbflow's declaration files never refer to vega-lite's.
 * @module
 */
import { fail, requireInteger } from "../../errors/index.js";
import { writeFileAtomic } from "../files.js";

/**
 * A vega-lite chart specification as plain JSON (https://vega.github.io/vega-lite/docs/spec.html):
 * what the `...Spec` functions return and {@link renderSvg} draws.
 * @category Plots
 */
export type ChartSpec = { readonly [key: string]: unknown };

/** The install command of the plotting packages (optional peer dependencies; these versions run on Node 20 and later). */
export const PLOT_INSTALL = "npm install vega@6.4.0 vega-lite@6.4.1";

/** The two plotting modules, as far as rendering uses them (typed here, so that no declaration refers to theirs). */
export interface PlotStack {
  compile(spec: ChartSpec): { spec: unknown };
  View: new (runtime: unknown, options: { renderer: "none" }) => { toSVG(): Promise<string>; finalize(): void };
  parse(spec: never): unknown;
}

let stack: Promise<PlotStack> | undefined;

/**
 * Imports vega and vega-lite on first use (once per process).
 * @throws EbbflowError `unsupported` (path `vega` or `vega-lite`) naming the install command when either is missing.
 */
export function loadPlotStack(): Promise<PlotStack> {
  stack ??= (async () => {
    const load = async (name: "vega" | "vega-lite"): Promise<Record<string, unknown>> => {
      try {
        return (await import(name)) as Record<string, unknown>;
      } catch (e) {
        stack = undefined; // a later call may find the package installed
        return fail("unsupported", name, `the optional plotting packages vega and vega-lite installed (${PLOT_INSTALL})`, (e as Error).message ?? e);
      }
    };
    const vega = await load("vega");
    const lite = await load("vega-lite");
    return { compile: lite.compile, View: vega.View, parse: vega.parse } as PlotStack;
  })();
  return stack;
}

/** JSON Schema address of the chart specifications built here. */
export const VEGA_LITE_SCHEMA = "https://vega.github.io/schema/vega-lite/v6.json";

/**
 * Renders a vega-lite chart specification to SVG text: the spec is compiled
 * to vega, parsed, and drawn headless (no browser, no canvas).
 * @param spec - A vega-lite specification with inline data.
 * @returns The SVG document as text (starts with `<svg`).
 * @throws EbbflowError `unsupported` (path `vega` or `vega-lite`) when the optional plotting packages are not installed.
 * @category Plots
 * @example
 * ```ts
 * const svg = await renderSvg({ data: { values: [{ x: 1, y: 2 }] }, mark: "point",
 *   encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } } });
 * svg.startsWith("<svg"); // true
 * ```
 */
export async function renderSvg(spec: ChartSpec): Promise<string> {
  const { compile, View, parse } = await loadPlotStack();
  const compiled = compile(spec);
  const view = new View(parse(compiled.spec as never), { renderer: "none" });
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
