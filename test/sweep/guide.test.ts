import { describe, it, expect } from "vitest";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { expandSweep } from "../../src/sweep/expand.js";
import { loadSweepFile, runSweepLocally, summarizeSweepFolder } from "../../src/node/sweep/index.js";

// docs/guide/sweeps.md's worked example, run as written: its files expand as the text says and its summary table is reproduced
const root = path.resolve(import.meta.dirname, "../..");
const guide = readFileSync(path.join(root, "docs", "guide", "sweeps.md"), "utf8");
const blocks = (lang: string) => [...guide.matchAll(new RegExp("```" + lang + "\\n([\\s\\S]*?)```", "g"))].map((m) => m[1]!);
const [experiment, sweep, rules, random] = blocks("json").map((b) => JSON.parse(b) as Record<string, unknown>);

describe("the sweeps guide's worked example", () => {
  it("its sweep files expand to the runs the guide lists (labels and ids)", () => {
    const plan = expandSweep(sweep, experiment);
    expect(plan.runs).toHaveLength(12);
    const listed = [...guide.matchAll(/^ {2}#(\d+) ([0-9a-f]{16}) (.+) seed (\d+)$/gm)].filter((m) => !m[3]!.startsWith("data.source"));
    expect(listed.length).toBeGreaterThanOrEqual(3);
    for (const [, index, id, label, seed] of listed) {
      const run = plan.runs[Number(index)]!;
      expect([run.label, String(run.seed)]).toEqual([label, seed]);
      expect(run.id, "run ids changed (the resolved config changed): update the ids in docs/guide/sweeps.md").toBe(id);
    }
    expect(expandSweep(rules, experiment).runs.map((r) => r.config.rule.rule)).toEqual([...Array(5).fill("generec"), ...Array(5).fill("eqprop")]);
    const drawn = expandSweep(random, experiment);
    expect(drawn.configurations.length + drawn.duplicates).toBe(8);
    expect(drawn.runs).toHaveLength(2 * drawn.configurations.length);
  });

  it("running it reproduces the summary table the guide shows", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-guide-"));
    writeFileSync(path.join(dir, "experiment.json"), JSON.stringify(experiment));
    writeFileSync(path.join(dir, "strip.sweep.json"), JSON.stringify(sweep));
    const plan = await loadSweepFile(path.join(dir, "strip.sweep.json"));
    const report = await runSweepLocally(plan, { out: path.join(dir, "sweeps", "strip-rates"), workers: 2 });
    expect(report.finished).toBe(12);
    const { table } = await summarizeSweepFolder(path.join(dir, "sweeps", "strip-rates"), { metric: "accuracy" });
    const shown = blocks("text").find((b) => b.startsWith("configuration"))!;
    expect(shown.split("\n").slice(0, 6).join("\n")).toBe(table.trimEnd());
  });
});
