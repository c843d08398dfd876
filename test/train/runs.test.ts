import { describe, it, expect } from "vitest";
import { appendFileSync, existsSync, mkdtempSync, readFileSync, readdirSync, writeFileSync } from "node:fs";
import { tmpdir, hostname } from "node:os";
import path from "node:path";
import { createHash } from "node:crypto";
import { spawnSync } from "node:child_process";
import { buildNetwork, EbbflowError, modelFromData, modelToJson, Trainer, xorDataset, type NetworkSpecInput, type RuleConfigInput } from "../../src/index.js";
import {
  acquireRunLock,
  checkpointFromData,
  claimRunFolder,
  configDifferences,
  driveRun,
  findRunStart,
  inspectResults,
  loadCheckpoint,
  readResults,
  restoreTrainer,
  runFolderFiles,
  type RunFolderFiles,
} from "../../src/node/index.js";

const net: NetworkSpecInput = {
  seed: 2,
  layers: [
    { name: "in", size: 2, role: "input" },
    { name: "hid", size: 3, role: "hidden" },
    { name: "out", size: 1, role: "output" },
  ],
  connections: [
    { from: "in", to: "hid", feedback: { kind: "tied", gain: 1 } },
    { from: "hid", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.5, maxSteps: 60, tolerance: 1e-6 },
};
const rule: RuleConfigInput = { rule: "eqprop", beta: 0.3, rate: 0.4, mode: "random-sign" };
const config = (epochs: number, extra: Record<string, unknown> = {}) => ({ network: net, rule, training: { epochs, batchSize: 2, ...extra }, data: { source: "xor", testFraction: 0, scale: false }, seed: 4 });

const tmp = () => mkdtempSync(path.join(tmpdir(), "ebbflow-runs-"));

/** One call of the driver as `ebbflow train` makes it: claim the folder, find the start, build and restore the trainer, drive. */
async function train(dir: string, cfg: ReturnType<typeof config>, mode: "new" | "resume" | "overwrite" = "new", options: { every?: number; accept?: boolean; stopAt?: number; crashAt?: number } = {}) {
  const { files, lock } = await claimRunFolder(dir, mode);
  try {
    const start = mode === "resume" ? await findRunStart(files, { config: cfg, acceptChanges: options.accept }) : { checkpoint: null, change: null };
    const hooks = {
      onEpoch: (r: { epoch: number }) => {
        if (r.epoch === options.crashAt) throw new Error("crash");
        return r.epoch === options.stopAt ? ("stop" as const) : undefined;
      },
    };
    const trainer = new Trainer(start.checkpoint?.net ?? buildNetwork(net), rule, xorDataset(), cfg.training, { seed: cfg.seed, hooks });
    restoreTrainer(trainer, start);
    const result = await driveRun({ trainer, files, config: cfg, seed: cfg.seed, checkpointEvery: options.every ?? 3, start });
    return { result, trainer, files };
  } finally {
    await lock.release();
  }
}

const epochsOf = (files: RunFolderFiles) => readResults(readFileSync(files.results, "utf8"), "results.jsonl").epochs.map(({ seconds: _s, ...e }) => e);
const weightsOf = (files: RunFolderFiles) => (JSON.parse(readFileSync(files.model, "utf8")) as { parameters: unknown }).parameters;

describe("the epoch driver", () => {
  it("writes results once per epoch (header once), checkpoints with the stop reason, then the model, then the end line", async () => {
    const dir = tmp();
    const { result, files } = await train(dir, config(7));
    expect(result).toMatchObject({ reason: "max-epochs", epochs: 7, resumedFrom: 0, alreadyFinished: false });
    const lines = readFileSync(files.results, "utf8").trimEnd().split("\n").map((l) => JSON.parse(l) as { kind: string });
    expect(lines.map((l) => l.kind)).toEqual(["header", ...Array(7).fill("epoch"), "end"]);
    const header = lines[0] as unknown as { configHash: string; config: unknown; started: string };
    // the identity is the SHA-256 of the canonical config (checked against Node's own SHA-256, an independent implementation)
    expect(header.configHash).toMatch(/^[0-9a-f]{64}$/);
    const ckpt = JSON.parse(readFileSync(files.checkpoint, "utf8")) as { stopped: string; configHash: string; trainer: { epoch: number; history: unknown[] }; history: { epochs: number } };
    expect(ckpt.stopped).toBe("max-epochs");
    expect(ckpt.configHash).toBe(header.configHash);
    // the checkpoint refers to the results' lines instead of carrying the history
    expect(ckpt.trainer.history).toEqual([]);
    expect(ckpt.history.epochs).toBe(7);
    expect(readdirSync(dir).sort()).toEqual(["checkpoint.json", "model.json", "results.jsonl"]);
  });

  it("a run interrupted after its stop epoch's checkpoint resumes without training an extra epoch", async () => {
    const dir = tmp();
    const whole = await train(dir, config(20), "new", { stopAt: 5 });
    expect(whole.result.reason).toBe("callback");
    const before = epochsOf(whole.files);
    // a crash after the checkpoint: no model, no end line
    const text = readFileSync(whole.files.results, "utf8").trimEnd().split("\n");
    writeFileSync(whole.files.results, text.slice(0, -1).join("\n") + "\n");
    writeFileSync(whole.files.model, "");
    const again = await train(dir, config(20), "resume");
    expect(again.result).toMatchObject({ reason: "callback", epochs: 5, resumedFrom: 5 });
    expect(epochsOf(again.files)).toEqual(before);
    expect(readResults(readFileSync(again.files.results, "utf8"), "r").end?.epochs).toBe(5);
    // and a finished run is left as it is
    expect((await train(dir, config(20), "resume")).result.alreadyFinished).toBe(true);
  });

  it("resuming after a crash (checkpoint at epoch 3, torn line of epoch 5) gives the same epochs and weights as an uninterrupted run", async () => {
    const a = await train(tmp(), config(9));
    const dir = tmp();
    // a crash in epoch 5: the hook throws before the epoch's line is written
    await expect(train(dir, config(9), "new", { crashAt: 5 })).rejects.toThrow(/crash/);
    const files = runFolderFiles(dir);
    expect(JSON.parse(readFileSync(files.checkpoint, "utf8"))).toMatchObject({ stopped: null, history: { epochs: 3 } });
    appendFileSync(files.results, '{"kind":"epoch","epoch":5,"seco');
    expect((await inspectResults(files.results)).torn).toBe(true);
    const resumed = await train(dir, config(9), "resume");
    expect(resumed.result).toMatchObject({ reason: "max-epochs", epochs: 9, resumedFrom: 3, repairedTornLine: true });
    expect(epochsOf(resumed.files)).toEqual(epochsOf(a.files));
    expect(weightsOf(resumed.files)).toEqual(weightsOf(a.files));
    expect((await inspectResults(resumed.files.results)).torn).toBe(false);
  });

  it("refuses to resume a different experiment unless asked, then records the change and keeps the start time", async () => {
    const dir = tmp();
    const first = await train(dir, config(4));
    const started = (readResults(readFileSync(first.files.results, "utf8"), "r").header as { started: string }).started;
    const changed = config(8);
    await expect(train(dir, changed, "resume")).rejects.toThrow(/--resume|different experiment: training\.epochs/);
    const other = { ...config(4), network: { ...net, layers: net.layers.map((l) => (l.name === "hid" ? { ...l, size: 5 } : l)) } };
    await expect(train(dir, other, "resume", { accept: true })).rejects.toThrow(/checkpoint's network/);
    const r = await train(dir, changed, "resume", { accept: true });
    expect(r.result).toMatchObject({ epochs: 8, resumedFrom: 4, reason: "max-epochs" });
    const header = readResults(readFileSync(r.files.results, "utf8"), "r").header as unknown as { started: string; changes: { epoch: number; paths: string[] }[] };
    expect(header.started).toBe(started);
    expect(header.changes).toEqual([expect.objectContaining({ epoch: 4, paths: ["training.epochs"] })]);
    expect(configDifferences({ a: 1, b: [1, 2], c: { d: 1 } }, { a: 1, b: [1, 3], c: { d: 1, e: 2 } })).toEqual(["b[1]", "c.e"]);
  });

  it("the data options (scale, target columns, one-hot) are part of the header and the identity", async () => {
    const dir = tmp();
    const scaled = { ...config(2), data: { source: "xor", testFraction: 0, scale: true, targetColumns: [2], oneHot: false } };
    const r = await train(dir, scaled);
    const header = readResults(readFileSync(r.files.results, "utf8"), "r").header;
    expect(header.config.data).toEqual({ source: "xor", testFraction: 0, scale: true, targetColumns: [2], oneHot: false });
    await expect(train(dir, { ...scaled, data: { ...scaled.data, scale: false } }, "resume")).rejects.toThrow(/data\.scale/);
  });
});

describe("run folders", () => {
  it("refuse a non-empty folder unless resuming or overwriting; overwrite removes only the run's files", async () => {
    const dir = tmp();
    writeFileSync(path.join(dir, "notes.txt"), "mine");
    await expect(claimRunFolder(dir, "new")).rejects.toThrow(/empty or new folder/);
    const { lock } = await claimRunFolder(dir, "overwrite");
    await lock.release();
    expect(readFileSync(path.join(dir, "notes.txt"), "utf8")).toBe("mine");
  });

  it("hold an exclusive lock; a stale lock (no such process on this host) is taken over; temporary files are cleaned", async () => {
    const dir = tmp();
    const { lock } = await claimRunFolder(dir, "new");
    await expect(claimRunFolder(dir, "resume")).rejects.toThrow(/locked by process/);
    await lock.release();
    // a lock left by a process that is gone (pid 2^22 + 1 is above Linux's default pid_max of 2^22)
    writeFileSync(path.join(dir, ".lock"), JSON.stringify({ pid: 4194305, host: hostname(), thread: 0, token: "dead", since: "2025-01-01T00:00:00Z" }));
    writeFileSync(path.join(dir, ".results.jsonl.4194305.abcdef.tmp"), "half");
    const again = await claimRunFolder(dir, "resume");
    expect(readdirSync(dir).filter((n) => n.endsWith(".tmp"))).toEqual([]);
    await again.lock.release();
    expect(existsSync(path.join(dir, ".lock"))).toBe(false);
    // a lock held on another host is never broken
    writeFileSync(path.join(dir, ".lock"), JSON.stringify({ pid: 1, host: `${hostname()}-elsewhere`, thread: 0, token: "far", since: "2025-01-01T00:00:00Z" }));
    await expect(acquireRunLock(dir)).rejects.toThrow(/another host/);
  });

  it("report a path through a file, a too long name and a place under /proc as typed errors (no hang)", async () => {
    const dir = tmp();
    writeFileSync(path.join(dir, "file"), "x");
    await expect(claimRunFolder(path.join(dir, "file"), "new")).rejects.toThrow(/is a file, not a folder/);
    await expect(claimRunFolder(path.join(dir, "file", "below"), "new")).rejects.toThrow(EbbflowError);
    await expect(claimRunFolder(path.join(dir, "x".repeat(300)), "new")).rejects.toThrow(/at most 255 bytes/);
    await expect(claimRunFolder(`/proc/ebbflow-test-${process.pid}/x`, "new")).rejects.toThrow(EbbflowError);
  });

  it("report a read-only file system as read-only (EROFS), not as a missing folder", async (ctx) => {
    // needs the right to mount (root in a container or VM); skipped elsewhere
    const dir = tmp();
    const mounted = spawnSync("mount", ["-t", "tmpfs", "-o", "ro,size=1m", "tmpfs", dir]).status === 0;
    if (!mounted) return ctx.skip();
    try {
      await expect(claimRunFolder(path.join(dir, "a", "b"), "new")).rejects.toThrow(/read-only file system \(EROFS\)/);
    } finally {
      spawnSync("umount", [dir]);
    }
  });
});

describe("checkpoint and model file validation", () => {
  const saved = async () => {
    const r = await train(tmp(), config(3));
    return { files: r.files, data: JSON.parse(readFileSync(r.files.checkpoint, "utf8")) as Record<string, unknown>, results: readFileSync(r.files.results, "utf8") };
  };
  const rechecksum = (d: Record<string, unknown>) => {
    // recompute the checksum as a writer would, with Node's SHA-256 over the canonical JSON (an independent hash implementation)
    const canonical = (v: unknown): string =>
      v === null || typeof v !== "object" ? JSON.stringify(v) : Array.isArray(v) ? `[${v.map(canonical).join(",")}]` : `{${Object.keys(v).filter((k) => (v as Record<string, unknown>)[k] !== undefined).sort().map((k) => `${JSON.stringify(k)}:${canonical((v as Record<string, unknown>)[k])}`).join(",")}}`;
    const { checksum: _c, ...rest } = d;
    return { ...rest, checksum: createHash("sha256").update(canonical(rest)).digest("hex") };
  };

  it("the checksum is the SHA-256 of the canonical content (Node's crypto as the reference)", async () => {
    const { data } = await saved();
    expect(rechecksum(data).checksum).toBe(data.checksum);
  });

  it("damaged fields are typed errors naming the field, even with a matching checksum", async () => {
    const { data, results } = await saved();
    const at = (mutate: (d: { trainer: Record<string, unknown> & { shuffle: { prng: { S: number[] } } } }) => void) => {
      const d = structuredClone(data) as never;
      mutate(d);
      return () => checkpointFromData(rechecksum(d), "checkpoint.json", {}, results);
    };
    // the cases of the report: a random-stream entry of -1 (hung before), epoch "x" and -1e308 (trained forever), 0.5 (trained differently)
    expect(at((d) => (d.trainer.shuffle.prng.S[7] = -1))).toThrow(/trainer\.shuffle\.prng\.S\[7\]/);
    expect(at((d) => (d.trainer.shuffle.prng.S[7] = d.trainer.shuffle.prng.S[8]!))).toThrow(/permutation/);
    expect(at((d) => (d.trainer.epoch = "x"))).toThrow(/trainer\.epoch/);
    expect(at((d) => (d.trainer.epoch = -1e308))).toThrow(/trainer\.epoch/);
    expect(at((d) => (d.trainer.epoch = 0.5))).toThrow(/trainer\.epoch/);
    expect(at((d) => (d.trainer.sinceBest = -1))).toThrow(/trainer\.sinceBest/);
    expect(at((d) => ((d as unknown as { stopped: string }).stopped = "tired"))).toThrow(/stopped/);
    expect(() => checkpointFromData(null, "checkpoint.json")).toThrow(EbbflowError);
    expect(() => checkpointFromData({ ...data, version: 1 }, "checkpoint.json", {}, results)).toThrow(/version 1 checkpoints/);
  });

  it("a flipped bit is refused (checksum), and an edited results line is refused (history chain)", async () => {
    const { data, results, files } = await saved();
    const text = JSON.stringify(data);
    const i = text.indexOf('"sinceBest":') + 12;
    const flipped = text.slice(0, i) + String.fromCharCode(text.charCodeAt(i) ^ 1) + text.slice(i + 1);
    expect(() => checkpointFromData(JSON.parse(flipped), "checkpoint.json", {}, results)).toThrow(/checksum/);
    const edited = results.replace('"epoch":2,', '"epoch":2, ');
    writeFileSync(files.results, edited);
    await expect(loadCheckpoint(files.checkpoint)).rejects.toThrow(/history chain|differ/);
  });

  it("model files carry a checksum over declaration and parameters; version 1 files (no checksum) still load", () => {
    const model = buildNetwork({ ...net, dtype: "float32" });
    const text = modelToJson(model);
    const data = JSON.parse(text) as { version: number; checksum?: string; network: { dynamics: { dt: number } } };
    expect(data.version).toBe(2);
    data.network.dynamics.dt = 0.25;
    expect(() => modelFromData(data)).toThrow(/checksum/);
    delete data.checksum;
    data.version = 1;
    expect(modelFromData(data).spec.dynamics.dt).toBe(0.25);
  });
});
