import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { mkdtempSync, readdirSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { buildNetwork, modelToJson, modelFromData, EbbflowError } from "../../src/index.js";
import { bytesToBase64, base64ToBytes } from "../../src/config/encoding.js";
import { saveModel, loadModel, writeFileAtomic } from "../../src/node/index.js";
import { check } from "../helpers/property.js";

const decl = (dtype: "float32" | "float64") => ({
  dtype,
  seed: 99,
  layers: [
    { name: "in", size: 4, role: "input" as const },
    { name: "h", size: 3, role: "hidden" as const, bias: 0.25 },
    { name: "out", size: 2, role: "output" as const },
  ],
  connections: [
    { from: "in", to: "h", feedback: { kind: "separate" as const, learned: true } },
    { from: "h", to: "out", feedback: { kind: "tied" as const, gain: 0.3 } },
  ],
});

describe("model files", () => {
  it("base64 matches Node's own Buffer encoding (independent reference) and round-trips", () => {
    check(
      fc.property(fc.uint8Array({ maxLength: 64 }), (bytes) => {
        const text = bytesToBase64(bytes);
        expect(text).toBe(Buffer.from(bytes).toString("base64"));
        expect(Array.from(base64ToBytes(text, "x"))).toEqual(Array.from(bytes));
      }),
    );
  });

  for (const dtype of ["float32", "float64"] as const) {
    it(`a save/load round trip is bit-exact (${dtype}), including trained-looking values`, async () => {
      const net = buildNetwork(decl(dtype));
      net.connections[0]!.weights[0] = Math.PI / 7;
      net.layers[1]!.bias[2] = -1e-300;
      const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-"));
      const file = path.join(dir, "model.json");
      await saveModel(file, net);
      const back = await loadModel(file);
      for (let i = 0; i < net.connections.length; i++) {
        const a = net.connections[i]!;
        const b = back.connections[i]!;
        expect(b.weights).toEqual(a.weights);
        expect(new Uint8Array(b.weights.buffer)).toEqual(new Uint8Array(a.weights.buffer));
        if (a.feedback.kind === "separate" && b.feedback.kind === "separate") expect(b.feedback.weights).toEqual(a.feedback.weights);
      }
      for (let i = 0; i < net.layers.length; i++) expect(back.layers[i]!.bias).toEqual(net.layers[i]!.bias);
      expect(back.spec).toEqual({ ...net.spec, connections: net.spec.connections.map(({ weights: _w, ...c }) => c) });
      // saving again gives the same text
      expect(modelToJson(back)).toBe(readFileSync(file, "utf8"));
    });
  }

  it("a damaged file is reported with the path of the bad field", () => {
    const data = JSON.parse(modelToJson(buildNetwork(decl("float64")))) as { parameters: { weights: Record<string, string> } };
    data.parameters.weights["h->out"] = data.parameters.weights["h->out"]!.slice(0, 8);
    expect(() => modelFromData(data)).toThrow(/parameters\.weights\["h->out"\]/);
    expect(() => modelFromData("{not json")).toThrow(EbbflowError);
    expect(() => modelFromData({ format: "other", version: 9, network: {}, parameters: {} })).toThrow(/format/);
  });

  it("an atomic write leaves either the old or the new file, never a partial one, and no temporary files", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-"));
    const file = path.join(dir, "data.txt");
    writeFileSync(file, "old");
    await writeFileAtomic(file, "new contents");
    expect(readFileSync(file, "utf8")).toBe("new contents");
    expect(readdirSync(dir)).toEqual(["data.txt"]);
    // a write into a folder that does not exist fails cleanly and leaves nothing behind
    await expect(writeFileAtomic(path.join(dir, "missing", "x.txt"), "y")).rejects.toThrow(EbbflowError);
    expect(readdirSync(dir)).toEqual(["data.txt"]);
  });
});
