import { describe, it, expect } from "vitest";
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { resolveData, readIndexFile, readResults } from "../../src/node/index.js";
import { EbbflowError } from "../../src/index.js";

const root = path.resolve(import.meta.dirname, "../..");
const bin = path.join(root, "dist", "cli", "main.js");

// a scenario of our own: two light sensors, the kind of surface (dull or shiny), and which part each row belongs to
const csv = ["left,right,kind,set", "0.1,0.2,dull,train", "0.9,0.8,shiny,train", "0.2,0.1,dull,test", "0.8,0.9,shiny,train", "0.15,0.25,dull,train", "0.85,0.7,shiny,test", "0.3,0.2,dull,train", "0.7,0.95,shiny,train"].join("\n") + "\n";

function folder(): string {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-split-"));
  writeFileSync(path.join(dir, "surfaces.csv"), csv);
  // the same rows without the set column, for index files
  writeFileSync(path.join(dir, "plain.csv"), csv.split("\n").map((l) => l.split(",").slice(0, 3).join(",")).join("\n"));
  writeFileSync(path.join(dir, "train.idx"), "0 1 3\n4 6 7\n");
  writeFileSync(path.join(dir, "test.idx"), "[2, 5]");
  return dir;
}
const load = { targetColumns: ["kind"], oneHot: true, testFraction: 0, seed: 1 } as const;

/** The surfaces experiment: sensors → hidden → kind with tied feedback, GeneRec; network extras, training and data given. */
function surfacesExperiment(seed: number, network: Record<string, unknown>, training: Record<string, unknown>, data: Record<string, unknown>): Record<string, unknown> {
  return {
    name: "surfaces",
    network: {
      seed,
      layers: [
        { name: "sensors", size: 2, role: "input" },
        { name: "hidden", size: 3, role: "hidden" },
        { name: "kind", size: 2, role: "output" },
      ],
      connections: [
        { from: "sensors", to: "hidden", feedback: { kind: "tied", gain: 1 } },
        { from: "hidden", to: "kind", feedback: { kind: "tied", gain: 1 } },
      ],
      ...network,
    },
    rules: [{ rule: "generec", rate: 0.5 }],
    training,
    data,
  };
}

