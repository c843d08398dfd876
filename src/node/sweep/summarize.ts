/**
 * Summaries of a sweep folder: the final metrics of its finished runs per configuration (mean, standard
 * deviation, Student-t confidence interval across seeds) as a table and JSON, and learning curves with a
 * band across seeds as SVG.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { EbbflowError, fail } from "../../errors/index.js";
import { formatSummaryTable, summarizeRuns, type RunFinal, type SweepSummary } from "../../sweep/summary.js";
import { bandCurveSvg, type BandKind, type RunGroup } from "../plot/curves.js";
import type { Results } from "../plot/results.js";
import { writeFileAtomic } from "../files.js";
import { ensureFolder } from "../run/folder.js";
import { readRunProgress, readSweepPlan, sweepFolder } from "./files.js";

/** Options of {@link summarizeSweepFolder}. @category Sweeps */
export interface SummarizeOptions {
  /** Metric name (default `sse`). */
  readonly metric?: string | undefined;
  /** Split (default `test` when the runs have a test split, else `train`). */
  readonly split?: "train" | "test" | undefined;
  /** Confidence level (default 0.95). */
  readonly level?: number | undefined;
  /** Band of the curves: `range` (min to max across seeds, default) or `sd` (mean ± sd). */
  readonly band?: BandKind | undefined;
  /** Write `summary.json` and the SVG into the folder (default true). */
  readonly write?: boolean | undefined;
}

/** Result of {@link summarizeSweepFolder}. @category Sweeps */
export interface SweepFolderSummary {
  readonly summary: SweepSummary;
  /** The text table. */
  readonly table: string;
  /** The learning curves with bands, as SVG text; absent when the optional plotting packages are not installed (see `plotSkipped`). */
  readonly svg?: string | undefined;
  /** Why no SVG was drawn: the message naming the install command of the plotting packages. */
  readonly plotSkipped?: string | undefined;
  /** Files written (absent when `write` is false; `svg` absent when no SVG was drawn). */
  readonly files?: { readonly json: string; readonly svg?: string | undefined } | undefined;
}

/**
 * Summarises a sweep folder (see the module notes). Unfinished runs are left out and listed per configuration.
 * @param dir - The sweep folder.
 * @param options - Metric, split, level, band, whether to write files.
 * @returns The summary, its table, the SVG and the files written (`DIR/summary.json`, `DIR/plots/<metric>-<split>.svg`).
 * @throws `EbbflowError` `invalid_config` (path = the folder) when no run has finished; `invalid_parameter` for an unknown metric.
 * @category Sweeps
 */
export async function summarizeSweepFolder(dir: string, options: SummarizeOptions = {}): Promise<SweepFolderSummary> {
  const f = sweepFolder(dir);
  const plan = await readSweepPlan(f.dir);
  const finals = new Map<string, RunFinal>();
  const results = new Map<string, Results>();
  for (const run of plan.runs) {
    const p = await readRunProgress(f.dir, run);
    const last = p.results?.epochs.at(-1);
    if (!p.finished || p.results === null || last === undefined) continue;
    finals.set(run.id, { epochs: last.epoch, train: last.train, test: last.test });
    results.set(run.id, p.results);
  }
  if (finals.size === 0) fail("invalid_config", f.dir, "a sweep folder with at least one finished run", "none finished yet");
  const split = options.split ?? ([...finals.values()].some((r) => r.test !== undefined) ? "test" : "train");
  const metric = options.metric ?? "sse";
  const summary = summarizeRuns(plan, finals, { metric, split, level: options.level });
  const table = formatSummaryTable(summary);
  const groups: RunGroup[] = [];
  const used = new Set<string>();
  for (const c of summary.configurations) {
    const runs = plan.runs.filter((r) => r.configuration === c.configuration).map((r) => results.get(r.id)).filter((r): r is Results => r !== undefined);
    if (runs.length === 0 || c.value === null) continue;
    // legends have little room: the values alone, in the order of the paths named in the title
    const short = c.assignments.map((a) => (typeof a.value === "number" ? String(Number(a.value.toPrecision(4))) : typeof a.value === "string" ? path.basename(a.value).replace(/\.(csv|tsv|json)$/i, "") : JSON.stringify(a.value))).join(" · ") || "base";
    const label = used.has(short) ? `${short} (#${c.index})` : short;
    used.add(label);
    groups.push({ label, runs });
  }
  let svg: string | undefined;
  let plotSkipped: string | undefined;
  try {
    svg = await bandCurveSvg(groups, { metric, split, band: options.band ?? "range", title: `${plan.name}: ${metric} (${split}) across seeds${plan.paths.length > 0 ? ` — ${plan.paths.join(" · ")}` : ""}` });
  } catch (e) {
    // the summary does not need the optional plotting packages; only the chart does
    if (!(e instanceof EbbflowError && e.code === "unsupported" && (e.path === "vega" || e.path === "vega-lite"))) throw e;
    plotSkipped = e.message;
  }
  if (options.write === false) return { summary, table, svg, plotSkipped };
  const json = path.join(f.dir, "summary.json");
  await writeFileAtomic(json, JSON.stringify(summary, null, 1) + "\n");
  if (svg === undefined) return { summary, table, plotSkipped, files: { json } };
  const svgFile = path.join(f.dir, "plots", `${metric}-${split}.svg`);
  await ensureFolder(path.dirname(svgFile));
  await writeFileAtomic(svgFile, svg);
  return { summary, table, svg, files: { json, svg: svgFile } };
}
