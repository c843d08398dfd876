import { describe, it, expect } from "vitest";
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync, existsSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { readResults } from "../../src/node/index.js";
import { VERSION } from "../../src/cli/version.js";

const root = path.resolve(import.meta.dirname, "../..");
const bin = path.join(root, "dist", "cli", "main.js");
const run = (args: string[], cwd?: string) => {
  const r = spawnSync(process.execPath, [bin, ...args], { encoding: "utf8", cwd: cwd ?? root, env: { ...process.env, FORCE_COLOR: "0" } });
  return { code: r.status, out: r.stdout, err: r.stderr };
};

const experiment = {
  name: "strip",
  network: {
    seed: 3,
    layers: [
      { name: "sensors", size: 8, role: "input" },
      { name: "hidden", size: 4, role: "hidden" },
      { name: "texture", size: 2, role: "output" },
    ],
    connections: [
      { from: "sensors", to: "hidden", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
      { from: "hidden", to: "texture", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.5, maxSteps: 300, tolerance: 1e-6 },
  },
  rules: [{ rule: "generec", rate: 1 }, { rule: "eqprop", beta: 0.05, rate: 1, mode: "symmetric" }],
  training: { epochs: 8, batchSize: 2 },
  data: { source: "touch-strip" },
};

function workdir(): string {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-cli-"));
  writeFileSync(path.join(dir, "experiment.json"), JSON.stringify(experiment));
  return dir;
}

describe("the ebbflow command", () => {
  it("prints its version and help for every command", () => {
    expect(run(["--version"]).out.trim()).toBe(VERSION);
    for (const cmd of ["train", "check", "plot", "demo"]) {
      const r = run([cmd, "--help"]);
      expect(r.code).toBe(0);
      expect(r.out).toMatch(new RegExp(`Usage: ebbflow ${cmd}`));
    }
  });

  it("the version constant equals package.json's", () => {
    expect(VERSION).toBe((JSON.parse(readFileSync(path.join(root, "package.json"), "utf8")) as { version: string }).version);
  });

  it("train writes results (JSON Lines with the config and seed at the top), weights and a checkpoint", () => {
    const dir = workdir();
    const r = run(["train", "experiment.json", "--out", "out", "--json"], dir);
    expect(r.code, r.err).toBe(0);
    const summary = JSON.parse(r.out) as { epochs: number; stopped: string };
    expect(summary.epochs).toBe(8);
    const results = readResults(readFileSync(path.join(dir, "out", "results.jsonl"), "utf8"), "results.jsonl");
    expect(results.header.seed).toBe(3);
    expect((results.header.config as { rule: { rule: string } }).rule.rule).toBe("generec");
    expect(results.epochs).toHaveLength(8);
    expect(results.end?.stopped).toBe("max-epochs");
    expect(existsSync(path.join(dir, "out", "model.json"))).toBe(true);
    expect(existsSync(path.join(dir, "out", "checkpoint.json"))).toBe(true);
  });

  it("an interrupted run resumed with --resume ends with the same weights as an uninterrupted one", () => {
    const dir = workdir();
    expect(run(["train", "experiment.json", "--out", "whole", "--epochs", "8", "--json"], dir).code).toBe(0);
    expect(run(["train", "experiment.json", "--out", "part", "--epochs", "4", "--checkpoint-every", "2", "--json"], dir).code).toBe(0);
    // the epoch limit differs from the checkpoint's experiment: refused unless accepted (and then recorded)
    expect(run(["train", "experiment.json", "--out", "part", "--epochs", "8", "--resume", "--json"], dir).code).toBe(2);
    expect(run(["train", "experiment.json", "--out", "part", "--epochs", "8", "--resume", "--accept-changes", "--json"], dir).code).toBe(0);
    const weights = (f: string) => (JSON.parse(readFileSync(path.join(dir, f, "model.json"), "utf8")) as { parameters: unknown }).parameters;
    expect(weights("part")).toEqual(weights("whole"));
    const strip = (f: string) => readResults(readFileSync(path.join(dir, f, "results.jsonl"), "utf8"), f).epochs.map(({ seconds: _s, ...e }) => e);
    expect(strip("part")).toEqual(strip("whole"));
  });

  it("check prints the gradient-agreement table of each configured rule", () => {
    const dir = workdir();
    const r = run(["check", "experiment.json", "--examples", "4"], dir);
    expect(r.code, r.err).toBe(0);
    expect(r.out).toMatch(/generec \(basic\) vs recurrent gradient/);
    expect(r.out).toMatch(/eqprop \(symmetric\) vs recurrent gradient/);
    expect(r.out).toMatch(/sensors->hidden\s+\d\.\d{4}/);
  });

  it("plot writes SVG learning curves and a weight matrix", () => {
    const dir = workdir();
    expect(run(["train", "experiment.json", "--out", "out", "--json"], dir).code).toBe(0);
    const a = run(["plot", "out/results.jsonl", "--metric", "accuracy", "--out", "acc.svg"], dir);
    expect(a.code, a.err).toBe(0);
    expect(readFileSync(path.join(dir, "acc.svg"), "utf8")).toMatch(/^<svg/);
    const w = run(["plot", "--weights", "out/model.json", "--connection", "sensors->hidden", "--out", "w.svg"], dir);
    expect(w.code, w.err).toBe(0);
    expect(readFileSync(path.join(dir, "w.svg"), "utf8")).toMatch(/^<svg/);
  });

  it("bad arguments and files give one clear line and exit code 2, never a stack trace", () => {
    const dir = workdir();
    const cases = [
      ["train", "missing.json", "--data", "xor"],
      ["train", "experiment.json", "--data", "nonsense"],
      ["train", "experiment.json", "--epochs", "zero"],
      ["train", "experiment.json", "--rule", '{"rule":"eqprop","beta":0,"rate":1}'],
      ["check", "experiment.json", "--rule", "no-such-rule"],
      ["plot"],
      ["frobnicate"],
    ];
    for (const args of cases) {
      const r = run(args, dir);
      expect(r.code, args.join(" ")).toBe(2);
      expect(r.err, args.join(" ")).not.toMatch(/\n\s+at /);
      expect(r.err.trim().length).toBeGreaterThan(0);
    }
    const bad = run(["train", "experiment.json", "--rule", '{"rule":"eqprop","beta":0,"rate":1}'], dir);
    expect(bad.err).toMatch(/rule\.beta/);
    const dbg = run(["train", "missing.json", "--data", "xor", "--debug"], dir);
    expect(dbg.err).toMatch(/\n\s+at /);
  });

  it("numbers are read strictly, errors are JSON with --json, and a closed pipe ends the output quietly", () => {
    const dir = workdir();
    // the two of the report (more values: the cli-numbers kind of the fuzz suite)
    for (const [option, value] of [["--epochs", "0x3"], ["--test-fraction", "-0.5"]] as const) {
      const r = run(["train", "experiment.json", option, value, "--out", "o"], dir);
      expect(r.code, `${option} ${value}`).toBe(2);
      expect(r.err, `${option} ${value}`).toContain(option);
    }
    const usage = run(["train", "experiment.json", "--epochs", "0x3", "--json"], dir);
    expect(JSON.parse(usage.err) as unknown).toMatchObject({ error: { code: "usage" } });
    const typed = run(["train", "experiment.json", "--data", "nonsense", "--json"], dir);
    expect(typed.code).toBe(2);
    expect(JSON.parse(typed.err) as unknown).toMatchObject({ error: { code: "unknown_name", path: "--data" } });
    // the previous crash: `sweep list | head` with the reader gone (here: stdout closed after the first line)
    writeFileSync(path.join(dir, "s.sweep.json"), JSON.stringify({ base: { ...experiment, rules: [experiment.rules[0]] }, grid: { "rule.rate": Array.from({ length: 400 }, (_, i) => (i + 1) / 100) }, seeds: [1, 2, 3] }));
    const piped = spawnSync("bash", ["-c", `"${process.execPath}" "${bin}" sweep list s.sweep.json | head -1; echo "status \${PIPESTATUS[0]}"`], { cwd: dir, encoding: "utf8" });
    expect(piped.stderr).toBe("");
    expect(piped.stdout).toMatch(/status 0/);
  });

  it("an existing run folder is never overwritten silently", () => {
    const dir = workdir();
    expect(run(["train", "experiment.json", "--out", "o", "--epochs", "3", "--json"], dir).code).toBe(0);
    const again = run(["train", "experiment.json", "--out", "o", "--epochs", "2"], dir);
    expect(again.code).toBe(2);
    expect(again.err).toMatch(/--out: expected an empty or new folder/);
    expect(readResults(readFileSync(path.join(dir, "o", "results.jsonl"), "utf8"), "r").epochs).toHaveLength(3);
    expect(run(["train", "experiment.json", "--out", "o", "--epochs", "2", "--overwrite", "--json"], dir).code).toBe(0);
    expect(readResults(readFileSync(path.join(dir, "o", "results.jsonl"), "utf8"), "r").epochs).toHaveLength(2);
  });

  it("a bad model file reports every problem with its path", () => {
    const dir = workdir();
    writeFileSync(path.join(dir, "bad.json"), JSON.stringify({ network: { layers: [{ name: "a", size: 0, role: "input" }], connections: [{ from: "a", to: "b" }] } }));
    const r = run(["train", "bad.json", "--data", "xor", "--rule", "chl", "--rate", "1"], dir);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/network\.layers\[0\]\.size/);
  });

  it("demo runs and reports every rule (two seeds, --json)", () => {
    const dir = workdir();
    const r = run(["demo", "--seeds", "2", "--json", "--out", "demo"], dir);
    expect(r.code, r.err).toBe(0);
    const d = JSON.parse(r.out) as { noHidden: { bestCorrect: number; rule: string }[]; hidden: Record<string, { solved: boolean }[]>; agreement: { rule: string }[]; written: string[] };
    expect(d.noHidden.every((x) => x.bestCorrect <= 3)).toBe(true);
    // one display name per rule: the id, with variant or mode (docs/guide/rules.md), in every section
    expect(Object.keys(d.hidden)).toEqual(["generec (basic)", "chl", "eqprop (one-sided)", "calcium"]);
    expect(d.noHidden.map((x) => x.rule).filter((v, i, a) => a.indexOf(v) === i)).toEqual(Object.keys(d.hidden));
    expect(d.agreement.map((x) => x.rule)).toEqual([...Object.keys(d.hidden), "eqprop (symmetric)", "backprop"]);
    expect(d.written.map((w) => path.basename(w))).toEqual(["generec-basic-curves.svg", "chl-curves.svg", "eqprop-one-sided-curves.svg", "calcium-curves.svg"]);
  });
});

describe("ebbflow bench", () => {
  it("writes a report with the machine's fingerprint, and --compare shows two reports side by side", () => {
    const dir = workdir();
    const a = run(["bench", "--seconds", "0.05", "--batch", "2", "--workers", "1", "--workers", "2", "--no-peers", "--out", "a.json", "--json"], dir);
    expect(a.code, a.err).toBe(0);
    const report = JSON.parse(readFileSync(path.join(dir, "a.json"), "utf8")) as { machine: { cpu: string; cores: number; node: string }; figures: { implementation: string; workers: number; usPerExample: number }[] };
    expect(report.machine.node).toBe(process.version);
    expect(report.figures.filter((f) => f.implementation === "ebbflow-typescript").map((f) => f.workers)).toEqual([1, 2]);
    expect(report.figures.every((f) => f.usPerExample > 0)).toBe(true);
    writeFileSync(path.join(dir, "b.json"), readFileSync(path.join(dir, "a.json")));
    const c = run(["bench", "--compare", "a.json", "b.json"], dir);
    expect(c.code, c.err).toBe(0);
    expect(c.out).toMatch(/\| ebbflow-typescript \| batch 2 \| 1 worker \| [\d.]+ \| [\d.]+ \| 1\.00 \|/);
  });
});