describe("fixed train/test splits", () => {
  it("by row counts: the first rows train and the last rows test, as the index files 0..k and the tail would", async () => {
    const dir = folder();
    const counts = await resolveData(path.join(dir, "plain.csv"), { ...load, split: { first: 5, last: 2 } });
    expect(counts.train.size).toBe(5);
    expect(counts.test!.size).toBe(2);
    writeFileSync(path.join(dir, "head.idx"), "0 1 2 3 4");
    writeFileSync(path.join(dir, "tail.idx"), "6 7");
    const byIndex = await resolveData(path.join(dir, "plain.csv"), { ...load, split: { train: path.join(dir, "head.idx"), test: path.join(dir, "tail.idx") } });
    expect(Array.from(counts.train.inputs)).toEqual(Array.from(byIndex.train.inputs));
    expect(Array.from(counts.test!.inputs)).toEqual(Array.from(byIndex.test!.inputs));
    // overlapping parts are refused with the split's path
    const e = await resolveData(path.join(dir, "plain.csv"), { ...load, split: { first: 5, last: 4 } }).catch((x: unknown) => x);
    expect(e).toBeInstanceOf(EbbflowError);
    expect((e as EbbflowError).issues[0]!.path).toBe("data.split");
  });

  it("by a column of train/test: the rows go where the column says, and the column is not an input", async () => {
    const dir = folder();
    const { train, test } = await resolveData(path.join(dir, "surfaces.csv"), { ...load, split: { column: "set" } });
    expect(train.size).toBe(6);
    expect(test!.size).toBe(2);
    expect(train.inputSize).toBe(2);
    expect(Array.from(test!.inputs)).toEqual([0.2, 0.1, 0.85, 0.7]);
  });

  it("by index files (white space or a JSON array) gives the same parts as the column", async () => {
    const dir = folder();
    const byIndex = await resolveData(path.join(dir, "plain.csv"), { ...load, split: { train: path.join(dir, "train.idx"), test: path.join(dir, "test.idx") } });
    const byColumn = await resolveData(path.join(dir, "surfaces.csv"), { ...load, split: { column: "set" } });
    expect(Array.from(byIndex.test!.inputs)).toEqual(Array.from(byColumn.test!.inputs));
    expect(Array.from(byIndex.test!.targets)).toEqual(Array.from(byColumn.test!.targets));
    expect(byIndex.train.size).toBe(6);
  });

  it("refuses a row in both parts, an index out of range, a split beside testFraction, and other column values, with paths", async () => {
    const dir = folder();
    writeFileSync(path.join(dir, "bad.idx"), "0 8");
    await expect(readIndexFile(path.join(dir, "bad.idx"), 8)).rejects.toMatchObject({ path: `${path.join(dir, "bad.idx")}[1]` });
    writeFileSync(path.join(dir, "overlap.idx"), "2 0");
    await expect(resolveData(path.join(dir, "plain.csv"), { ...load, split: { train: path.join(dir, "train.idx"), test: path.join(dir, "overlap.idx") } })).rejects.toBeInstanceOf(EbbflowError);
    await expect(resolveData(path.join(dir, "surfaces.csv"), { ...load, testFraction: 0.2, split: { column: "set" } })).rejects.toMatchObject({ path: "data.split" });
    writeFileSync(path.join(dir, "odd.csv"), csv.replace("0.3,0.2,dull,train", "0.3,0.2,dull,maybe"));
    await expect(resolveData(path.join(dir, "odd.csv"), { ...load, split: { column: "set" } })).rejects.toMatchObject({ path: "data.split.column" });
  });

  it("ebbflow train takes --split-column and --train-index/--test-index: the test metrics are over the fixed test rows", () => {
    const dir = folder();
    const experiment = surfacesExperiment(2, {}, { epochs: 2, batchSize: 2 }, { source: "surfaces.csv", targetColumns: ["kind"], oneHot: true, split: { column: "set" } });
    writeFileSync(path.join(dir, "experiment.json"), JSON.stringify(experiment));
    const run = (args: string[]) => spawnSync(process.execPath, [bin, "train", "experiment.json", "--json", ...args], { encoding: "utf8", cwd: dir, env: { ...process.env, FORCE_COLOR: "0" } });
    const a = run(["--out", "a"]);
    expect(a.status, a.stderr).toBe(0);
    expect(JSON.parse(a.stdout).test.examples).toBe(2);
    const b = run(["--out", "b", "--data", "plain.csv", "--train-index", "train.idx", "--test-index", "test.idx"]);
    expect(b.status, b.stderr).toBe(0);
    expect(JSON.parse(b.stdout).test.examples).toBe(2);
    const header = readResults(readFileSync(path.join(dir, "b", "results.jsonl"), "utf8"), "results.jsonl").header as unknown as { config: { data: { split: unknown } } };
    expect(header.config.data.split).toEqual({ train: "train.idx", test: "test.idx" });
    const c = run(["--out", "c", "--data", "plain.csv", "--train-index", "train.idx"]);
    expect(c.status).not.toBe(0);
    expect(c.stderr).toContain("--test-index");
  });

  it("ebbflow train --persistent --persistent-test keep training and held-out states between epochs, and refuse the second without a test set", () => {
    const dir = folder();
    const experiment = surfacesExperiment(3, { dynamics: { kind: "rate", dt: 0.5, maxSteps: 3, tolerance: 1e-12 } }, { epochs: 3, batchSize: 2 }, { source: "plain.csv", targetColumns: ["kind"], oneHot: true });
    writeFileSync(path.join(dir, "experiment.json"), JSON.stringify(experiment));
    const run = (args: string[]) => spawnSync(process.execPath, [bin, "train", "experiment.json", "--json", ...args], { encoding: "utf8", cwd: dir, env: { ...process.env, FORCE_COLOR: "0" } });
    const kept = run(["--out", "kept", "--train-index", "train.idx", "--test-index", "test.idx", "--persistent", "--persistent-test"]);
    expect(kept.status, kept.stderr).toBe(0);
    const header = readResults(readFileSync(path.join(dir, "kept", "results.jsonl"), "utf8"), "results.jsonl").header as unknown as { config: { training: Record<string, unknown> } };
    expect(header.config.training).toMatchObject({ persistentStates: true, persistentTestStates: true });
    // with 3 of at most 6 steps per settling (not converged), starting where the last one ended changes the read-out's
    // state; the held-out sse differs from the run that settles every held-out example from rest
    const rest = run(["--out", "rest", "--train-index", "train.idx", "--test-index", "test.idx", "--persistent"]);
    expect(rest.status, rest.stderr).toBe(0);
    expect(JSON.parse(kept.stdout).test.sse).not.toBe(JSON.parse(rest.stdout).test.sse);
    expect(JSON.parse(kept.stdout).train.sse).toBe(JSON.parse(rest.stdout).train.sse);
    const none = run(["--out", "none", "--test-fraction", "0", "--persistent-test"]);
    expect(none.status).not.toBe(0);
    expect(none.stderr).toContain("training.persistentTestStates");
  });
});
