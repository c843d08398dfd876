/**
 * Summaries of a sweep: for each configuration, the final metrics of its runs (one per seed) reduced to a
 * mean, a standard deviation and a Student-t confidence interval, as data and as a text table.
 * @module
 */
import { fail } from "../errors/index.js";
import type { SweepAssignment, SweepPlan } from "./expand.js";
import { summarizeSample, type SampleSummary } from "./stats.js";

/** The last epoch of a finished run, as read from its results file. @category Sweeps */
export interface RunFinal {
  /** Number of epochs run. */
  readonly epochs: number;
  /** Metrics on the training split in the last epoch (absent when not evaluated). */
  readonly train?: Readonly<Record<string, number | undefined>> | undefined;
  /** Metrics on the test split in the last epoch (absent without a test split). */
  readonly test?: Readonly<Record<string, number | undefined>> | undefined;
}

/** Summary of one configuration across its seeds. @category Sweeps */
export interface ConfigurationSummary {
  /** Configuration id. */
  readonly configuration: string;
  readonly index: number;
  readonly label: string;
  readonly assignments: readonly SweepAssignment[];
  /** Runs of this configuration in the sweep (one per seed). */
  readonly runs: number;
  /** Ids of the runs that have not finished (left out of the statistics). */
  readonly unfinished: readonly string[];
  /** The chosen metric's final values across finished seeds; null when no finished run reports it. */
  readonly value: SampleSummary | null;
  /** Every metric the finished runs report on the split, by name. */
  readonly metrics: Readonly<Record<string, SampleSummary>>;
  /** Epochs run, across finished seeds (differs between seeds with early stopping or a target). */
  readonly epochs: SampleSummary | null;
}

/** A whole sweep's summary. @category Sweeps */
export interface SweepSummary {
  readonly name: string;
  readonly metric: string;
  readonly split: "train" | "test";
  /** Confidence level of the intervals. */
  readonly level: number;
  readonly configurations: readonly ConfigurationSummary[];
}

/**
 * Summarises a sweep's finished runs per configuration: mean, sample standard deviation and Student-t
 * confidence interval across seeds of each final metric (Student 1908, Biometrika 6:1).
 * @param plan - The sweep's plan.
 * @param finals - The last epoch of each finished run, by run id (runs missing here count as unfinished).
 * @param options - `metric` (e.g. `accuracy`), `split` (`train` or `test`), `level` (default 0.95).
 * @returns The summary, configurations in sweep order.
 * @throws {@link EbbflowError} `invalid_parameter` (`metric`, `split`, `level`) when no finished run reports the metric on that split.
 * @category Sweeps
 */
export function summarizeRuns(plan: SweepPlan, finals: ReadonlyMap<string, RunFinal>, options: { metric: string; split: "train" | "test"; level?: number | undefined }): SweepSummary {
  const { metric, split } = options;
  const level = options.level ?? 0.95;
  if (typeof metric !== "string" || metric === "") fail("invalid_parameter", "metric", "a metric name such as sse or accuracy", metric);
  if (split !== "train" && split !== "test") fail("invalid_parameter", "split", '"train" or "test"', split);
  if (typeof level !== "number" || !(level > 0 && level < 1)) fail("invalid_parameter", "level", "a confidence level in the open interval (0, 1)", level);
  let reported = false;
  const seenMetrics = new Set<string>();
  const configurations = plan.configurations.map((c): ConfigurationSummary => {
    const runs = plan.runs.filter((r) => r.configuration === c.id);
    const unfinished: string[] = [];
    const byMetric = new Map<string, number[]>();
    const epochs: number[] = [];
    for (const r of runs) {
      const f = finals.get(r.id);
      if (f === undefined) {
        unfinished.push(r.id);
        continue;
      }
      epochs.push(f.epochs);
      for (const [name, v] of Object.entries(f[split] ?? {})) {
        if (typeof v !== "number" || !Number.isFinite(v)) continue;
        seenMetrics.add(name);
        const list = byMetric.get(name) ?? [];
        list.push(v);
        byMetric.set(name, list);
      }
    }
    // a record without a prototype: a metric named "constructor" or "__proto__" is a name like any other
    const metrics: Record<string, SampleSummary> = Object.create(null) as Record<string, SampleSummary>;
    for (const [name, values] of byMetric) metrics[name] = summarizeSample(values, level);
    const value = Object.prototype.hasOwnProperty.call(metrics, metric) ? (metrics[metric] ?? null) : null;
    if (value !== null) reported = true;
    return { configuration: c.id, index: c.index, label: c.label, assignments: c.assignments, runs: runs.length, unfinished, value, metrics, epochs: epochs.length > 0 ? summarizeSample(epochs, level) : null };
  });
  if (!reported && finals.size > 0) {
    const known = [...seenMetrics].sort().join(", ");
    fail("invalid_parameter", "metric", `a metric the finished runs report on the ${split} split (${known || "none"})`, metric);
  }
  return { name: plan.name, metric, split, level, configurations };
}

/** A number for a table: four significant digits, exponent form for very large or small magnitudes. */
function num(v: number | null): string {
  if (v === null) return "-";
  if (v === 0) return "0";
  const a = Math.abs(v);
  return a >= 1e5 || a < 1e-3 ? v.toExponential(3) : String(Number(v.toPrecision(4)));
}

/**
 * The summary as a text table: one line per configuration with finished/total runs, mean, standard
 * deviation and the confidence interval of the chosen metric.
 * @param summary - A summary from {@link summarizeRuns}.
 * @returns The table, lines ending in newlines.
 * @category Sweeps
 */
export function formatSummaryTable(summary: SweepSummary): string {
  const pct = Math.round(summary.level * 1000) / 10;
  const head = ["configuration", "runs", `${summary.metric} (${summary.split}) mean`, "sd", `${pct}% CI`, "epochs"];
  const rows = summary.configurations.map((c) => [
    c.label,
    `${c.runs - c.unfinished.length}/${c.runs}`,
    num(c.value?.mean ?? null),
    c.value === null ? "-" : num(c.value.sd),
    c.value === null || c.value.low === null ? "-" : `[${num(c.value.low)}, ${num(c.value.high)}]`,
    c.epochs === null ? "-" : num(c.epochs.mean),
  ]);
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] as string).length)));
  const line = (cells: readonly string[]) => cells.map((s, i) => (i === 0 ? s.padEnd(widths[i] as number) : s.padStart(widths[i] as number))).join("  ").trimEnd() + "\n";
  return line(head) + line(widths.map((w) => "-".repeat(w))) + rows.map(line).join("");
}
