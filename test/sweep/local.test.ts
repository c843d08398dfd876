import { describe, it, expect, beforeAll } from "vitest";
import { spawn, spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, readdirSync, readFileSync, statSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { loadSweepFile, readRunProgress, runSweepLocally, summarizeSweepFolder, sweepStatus, type LocalSweepReport } from "../../src/node/sweep/index.js";
import type { SweepPlan } from "../../src/sweep/expand.js";
import { readResults } from "../../src/node/plot/results.js";
import { summarizeSample } from "../../src/sweep/stats.js";
import { stripExperiment } from "./fixtures.js";

// The worker threads and the command run the compiled code (Node 20 cannot run .ts workers): `npm test` builds first.
const root = path.resolve(import.meta.dirname, "../..");
const bin = path.join(root, "dist", "cli", "main.js");
const cli = (args: string[], cwd: string) => spawnSync(process.execPath, [bin, ...args], { encoding: "utf8", cwd, env: { ...process.env, FORCE_COLOR: "0" } });

/** A sweep folder with the experiment, the sweep file, and room for outputs. */
function workdir(epochs: number): string {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-sweep-"));
  writeFileSync(path.join(dir, "experiment.json"), JSON.stringify({ ...stripExperiment, training: { epochs, batchSize: 2 } }));
  writeFileSync(path.join(dir, "strip.sweep.json"), JSON.stringify({ base: "experiment.json", grid: { "rule.rate": [0.5, 1] }, seeds: [1, 2], checkpointEvery: 5 }));
  return dir;
}

/** Everything that must be bit-identical between two folders: each run's parameters and its per-epoch metrics. */
function fingerprint(dir: string, plan: SweepPlan): { id: string; parameters: unknown; epochs: unknown }[] {
  return plan.runs.map((r) => {
    const runDir = path.join(dir, "runs", r.id);
    const model = JSON.parse(readFileSync(path.join(runDir, "model.json"), "utf8")) as { parameters: unknown };
    const results = readResults(readFileSync(path.join(runDir, "results.jsonl"), "utf8"), "results.jsonl");
    expect(results.end?.stopped).toBe("max-epochs");
    return { id: r.id, parameters: model.parameters, epochs: results.epochs.map(({ seconds: _s, ...e }) => e) };
  });
}

describe("the local sweep runner", () => {
  let dir: string;
  let plan: SweepPlan;
  let reference: ReturnType<typeof fingerprint>;

  beforeAll(async () => {
    expect(existsSync(path.join(root, "dist", "node", "sweep", "worker.js")), "build first (npm run build): the worker threads run dist/").toBe(true);
    dir = workdir(100);
    plan = await loadSweepFile(path.join(dir, "strip.sweep.json"));
    // the reference: every run one after another in this process, uninterrupted
    const report = await runSweepLocally(plan, { out: path.join(dir, "main"), workers: 0 });
    expect(report.finished).toBe(4);
    reference = fingerprint(path.join(dir, "main"), plan);
  });

  it("gives the same bits on worker threads as in the main process", async () => {
    const seen: number[] = [];
    const report = await runSweepLocally(plan, { out: path.join(dir, "threads"), workers: 2, onRunDone: (o) => seen.push(o.index) });
    expect(report.finished).toBe(4);
    expect(seen.sort()).toEqual([0, 1, 2, 3]);
    expect(fingerprint(path.join(dir, "threads"), plan)).toEqual(reference);
    // the four runs really differ from one another (rates and seeds matter)
    expect(new Set(reference.map((r) => JSON.stringify(r.parameters))).size).toBe(4);
  });

  it("loses nothing when killed: the same command skips finished runs, resumes the others from their checkpoints, and ends with identical results", async () => {
    const out = path.join(dir, "killed");
    const child = spawn(process.execPath, [bin, "sweep", "run", "strip.sweep.json", "--workers", "2", "--out", out, "--json"], { cwd: dir, stdio: "ignore" });
    const exited = new Promise<number | null>((resolve) => child.on("exit", (code) => resolve(code)));
    // SIGKILL (no chance to clean up) as soon as the first checkpoint of any run is on disk
    const runsDir = path.join(out, "runs");
    const t0 = Date.now();
    for (;;) {
      const checkpoint = existsSync(runsDir) && readdirSync(runsDir).some((id) => existsSync(path.join(runsDir, id, "checkpoint.json")));
      if (checkpoint) break;
      // a guard against a hang, not a timing: under a loaded 2-core machine the CLI and its workers boot slowly
      expect(Date.now() - t0, "no checkpoint within 60 s").toBeLessThan(60_000);
      await new Promise((r) => setTimeout(r, 2));
    }
    child.kill("SIGKILL");
    expect(await exited).toBe(null);

    const before = await Promise.all(plan.runs.map((r) => readRunProgress(out, r)));
    expect(before.some((p) => !p.finished), "the kill should land while runs are going").toBe(true);
    const status = await sweepStatus(out);
    expect(status.counts.finished + status.counts.interrupted + status.counts["not-started"]).toBe(4);
    expect(status.counts.interrupted).toBeGreaterThan(0);

    const again = cli(["sweep", "run", "strip.sweep.json", "--workers", "2", "--out", out, "--json"], dir);
    expect(again.status, again.stderr).toBe(0);
    const report = JSON.parse(again.stdout) as LocalSweepReport;
    for (const o of report.runs) {
      const p = before[o.index]!;
      if (p.finished) expect(o.status).toBe("skipped");
      else {
        expect(o.status).toBe("finished");
        expect(o.resumedFrom, `run #${o.index} resumes from its checkpoint`).toBe(p.checkpointEpoch);
      }
    }
    expect(report.runs.some((o) => o.resumedFrom > 0)).toBe(true);
    expect(fingerprint(out, plan)).toEqual(reference);
  }, 150_000);

  it("running a finished sweep again does nothing", () => {
    const out = path.join(dir, "threads");
    const model = path.join(out, "runs", plan.runs[0]!.id, "model.json");
    const stamp = statSync(model).mtimeMs;
    const r = cli(["sweep", "run", "strip.sweep.json", "--workers", "2", "--out", out, "--json"], dir);
    expect(r.status, r.stderr).toBe(0);
    const report = JSON.parse(r.stdout) as LocalSweepReport;
    expect([report.skipped, report.finished, report.failed]).toEqual([4, 0, 0]);
    expect(statSync(model).mtimeMs).toBe(stamp);
  });

  it("summarises the folder: the JSON holds each configuration's mean and interval of the final values, and the SVG its curves", async () => {
    const out = path.join(dir, "main");
    const r = cli(["sweep", "summarize", out, "--metric", "sse", "--split", "train"], dir);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/rule\.rate=0\.5\s+2\/2/);
    const summary = JSON.parse(readFileSync(path.join(out, "summary.json"), "utf8")) as { configurations: { label: string; value: { mean: number; halfWidth: number } }[] };
    for (const [i, c] of summary.configurations.entries()) {
      // recomputed here from the results files of the configuration's two seeds
      const finals = plan.runs.filter((x) => x.label === c.label).map((x) => readResults(readFileSync(path.join(out, "runs", x.id, "results.jsonl"), "utf8"), "r").epochs.at(-1)!.train!.sse!);
      expect(finals).toHaveLength(2);
      expect(c.value.mean, `configuration ${i}`).toBe(summarizeSample(finals).mean);
      expect(c.value.halfWidth).toBeCloseTo(12.7062 * (Math.abs(finals[0]! - finals[1]!) / Math.SQRT2 / Math.SQRT2), 3);
    }
    const svg = readFileSync(path.join(out, "plots", "sse-train.svg"), "utf8");
    expect(svg.startsWith("<svg")).toBe(true);
    expect(svg).toMatch(/rule\.rate/);
    const direct = await summarizeSweepFolder(out, { metric: "accuracy", split: "train", write: false });
    expect(direct.files).toBeUndefined();
    expect(direct.summary.configurations).toHaveLength(2);
  });

  it("reports a bad sweep file in one line with the path of the problem, exit code 2", () => {
    const d = workdir(3);
    writeFileSync(path.join(d, "bad.json"), JSON.stringify({ base: "experiment.json", grid: { "rule.rte": [1] }, seeds: [1] }));
    const r = cli(["sweep", "run", "bad.json", "--out", "o"], d);
    expect(r.status).toBe(2);
    expect(r.stderr.trim().split("\n")).toHaveLength(1);
    expect(r.stderr).toMatch(/bad\.json: grid\["rule\.rte"\]: expected a config path of the base experiment/);
    const s = cli(["sweep", "status", "nowhere"], d);
    expect(s.status).toBe(2);
    expect(s.stderr).toMatch(/runs\.json/);
    const l = cli(["sweep", "list", "strip.sweep.json"], d);
    expect(l.status).toBe(0);
    expect(l.stdout).toMatch(/2 configurations × 2 seeds = 4 runs/);
  });
});
