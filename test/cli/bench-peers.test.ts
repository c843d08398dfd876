/**
 * Like-for-like peers of `ebbflow bench MODEL.json`: the NumPy and TF.js peers build the model's network and
 * report what they ran; ebbflow prints a ratio only when that description is its own, and refuses models the
 * peers cannot run. The peers are independent implementations (NumPy, TF.js); the description each reports is
 * built from the arrays it ran, so equal lines mean equal layer sizes, units, steps and precision.
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { parseNetwork, type NetworkSpecInput } from "../../src/network/spec.js";
import { benchNetwork, formatBench, numpyPeer, tfjsPeer, type BenchReport } from "../../src/node/bench/workload.js";
import { describePeerWorkload, peerWorkload } from "../../src/node/bench/peer-workload.js";

const rule = { freeSteps: 20, nudgedSteps: 4, beta: 0.5, rate: 0.01 };
const hasNumpy = spawnSync("python3", ["-c", "import numpy"], { encoding: "utf8" }).status === 0;

/** The model of the report: 784-1024-10 hard sigmoid. */
const wide: NetworkSpecInput = {
  dtype: "float32",
  layers: [
    { name: "image", size: 784, role: "input" },
    { name: "hidden", size: 1024, role: "hidden", unit: { kind: "hard-sigmoid" } },
    { name: "digit", size: 10, role: "output", unit: { kind: "hard-sigmoid" } },
  ],
  connections: [
    { from: "image", to: "hidden", feedback: { kind: "tied", gain: 1 } },
    { from: "hidden", to: "digit", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.5, maxSteps: 20, tolerance: 1e-30 },
};
/** Two hidden layers of different units, float64, another dt. */
const deep: NetworkSpecInput = {
  dtype: "float64",
  layers: [
    { name: "a", size: 30, role: "input" },
    { name: "b", size: 20, role: "hidden", unit: { kind: "relu" } },
    { name: "c", size: 12, role: "hidden", unit: { kind: "tanh" } },
    { name: "d", size: 4, role: "output" },
  ],
  connections: [
    { from: "a", to: "b", feedback: { kind: "tied", gain: 1 } },
    { from: "b", to: "c", feedback: { kind: "tied", gain: 1 } },
    { from: "c", to: "d", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.2, maxSteps: 20, tolerance: 1e-30 },
};

function ours(spec: NetworkSpecInput): string {
  const w = peerWorkload(parseNetwork(spec), rule);
  if (!("workload" in w)) throw new Error(w.refused);
  return describePeerWorkload(w.workload);
}

describe("ebbflow bench: peers run the model's network", () => {
  it("the description names the model's sizes, units, steps and precision", () => {
    expect(ours(wide)).toBe("eqprop one-sided; layers 784-1024-10; units hard-sigmoid,hard-sigmoid; tied feedback gain 1; rate dynamics dt 0.5; 20 free + 4 nudged steps; beta 0.5; rate 0.01; float32; input drive once per training step");
    expect(ours(deep)).toContain("layers 30-20-12-4; units relu,tanh,logistic");
  });

  it.skipIf(!hasNumpy)("the NumPy peer reports the workload ebbflow describes (784-1024-10 hard sigmoid; two hidden layers in float64)", async () => {
    for (const spec of [wide, deep]) {
      const w = peerWorkload(parseNetwork(spec), rule);
      if (!("workload" in w)) throw new Error(w.refused);
      const figures = await numpyPeer([2], 0.01, w.workload);
      expect(figures).toHaveLength(2);
      for (const f of figures) {
        expect(f.usPerExample).toBeGreaterThan(0);
        expect(f.workload).toBe(ours(spec));
      }
    }
  });

  it("the TF.js peer reports the workload ebbflow describes (float32), or is skipped with a note", async () => {
    for (const spec of [benchNetwork(), wide]) {
      const w = peerWorkload(parseNetwork(spec), rule);
      if (!("workload" in w)) throw new Error(w.refused);
      const [f] = await tfjsPeer([2], 0.01, w.workload);
      if (f!.usPerExample === null) expect(f!.note).toMatch(/not installed/);
      else expect(f!.workload).toBe(ours(spec));
    }
  });

  it("models the peers do not implement are refused with the reason", () => {
    const energy = parseNetwork({ ...wide, dynamics: { kind: "energy", dt: 0.5, maxSteps: 20, tolerance: 1e-9 } });
    expect(peerWorkload(energy, rule)).toEqual({ refused: "energy dynamics (the peers run rate dynamics)" });
    const kwta = parseNetwork({ ...wide, layers: wide.layers.map((l) => (l.role === "hidden" ? { ...l, inhibition: { kind: "kwta", k: 10 } } : l)) });
    expect("refused" in peerWorkload(kwta, rule)).toBe(true);
    const skip = parseNetwork({ ...wide, connections: [...wide.connections, { from: "image", to: "digit" }] });
    expect("refused" in peerWorkload(skip, rule)).toBe(true);
  });

  it("the report prints a ratio only between equal workloads", () => {
    const same = ours(benchNetwork());
    const report = (peer: string | undefined): BenchReport => ({
      kind: "ebbflow-bench",
      version: 1,
      created: "2026-12-04T00:00:00.000Z",
      machine: { cpu: "test", cores: 2, node: "20", platform: "linux", arch: "x64" } as unknown as BenchReport["machine"],
      peakGflops: null,
      workload: same,
      figures: [
        { implementation: "ebbflow-wasm-simd", batch: 64, workers: 1, usPerExample: 50, workload: same },
        { implementation: "numpy-1-thread", batch: 64, workers: 1, usPerExample: 25, workload: peer },
      ],
      kernels: [],
      memory: [],
    });
    expect(formatBench(report(same))).toContain("batch 64: numpy-1-thread / ebbflow = 0.50");
    const other = formatBench(report(ours(wide)));
    expect(other).not.toContain("numpy-1-thread / ebbflow");
    expect(other).toContain("numpy-1-thread: no ratio");
    expect(formatBench(report(undefined))).toContain("numpy-1-thread: no ratio");
  });
});
