/**
 * Fault experiments as tests, on the real `ebbflow` command (compiled, in child processes): a process killed
 * with SIGKILL during training (and its writes) resumes to the same bits; a full disk (a file-size limit set
 * with `ulimit -f` in a child shell; Node ignores SIGXFSZ, so writes fail with EFBIG) is a typed error that
 * loses nothing; two writers of one run folder, and two runners of one sweep, never mix or lose runs.
 */
import { describe, it, expect } from "vitest";
import { spawn, spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, readFileSync, readdirSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { loadCheckpoint, readResults } from "../../src/node/index.js";

const root = path.resolve(import.meta.dirname, "../..");
const bin = path.join(root, "dist", "cli", "main.js");

const experiment = {
  network: {
    seed: 6,
    layers: [
      { name: "in", size: 2, role: "input" },
      { name: "hid", size: 4, role: "hidden" },
      { name: "out", size: 1, role: "output" },
    ],
    connections: [
      { from: "in", to: "hid", feedback: { kind: "tied", gain: 1 } },
      { from: "hid", to: "out", feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.5, maxSteps: 80, tolerance: 1e-6 },
  },
  rules: [{ rule: "eqprop", beta: 0.2, rate: 0.3, mode: "random-sign" }],
  training: { epochs: 60, batchSize: 2 },
  data: { source: "xor" },
};

function workdir(): string {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-faults-"));
  writeFileSync(path.join(dir, "experiment.json"), JSON.stringify(experiment));
  return dir;
}

const run = (args: string[], cwd: string) => spawnSync(process.execPath, [bin, ...args], { cwd, encoding: "utf8" });
const parameters = (dir: string) => (JSON.parse(readFileSync(path.join(dir, "model.json"), "utf8")) as { parameters: unknown }).parameters;
const epochs = (dir: string) => readResults(readFileSync(path.join(dir, "results.jsonl"), "utf8"), "results.jsonl").epochs.map(({ seconds: _s, ...e }) => e);

/** Starts a training run and kills it with SIGKILL after `ms` milliseconds (or lets it end first). */
function trainAndKill(cwd: string, args: string[], ms: number): Promise<void> {
  return new Promise((resolve) => {
    const p = spawn(process.execPath, [bin, ...args], { cwd, stdio: "ignore" });
    const t = setTimeout(() => p.kill("SIGKILL"), ms);
    p.on("exit", () => {
      clearTimeout(t);
      resolve();
    });
  });
}

describe("fault experiments", () => {
  it("SIGKILL at random moments during training: every checkpoint loads, and resuming ends bit-identical to an uninterrupted run", async () => {
    const dir = workdir();
    expect(run(["train", "experiment.json", "--out", "whole", "--checkpoint-every", "1", "--json"], dir).status).toBe(0);
    // kill times spread over start-up and training (seeded by the test's own list, so the run is repeatable in spirit)
    const kills = [450, 650, 850, 1100];
    const args = ["train", "experiment.json", "--out", "part", "--checkpoint-every", "1", "--json"];
    await trainAndKill(dir, args, kills[0]!);
    for (const ms of kills.slice(1)) {
      if (existsSync(path.join(dir, "part", "checkpoint.json"))) await loadCheckpoint(path.join(dir, "part", "checkpoint.json"));
      await trainAndKill(dir, [...args, "--resume"], ms);
    }
    const last = run([...args, "--resume"], dir);
    expect(last.stderr).toBe("");
    expect(last.status).toBe(0);
    expect(parameters(path.join(dir, "part"))).toEqual(parameters(path.join(dir, "whole")));
    expect(epochs(path.join(dir, "part"))).toEqual(epochs(path.join(dir, "whole")));
    expect(readdirSync(path.join(dir, "part")).sort()).toEqual(["checkpoint.json", "model.json", "results.jsonl"]);
  }, 120_000);

  it("a full disk (file-size limit) is a typed error that loses nothing; resuming afterwards completes the same run", () => {
    const dir = workdir();
    expect(run(["train", "experiment.json", "--out", "whole", "--json"], dir).status).toBe(0);
    // 8 blocks of 1024 bytes: the results file outgrows it part-way through training
    const limited = spawnSync("bash", ["-c", `ulimit -f 8 && exec "${process.execPath}" "${bin}" train experiment.json --out part --checkpoint-every 5 --json`], { cwd: dir, encoding: "utf8" });
    expect(limited.status).toBe(2);
    const error = JSON.parse(limited.stderr.trim()) as { error: { code: string; received: string } };
    expect(error.error.code).toBe("io_error");
    expect(error.error.received).toMatch(/EFBIG/);
    expect(readdirSync(path.join(dir, "part")).filter((n) => n.endsWith(".tmp") || n === ".lock")).toEqual([]);
    const resumed = run(["train", "experiment.json", "--out", "part", "--checkpoint-every", "5", "--resume", "--json"], dir);
    expect(resumed.status).toBe(0);
    expect(parameters(path.join(dir, "part"))).toEqual(parameters(path.join(dir, "whole")));
    expect(epochs(path.join(dir, "part"))).toEqual(epochs(path.join(dir, "whole")));
  }, 60_000);

  it("two writers of one run folder: one runs, the other is refused; the folder holds one complete run", async () => {
    const dir = workdir();
    const start = () =>
      new Promise<{ code: number | null; err: string }>((resolve) => {
        const p = spawn(process.execPath, [bin, "train", "experiment.json", "--out", "shared", "--epochs", "40", "--json"], { cwd: dir });
        let err = "";
        p.stderr.on("data", (d: Buffer) => (err += d.toString()));
        p.on("exit", (code) => resolve({ code, err }));
      });
    const [a, b] = await Promise.all([start(), start()]);
    expect([a.code, b.code].sort()).toEqual([0, 2]);
    const refused = a.code === 2 ? a : b;
    expect(refused.err).toMatch(/locked by process|empty or new folder|no other process is writing/);
    expect(epochs(path.join(dir, "shared"))).toHaveLength(40);
  }, 60_000);

  it("two runners of one sweep share its runs: no run fails, is lost or is written by both", async () => {
    const dir = workdir();
    const sweep = { name: "pair", base: "experiment.json", grid: { "rule.rate": [0.2, 0.3, 0.4] }, seeds: [1, 2], checkpointEvery: 5 };
    writeFileSync(path.join(dir, "pair.sweep.json"), JSON.stringify({ ...sweep, base: { ...experiment, training: { epochs: 30, batchSize: 2 } } }));
    const start = () =>
      new Promise<{ code: number | null; out: string }>((resolve) => {
        const p = spawn(process.execPath, [bin, "sweep", "run", "pair.sweep.json", "--out", "sw", "--workers", "0", "--json"], { cwd: dir });
        let out = "";
        p.stdout.on("data", (d: Buffer) => (out += d.toString()));
        p.on("exit", (code) => resolve({ code, out }));
      });
    const [a, b] = await Promise.all([start(), start()]);
    expect([a.code, b.code]).toEqual([0, 0]);
    const reports = [a, b].map((r) => JSON.parse(r.out) as { finished: number; skipped: number; busy: number; failed: number });
    expect(reports.every((r) => r.failed === 0)).toBe(true);
    // every run was finished by exactly one of them (the other found it finished or busy)
    expect(reports[0]!.finished + reports[1]!.finished).toBe(6);
    const runs = readdirSync(path.join(dir, "sw", "runs"));
    expect(runs).toHaveLength(6);
    for (const id of runs) {
      expect(readdirSync(path.join(dir, "sw", "runs", id)).sort()).toEqual(["checkpoint.json", "model.json", "results.jsonl"]);
      expect(epochs(path.join(dir, "sw", "runs", id))).toHaveLength(30);
    }
  }, 120_000);
});
