/**
 * The recorder: values per step equal the settler's own per-step record, exports round-trip, and the
 * `.npy` files are read back by NumPy itself when python3 with NumPy is installed (skipped with a
 * printed reason otherwise).
 */
import { describe, it, expect } from "vitest";
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import fc from "fast-check";
import { buildNetwork, decodeNpy, EbbflowError, Recorder, Settler, type NetworkSpecInput, type Snapshot } from "../../src/index.js";
import { writeRecording, timelineSpec, timelineSvg } from "../../src/node/index.js";
import { check } from "../helpers/property.js";

const numpyProbe = spawnSync("python3", ["-c", "import numpy; print(numpy.__version__)"], { encoding: "utf8" });
const numpy = numpyProbe.status === 0 ? numpyProbe.stdout.trim() : undefined;
if (numpy === undefined) console.log(`NumPy read-back of the recorder skipped: python3 -c "import numpy" failed (${(numpyProbe.stderr || numpyProbe.error?.message || "").trim().split("\n").at(-1)})`);

const spec: NetworkSpecInput = {
  seed: 5,
  layers: [
    { name: "touch", size: 3, role: "input" },
    { name: "h", size: 4, role: "hidden", unit: { kind: "tanh" }, adaptation: { tau: 3, gain: 0.5 }, tau: 2 },
    { name: "texture", size: 2, role: "output" },
  ],
  connections: [
    { from: "touch", to: "h", depression: { recovery: 4, use: 0.3 } },
    { from: "h", to: "texture", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.2 },
};

function recordSome(rec: Recorder, settler: Settler, patterns: number[][], steps: number[]) {
  let last: Snapshot | undefined;
  patterns.forEach((x, p) => {
    const snap = settler.settle({ phase: "free", inputs: { touch: x }, maxSteps: steps[p]!, start: last, record: true, onStep: rec.onStep });
    rec.endPattern({ sequence: 0, position: p, phase: "free" });
    last = snap;
    return snap;
  });
}

describe("Recorder", () => {
  it("keeps every step's activity equal to the settler's own per-step record, NaN after a pattern's last step", () => {
    check(
      fc.property(fc.array(fc.integer({ min: 1, max: 12 }), { minLength: 1, maxLength: 4 }), fc.integer({ min: 0, max: 1000 }), (steps, seed) => {
        const net = buildNetwork({ ...spec, seed });
        const settler = new Settler(net, 1);
        const rec = new Recorder(net, { batch: 1, steps: 12, patterns: steps.length, layers: ["h", "texture"], adaptation: ["h"], resources: ["touch->h"] });
        let start;
        for (let p = 0; p < steps.length; p++) {
          const snap = settler.settle({ phase: "free", inputs: { touch: [p % 2, 1, 0.5] }, maxSteps: steps[p]!, tolerance: Number.MIN_VALUE, start, record: true, onStep: rec.onStep });
          rec.endPattern({ position: p });
          for (let s = 1; s <= steps[p]!; s++) for (let j = 0; j < 4; j++) expect(rec.value("h", p, s, 0, j)).toBe(snap.record![s - 1]![1]![j]);
          expect(rec.value("h.adaptation", p, steps[p]!, 0, 0)).toBe(snap.adaptation[1]![0]);
          expect(rec.value("touch->h.resources", p, steps[p]!, 0, 2)).toBe(snap.resources[0]![2]);
          if (steps[p]! < 12) expect(rec.value("texture", p, steps[p]! + 1, 0, 0)).toBeNaN();
          expect(rec.stepCounts[p]).toBe(steps[p]);
          start = snap;
        }
      }),
      20,
    );
  });

  it("JSON Lines and CSV hold the same numbers as the arrays (round trip through JSON.parse and Number)", () => {
    const net = buildNetwork(spec);
    const rec = new Recorder(net, { batch: 2, steps: 5, patterns: 3, layers: ["h"], adaptation: ["h"] });
    const settler = new Settler(net, 2);
    let start;
    for (let p = 0; p < 3; p++) {
      start = settler.settle({ phase: "free", inputs: { touch: [1, 0, 0, 0, 1, 0.5] }, maxSteps: 3 + p, tolerance: Number.MIN_VALUE, start, onStep: rec.onStep });
      rec.endPattern({ sequence: 7, position: p, phase: "free" });
    }
    const lines = rec.toJsonLines().trim().split("\n").map((l) => JSON.parse(l));
    expect(lines.length).toBe(2 * (3 + 4 + 5));
    for (const o of lines) {
      expect(o.sequence).toBe(7);
      for (let j = 0; j < 4; j++) expect(o.h[j]).toBe(rec.value("h", o.pattern, o.step, o.row, j));
    }
    const csv = rec.toCsv().trim().split("\n");
    expect(csv[0]).toBe("pattern,sequence,position,phase,step,row,h[0],h[1],h[2],h[3],h.adaptation[0],h.adaptation[1],h.adaptation[2],h.adaptation[3]");
    expect(csv.length).toBe(1 + lines.length);
    const cells = csv[5]!.split(",");
    const [p, , , , s, b] = cells.map(Number);
    expect(Number(cells[10])).toBe(rec.value("h.adaptation", p!, s!, b!, 0));
  });

  it("refuses a settling longer than its capacity, one pattern too many and unknown names, as typed errors", () => {
    const net = buildNetwork(spec);
    const rec = new Recorder(net, { batch: 1, steps: 3, patterns: 1, layers: ["h"] });
    const settler = new Settler(net, 1);
    expect(() => settler.settle({ phase: "free", inputs: { touch: [1, 1, 1] }, maxSteps: 4, tolerance: Number.MIN_VALUE, onStep: rec.onStep })).toThrow(/recorder\.steps/);
    rec.clear();
    settler.settle({ phase: "free", inputs: { touch: [1, 1, 1] }, maxSteps: 3, onStep: rec.onStep });
    rec.endPattern();
    expect(() => rec.endPattern()).toThrow(EbbflowError);
    expect(() => new Recorder(net, { batch: 1, steps: 3, patterns: 1, layers: ["nope"] })).toThrow(/recorder\.layers\[0\]/);
    expect(() => new Recorder(net, { batch: 1, steps: 3, patterns: 1, adaptation: ["texture"] })).toThrow(/recorder\.adaptation\[0\]/);
    expect(() => new Recorder(net, { batch: 1, steps: 0, patterns: 1, layers: ["h"] })).toThrow(/recorder\.steps/);
    expect(() => new Recorder(net, { batch: 1, steps: 1, patterns: 1 })).toThrow(/at least one channel/);
  });

  it("writes .npy files that decode to the recorded arrays, and that NumPy reads back (np.load, independent reader)", async () => {
    const net = buildNetwork(spec);
    const rec = new Recorder(net, { batch: 1, steps: 8, patterns: 3, layers: ["h", "texture"], resources: ["touch->h"] });
    recordSome(rec, new Settler(net, 1), [[1, 0, 0], [0, 1, 0], [1, 0, 0]], [8, 5, 8]);
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-rec-"));
    try {
      const files = await writeRecording(dir, rec, "touch");
      const mine = decodeNpy(readFileSync(files.npy["h"]!));
      expect(mine.shape).toEqual([3, 8, 1, 4]);
      expect(Array.from(mine.data as Float64Array)).toEqual(Array.from(rec.channel("h").data));
      expect(path.basename(files.npy["touch->h.resources"]!)).toBe("touch.touch-_h.resources.npy");
      if (numpy === undefined) return;
      const out = spawnSync(
        "python3",
        ["-c", "import sys, json, numpy as np\na = np.load(sys.argv[1]); s = np.load(sys.argv[2])\nprint(json.dumps({'shape': list(a.shape), 'dtype': str(a.dtype), 'steps': s.tolist(), 'v': a[1, 4, 0, 2], 'nan': bool(np.isnan(a[1, 5:, :, :]).all()), 'sum': float(np.nansum(a))}))", files.npy["h"]!, files.steps],
        { encoding: "utf8" },
      );
      expect(out.status, out.stderr).toBe(0);
      const r = JSON.parse(out.stdout);
      expect(r.shape).toEqual([3, 8, 1, 4]);
      expect(r.dtype).toBe("float64");
      expect(r.steps).toEqual([8, 5, 8]);
      expect(r.v).toBe(rec.value("h", 1, 5, 0, 2));
      expect(r.nan).toBe(true);
      let sum = 0;
      for (const v of rec.channel("h").data) if (!Number.isNaN(v)) sum += v;
      expect(r.sum).toBeCloseTo(sum, 12);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it("draws units over time as a heat map or a raster (vega-lite spec; SVG when vega is installed)", async () => {
    const net = buildNetwork(spec);
    const rec = new Recorder(net, { batch: 1, steps: 6, patterns: 2, layers: ["h"] });
    recordSome(rec, new Settler(net, 1), [[1, 0, 0], [0, 0, 1]], [6, 6]);
    const heat = timelineSpec(rec, "h") as { data: { values: unknown[] }; width: number };
    expect(heat.data.values.length).toBe(2 * 6 * 4);
    const raster = timelineSpec(rec, "h", { raster: 0.1 }) as { data: { values: { value: number }[] } };
    expect(raster.data.values.every((v) => v.value >= 0.1)).toBe(true);
    expect(() => timelineSpec(rec, "h", { row: 1 })).toThrow(/options\.row/);
    let svg: string | null = null;
    try {
      svg = await timelineSvg(rec, "h");
    } catch (e) {
      if (!(e instanceof EbbflowError && e.code === "unsupported")) throw e;
      console.log("timeline SVG skipped: vega not installed");
    }
    if (svg !== null) expect(svg.startsWith("<svg")).toBe(true);
  });
});
