import { describe, it, expect } from "vitest";
import { expandSweep } from "../../src/sweep/expand.js";
import { formatSummaryTable, summarizeRuns, type RunFinal } from "../../src/sweep/summary.js";
import fc from "fast-check";
import { summarizeSample } from "../../src/sweep/stats.js";
import { expectClose } from "../helpers/tolerance.js";
import { check } from "../helpers/property.js";
import { stripExperiment as base } from "./fixtures.js";

const plan = expandSweep({ base, grid: { "rule.rate": [0.5, 1] }, seeds: [1, 2, 3] }, base);

/** Final records: accuracy 0.5, 0.75, 1 for rate 0.5; 0.25, 0.25, 1 for rate 1 (one seed of rate 1 unfinished in the second case). */
function finals(skipLast = false): Map<string, RunFinal> {
  const acc = [0.5, 0.75, 1, 0.25, 0.25, 1];
  const sse = [1, 2, 3, 4, 6, 8];
  const m = new Map<string, RunFinal>();
  plan.runs.forEach((r, i) => {
    if (skipLast && i === 5) return;
    m.set(r.id, { epochs: 10 + i, train: { accuracy: acc[i]!, sse: sse[i]! } });
  });
  return m;
}

describe("summaries across seeds", () => {
  it("gives each configuration the hand-computed mean, sd and 95% interval of its final metric", () => {
    const s = summarizeRuns(plan, finals(), { metric: "accuracy", split: "train" });
    const [a, b] = s.configurations;
    // rate 0.5: values 0.5, 0.75, 1 — mean 0.75; deviations ±0.25, 0: sd = √(0.125/2) = 0.25;
    // half-width = t(0.975, 2) · 0.25/√3 = 4.30265 · 0.144338 = 0.621034 (t(0.975, 2) = 4.303 in t tables)
    expect(a!.label).toBe("rule.rate=0.5");
    expectClose(a!.value!.mean, 0.75, 1e-15, "mean");
    expectClose(a!.value!.sd, 0.25, 1e-15, "sd");
    expectClose(a!.value!.halfWidth!, 0.621034, 1e-6, "half-width");
    expectClose(a!.value!.low!, 0.75 - 0.621034, 1e-6, "low");
    // rate 1: 0.25, 0.25, 1 — mean 0.5; squared deviations 0.0625 + 0.0625 + 0.25 = 0.375, sd = √0.1875 = 0.433013
    expectClose(b!.value!.mean, 0.5, 1e-15, "mean");
    expectClose(b!.value!.sd, Math.sqrt(0.1875), 1e-15, "sd");
    expectClose(b!.value!.halfWidth!, 4.302653 * Math.sqrt(0.1875 / 3), 1e-6, "half-width");
    // every metric of the split is summarised, and the epochs
    expectClose(b!.metrics.sse!.mean, 6, 1e-15, "sse mean");
    expectClose(a!.epochs!.mean, 11, 1e-15, "epochs mean");
    expect(a!.runs).toBe(3);
  });

  it("leaves unfinished runs out and lists them", () => {
    const s = summarizeRuns(plan, finals(true), { metric: "sse", split: "train" });
    const b = s.configurations[1]!;
    expect(b.unfinished).toEqual([plan.runs[5]!.id]);
    // 4 and 6: mean 5, sd √2, half-width t(0.975, 1) · √2/√2 = 12.7062
    expectClose(b.value!.mean, 5, 1e-15, "mean");
    expectClose(b.value!.halfWidth!, 12.7062, 1e-4, "half-width");
  });

  it("summarises each configuration exactly as the sample summary of its own seeds' values", () => {
    check(
      fc.property(fc.array(fc.double({ min: 0, max: 100, noNaN: true }), { minLength: 6, maxLength: 6 }), fc.array(fc.boolean(), { minLength: 6, maxLength: 6 }), (values, present) => {
        const m = new Map<string, RunFinal>();
        plan.runs.forEach((r, i) => {
          if (present[i]) m.set(r.id, { epochs: 5, train: { sse: values[i]! } });
        });
        if (m.size === 0) return;
        const s = summarizeRuns(plan, m, { metric: "sse", split: "train" });
        s.configurations.forEach((c, ci) => {
          const mine = [0, 1, 2].map((k) => ci * 3 + k).filter((i) => present[i]).map((i) => values[i]!);
          expect(c.unfinished).toHaveLength(3 - mine.length);
          expect(c.value).toEqual(mine.length > 0 ? summarizeSample(mine) : null);
        });
      }),
    );
  });

  it("prints a table with one line per configuration", () => {
    const table = formatSummaryTable(summarizeRuns(plan, finals(true), { metric: "accuracy", split: "train" }));
    const lines = table.trimEnd().split("\n");
    expect(lines).toHaveLength(4);
    expect(lines[0]).toMatch(/configuration\s+runs\s+accuracy \(train\) mean\s+sd\s+95% CI\s+epochs/);
    expect(lines[2]).toMatch(/^rule\.rate=0\.5\s+3\/3\s+0\.75\s+0\.25\s+\[0\.129, 1\.371\]\s+11$/);
    expect(lines[3]).toMatch(/^rule\.rate=1\s+2\/3\s+0\.25\s+0\s+\[0\.25, 0\.25\]/);
  });

  it("rejects a metric that no finished run reports, naming the ones there are", () => {
    expect(() => summarizeRuns(plan, finals(), { metric: "accuracy", split: "test" })).toThrow(expect.objectContaining({ path: "metric" }));
    expect(() => summarizeRuns(plan, finals(), { metric: "speed", split: "train" })).toThrow(/accuracy, sse/);
    expect(() => summarizeRuns(plan, finals(), { metric: "sse", split: "train", level: 1 })).toThrow(expect.objectContaining({ path: "level" }));
  });
});
