/**
 * `ebbflow export MODEL.json --format npy|npz|csv --out DIR`: the files hold the saved model's parameters bit for
 * bit (read back with ebbflow's readers, and with NumPy when python3 has it).
 */
import { spawnSync } from "node:child_process";
import { mkdtempSync, readdirSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { buildNetwork, decodeNpy, modelArrays, modelFromNpz, modelToJson } from "../../src/index.js";
import { saveModel } from "../../src/node/index.js";

const root = path.resolve(import.meta.dirname, "../..");
const bin = path.join(root, "dist", "cli", "main.js");
const run = (args: string[]) => spawnSync(process.execPath, [bin, ...args], { encoding: "utf8", env: { ...process.env, FORCE_COLOR: "0" } });
const numpy = spawnSync("python3", ["-c", "import numpy"]).status === 0;

describe("ebbflow export", async () => {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-export-"));
  const net = buildNetwork({
    seed: 11,
    layers: [
      { name: "sensors", size: 6, role: "input" },
      { name: "hidden", size: 4, role: "hidden" },
      { name: "texture", size: 2, role: "output" },
    ],
    connections: [
      { from: "sensors", to: "hidden", feedback: { kind: "separate", learned: false } },
      { from: "hidden", to: "texture", feedback: { kind: "tied", gain: 1 } },
    ],
  });
  const model = path.join(dir, "model.json");
  await saveModel(model, net);
  const arrays = modelArrays(net);

  it("--format npy writes one file per array, each decoding to the parameters' bits", () => {
    const out = path.join(dir, "npy");
    const r = run(["export", model, "--format", "npy", "--out", out, "--json"]);
    expect(r.status, r.stderr).toBe(0);
    expect(JSON.parse(r.stdout).written).toHaveLength(arrays.length);
    expect(readdirSync(out).sort()).toEqual(arrays.map((a) => `${a.key}.npy`).sort());
    for (const a of arrays) {
      const back = decodeNpy(new Uint8Array(readFileSync(path.join(out, `${a.key}.npy`))));
      expect([back.shape, Array.from(back.data)]).toEqual([a.view.shape, Array.from(a.view.data)]);
    }
    if (numpy) {
      // NumPy's reading of the weight file, as raw bytes, equals the network's bytes
      const w = arrays[0]!;
      const hex = spawnSync("python3", ["-c", "import numpy as np, sys; a = np.load(sys.argv[1]); print(a.dtype, a.shape, a.tobytes().hex())", path.join(out, `${w.key}.npy`)], { encoding: "utf8" }).stdout.trim();
      expect(hex).toBe(`float64 (4, 6) ${Buffer.from(w.view.data.buffer, w.view.data.byteOffset, w.view.data.byteLength).toString("hex")}`);
    }
  });

  it("--format npz writes DIR/<model>.npz that rebuilds the model bit for bit; csv rows read back exactly", () => {
    const r = run(["export", model, "--format", "npz", "--out", path.join(dir, "npz")]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout.trim()).toBe(`wrote ${path.join(dir, "npz", "model.npz")}`);
    expect(modelToJson(modelFromNpz(new Uint8Array(readFileSync(path.join(dir, "npz", "model.npz")))))).toBe(modelToJson(net));
    expect(run(["export", model, "--format", "csv", "--out", path.join(dir, "csv")]).status).toBe(0);
    for (const a of arrays) {
      const rows = readFileSync(path.join(dir, "csv", `${a.key}.csv`), "utf8").trimEnd().split("\n");
      expect(rows).toHaveLength(a.view.shape[0]!);
      expect(rows.flatMap((l) => l.split(",").map(Number))).toEqual(Array.from(a.view.data));
    }
  });

  it("a bad format or a missing model is a one-line error with exit code 2", () => {
    expect(run(["export", model, "--format", "mat"]).status).toBe(2);
    const missing = run(["export", path.join(dir, "nope.json")]);
    expect([missing.status, missing.stderr.trim().split("\n")]).toEqual([2, [expect.stringContaining("io_error")]]);
  });
});
