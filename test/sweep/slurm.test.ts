import { describe, it, expect } from "vitest";
import { spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { executeRun, loadSweepFile, readSubmissions, readSweepPlan, type SweepStatusReport, type SlurmSubmission } from "../../src/node/sweep/index.js";
import { readResults } from "../../src/node/plot/results.js";
import { datasetToJson } from "../../src/train/data/index.js";
import { touchStripDataset } from "../../src/demo/touchStrip.js";
import { studentTQuantile } from "../../src/sweep/stats.js";
import { stripExperiment } from "./fixtures.js";

// These tests drive a real Slurm cluster (scripts/slurm/up.sh brings up a single-node one). Without one they are
// skipped, and say why, unless EBBFLOW_REQUIRE_SLURM=1 (set by .ci/run): then they fail, so CI cannot skip them.
function detectSlurm(): { ok: boolean; reason: string } {
  const version = spawnSync("sbatch", ["--version"], { encoding: "utf8" });
  if (version.error !== undefined) return { ok: false, reason: "no sbatch on PATH" };
  if (version.status !== 0) return { ok: false, reason: `sbatch --version failed (${(version.stdout + version.stderr).trim().split("\n")[0]}; is SLURM_CONF set?)` };
  const ping = spawnSync("scontrol", ["ping"], { encoding: "utf8" });
  if (ping.status !== 0 || !/\bUP\b/.test(ping.stdout)) return { ok: false, reason: `no running Slurm controller (scontrol ping: ${(ping.stdout + ping.stderr).trim() || "no answer"}; is SLURM_CONF set?)` };
  return { ok: true, reason: "" };
}
const slurm = detectSlurm();
const required = process.env.EBBFLOW_REQUIRE_SLURM === "1";
if (!slurm.ok && !required) console.warn(`skipping the Slurm sweep tests: ${slurm.reason} (bring a cluster up with scripts/slurm/up.sh)`);

const root = path.resolve(import.meta.dirname, "../..");
const bin = path.join(root, "dist", "cli", "main.js");
const cli = (args: string[], cwd: string) => spawnSync(process.execPath, [bin, ...args], { encoding: "utf8", cwd, env: { ...process.env, FORCE_COLOR: "0" } });

/** The sweep: 3 data sources × 3 seeds = 9 runs; the third source is a file that does not exist yet, so its 3 runs fail. */
function workdir(): string {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-slurm-"));
  writeFileSync(path.join(dir, "experiment.json"), JSON.stringify({ ...stripExperiment, training: { epochs: 8, batchSize: 2 } }));
  writeFileSync(path.join(dir, "strips-soft.json"), datasetToJson(touchStripDataset({ low: 0.2, high: 0.8 })));
  const sweep = { name: "strip-sources", base: "experiment.json", grid: { "data.source": ["touch-strip", "strips-soft.json", "strips-late.json"] }, seeds: [1, 2, 3], checkpointEvery: 4 };
  writeFileSync(path.join(dir, "strip.sweep.json"), JSON.stringify(sweep));
  return dir;
}

function modelAndEpochs(runDir: string): { parameters: unknown; epochs: unknown } {
  const model = JSON.parse(readFileSync(path.join(runDir, "model.json"), "utf8")) as { parameters: unknown };
  const results = readResults(readFileSync(path.join(runDir, "results.jsonl"), "utf8"), runDir);
  return { parameters: model.parameters, epochs: results.epochs.map(({ seconds: _s, ...e }) => e) };
}

describe.skipIf(!slurm.ok && !required)("sweeps on a Slurm cluster (one job array, status, resubmission of failed runs, summary)", () => {
  const dir = workdir();
  const out = path.join(dir, "out");

  it("submits the sweep as ONE job array; the runs whose data file is missing fail and status lists them with exit code and log", () => {
    expect(slurm.ok, `Slurm is required here (EBBFLOW_REQUIRE_SLURM=1) but ${slurm.reason}`).toBe(true);
    const r = cli(["sweep", "run", "strip.sweep.json", "--slurm", "--out", out, "--throttle", "4", "--time", "00:05:00", "--wait", "--json"], dir);
    expect(r.status, r.stderr).toBe(0);
    const { submission, status } = JSON.parse(r.stdout) as { submission: SlurmSubmission; status: SweepStatusReport };
    expect(submission.array).toBe("0-8%4");
    expect(submission.indices).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8]);
    const script = readFileSync(path.join(out, "slurm", "task.sh"), "utf8");
    expect(script).toContain(`'${process.execPath}' '${bin}' sweep task '${out}' --index "$SLURM_ARRAY_TASK_ID"`);
    expect(script).toMatch(/#SBATCH --time=00:05:00/);
    expect(script).toContain(`#SBATCH --error=${path.join(out, "logs", "%A_%a.err")}`);

    expect(status.counts).toEqual({ finished: 6, running: 0, pending: 0, failed: 3, interrupted: 0, "not-started": 0 });
    const failed = status.runs.filter((x) => x.state === "failed");
    expect(failed.map((x) => x.index)).toEqual([6, 7, 8]);
    for (const f of failed) {
      expect(f.schedulerState).toBe("FAILED");
      expect(f.exitCode).toBe("1:0");
      expect(f.task).toBe(`${submission.job}_${f.index}`);
      expect(f.log).toBe(path.join(out, "logs", `${submission.job}_${f.index}.err`));
      expect(readFileSync(f.log!, "utf8")).toMatch(/strips-late\.json: expected a readable data file/);
      expect(f.error).toMatch(/strips-late\.json/);
    }
    for (const ok of status.runs.filter((x) => x.state === "finished")) expect([ok.schedulerState, ok.exitCode]).toEqual(["COMPLETED", "0:0"]);

    const text = cli(["sweep", "status", out], dir);
    expect(text.status, text.stderr).toBe(0);
    expect(text.stdout).toMatch(/9 runs — 6 finished, 0 running, 0 pending, 3 failed/);
    expect(text.stdout).toMatch(new RegExp(`#6 \\w+ data\\.source=strips-late\\.json seed 1 task ${submission.job}_6 FAILED exit 1:0`));
    expect(text.stdout).toContain(`log: ${path.join(out, "logs", `${submission.job}_6.err`)}`);
  });

  it("resubmits the failed runs alone once the data file is there, and the sweep completes", async () => {
    writeFileSync(path.join(dir, "strips-late.json"), datasetToJson(touchStripDataset({ low: 0.3, high: 0.7 })));
    const r = cli(["sweep", "resubmit", out, "--failed", "--wait", "--json"], dir);
    expect(r.status, r.stderr).toBe(0);
    const { submission, status } = JSON.parse(r.stdout) as { submission: SlurmSubmission; status: SweepStatusReport };
    expect(submission.array).toBe("6-8");
    expect(status.counts.finished).toBe(9);
    expect(status.runs.filter((x) => x.index >= 6).map((x) => x.task)).toEqual([6, 7, 8].map((i) => `${submission.job}_${i}`));
    const subs = await readSubmissions(out);
    expect(subs.map((s) => s.array)).toEqual(["0-8%4", "6-8"]);
    const none = cli(["sweep", "resubmit", out, "--failed"], dir);
    expect(none.status).toBe(0);
    expect(none.stdout).toMatch(/nothing to resubmit/);
    // submitting the whole sweep again finds nothing to do
    const again = cli(["sweep", "run", "strip.sweep.json", "--slurm", "--out", out], dir);
    expect(again.stdout).toMatch(/all 9 runs have finished/);
  });

  it("a run gives the same bits as a Slurm task as it does in this process", async () => {
    const plan = await loadSweepFile(path.join(dir, "strip.sweep.json"));
    expect((await readSweepPlan(out)).runs.map((x) => x.id)).toEqual(plan.runs.map((x) => x.id));
    const local = path.join(dir, "local");
    for (const index of [3, 7]) {
      const run = plan.runs[index]!;
      const runReport = await executeRun({ dir: local, run, baseDir: dir, checkpointEvery: 4 });
      expect(runReport.status).toBe("finished");
      expect(modelAndEpochs(path.join(local, "runs", run.id))).toEqual(modelAndEpochs(path.join(out, "runs", run.id)));
    }
  });

  it("summarises the sweep: mean and Student-t interval across the three seeds of each data source, and band curves", () => {
    const r = cli(["sweep", "summarize", out, "--metric", "sse", "--json"], dir);
    expect(r.status, r.stderr).toBe(0);
    const s = JSON.parse(r.stdout) as { split: string; configurations: { label: string; value: { n: number; mean: number; sd: number; halfWidth: number } }[]; files: { svg: string } };
    expect(s.split).toBe("train");
    expect(s.configurations.map((c) => c.label)).toEqual(["data.source=touch-strip", "data.source=strips-soft.json", "data.source=strips-late.json"]);
    const plan = JSON.parse(readFileSync(path.join(out, "runs.json"), "utf8")) as { runs: { id: string; label: string }[] };
    for (const c of s.configurations) {
      const finals = plan.runs.filter((x) => x.label === c.label).map((x) => readResults(readFileSync(path.join(out, "runs", x.id, "results.jsonl"), "utf8"), x.id).epochs.at(-1)!.train!.sse!);
      const mean = (finals[0]! + finals[1]! + finals[2]!) / 3;
      const sd = Math.sqrt(finals.reduce((a, v) => a + (v - mean) ** 2, 0) / 2);
      expect(c.value.n).toBe(3);
      expect(c.value.mean).toBeCloseTo(mean, 12);
      expect(c.value.sd).toBeCloseTo(sd, 12);
      // t(0.975, 2) = 4.303 (t table)
      expect(c.value.halfWidth).toBeCloseTo(studentTQuantile(0.975, 2) * (sd / Math.sqrt(3)), 12);
      expect(studentTQuantile(0.975, 2)).toBeCloseTo(4.303, 3);
    }
    expect(existsSync(s.files.svg)).toBe(true);
    expect(readFileSync(s.files.svg, "utf8")).toMatch(/strips-late/);
  });
});
