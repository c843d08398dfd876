/**
 * Sequence data sets and the Trainer's sequence mode: the carried state matches settling by hand
 * (a Settler started from the previous pattern's snapshot), the rule's traces carry over, and training
 * resumed mid-sequence from a saved state (through JSON) gives the same bits as training straight through.
 */
import { describe, it, expect } from "vitest";
import fc from "fast-check";
import {
  buildNetwork, createLayeredDataset, createRule, createSequenceDataset, EbbflowError, parameterBuffers, parseCsvSequences, parseJsonSequences, Recorder, Settler, Trainer,
  sequenceBatches, SlidingThresholdRule, withSequences, type Network, type NetworkSpecInput, type Snapshot,
} from "../../src/index.js";
import { textureMemoryDataset, textureMemoryNetwork } from "../../src/demo/textureMemory.js";
import { check } from "../helpers/property.js";
import { loadCheckpoint, saveCheckpoint } from "../../src/node/index.js";
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";

const csv = "seq,a,b,y\ns1,1,0,0\ns1,0,1,1\ns1,1,1,0\ns2,0,0,1\ns3,1,0,1\ns3,0,1,0\n";
const json = JSON.stringify({
  name: "three",
  sequences: [
    { inputs: [[1, 0], [0, 1], [1, 1]], targets: [[0], [1], [0]] },
    { inputs: [[0, 0]], targets: [[1]] },
    { inputs: [[1, 0], [0, 1]], targets: [[1], [0]] },
  ],
});

describe("sequence data sets", () => {
  it("arrays, CSV with a sequence column and JSON give the same sequences", () => {
    const a = createSequenceDataset("three", JSON.parse(json).sequences);
    const c = parseCsvSequences(csv, { source: "three.csv", targetColumns: ["y"], sequenceColumn: "seq" });
    const j = parseJsonSequences(json, "three.json");
    for (const ds of [a, c, j]) {
      expect(Array.from(ds.sequenceStarts)).toEqual([0, 3, 4, 6]);
      expect(Array.from(ds.inputs)).toEqual([1, 0, 0, 1, 1, 1, 0, 0, 1, 0, 0, 1]);
      expect(Array.from(ds.targets)).toEqual([0, 1, 0, 1, 1, 0]);
    }
    expect(c.inputSize).toBe(2);
  });

  it("refuses a sequence whose rows are apart, rows of another width and empty sequences, naming the place", () => {
    expect(() => parseCsvSequences("seq,a,y\ns1,1,0\ns2,0,1\ns1,1,1\n", { source: "x.csv", targetColumns: ["y"], sequenceColumn: "seq" })).toThrow(/x\.csv:row 4/);
    expect(() => createSequenceDataset("bad", [{ inputs: [[1, 0]], targets: [[1]] }, { inputs: [[1]], targets: [[1]] }])).toThrow(/sequences\[1\]\.inputs\[0\]/);
    expect(() => createSequenceDataset("bad", [{ inputs: [], targets: [] }])).toThrow(/sequences\[0\]\.inputs/);
    expect(() => parseJsonSequences(JSON.stringify({ sequences: [{ inputs: [[1]], targets: [[1]] }, { inputs: [[1, 2]], targets: [[1]] }] }), "j.json")).toThrow(/j\.json:sequences\[1\]:inputs/);
  });

  it("batches hold each sequence once, only sequences of one length, at most the batch size (property)", () => {
    check(
      fc.property(fc.array(fc.integer({ min: 1, max: 5 }), { minLength: 1, maxLength: 30 }), fc.integer({ min: 1, max: 8 }), fc.integer({ min: 0, max: 1000 }), (lengths, size, seed) => {
        const L = Int32Array.from(lengths);
        const order = Int32Array.from(lengths.map((_, i) => i)).sort((x, y) => ((x * 7919 + seed) % 31) - ((y * 7919 + seed) % 31));
        const batches = sequenceBatches(L, order, size);
        const seen = batches.flatMap((b) => Array.from(b)).sort((x, y) => x - y);
        expect(seen).toEqual(lengths.map((_, i) => i));
        for (const b of batches) {
          expect(b.length).toBeLessThanOrEqual(size);
          expect(new Set(Array.from(b, (s) => L[s])).size).toBe(1);
        }
      }),
    );
  });
});

const small = (): NetworkSpecInput => {
  const spec = textureMemoryNetwork(3, [6, 6], 12) as { layers: Record<string, unknown>[]; connections: Record<string, unknown>[] } & NetworkSpecInput;
  return {
    ...spec,
    layers: spec.layers.map((l) => (l.name === "hidden" ? { ...l, size: 4, adaptation: { tau: 4, gain: 0.3 } } : l)) as never,
    connections: spec.connections.map((c) => (c.from === "sensors" && c.to === "hidden" ? { ...c, depression: { recovery: 5, use: 0.2 } } : c)) as never,
  };
};

describe("the Trainer's sequence mode", () => {
  it("evaluates with the state carried: position 0 from rest, later positions from the previous free state (settled by hand)", () => {
    const net = buildNetwork(small());
    const ds = textureMemoryDataset({ sequences: 3, length: 4, seed: 4 });
    const trainer = new Trainer(net, { rule: "generec", rate: 0.1 }, ds, { epochs: 1, batchSize: 2, sequences: {} });
    const rec = new Recorder(net, { batch: 1, steps: 12, patterns: 12, layers: ["report", "older"], adaptation: ["hidden"] });
    trainer.evaluate(ds, rec);
    expect(rec.count).toBe(12);
    const settler = new Settler(net, 1);
    let prev: Snapshot | undefined;
    for (let p = 0; p < 12; p++) {
      const t = p % 4;
      const snap = settler.settle({ phase: "free", inputs: { sensors: ds.inputs.subarray(p * 4, p * 4 + 4) }, start: t === 0 ? undefined : prev });
      expect(rec.positions[p]).toBe(t);
      const s = rec.stepCounts[p]!;
      expect(rec.value("report", p, s, 0, 0)).toBe(snap.activity[4]![0]);
      expect(rec.value("older", p, s, 0, 1)).toBe(snap.activity[2]![1]);
      expect(rec.value("hidden.adaptation", p, s, 0, 3)).toBe(snap.adaptation[3]![3]);
      prev = new Settler(net, 1).settle({ phase: "free", inputs: { sensors: ds.inputs.subarray(p * 4, p * 4 + 4) }, start: t === 0 ? undefined : prev });
    }
  });

  it("resumes mid-sequence bit for bit: state saved after 1 epoch + 3 patterns, sent through JSON, restored on a fresh network", () => {
    const rule = { rule: "calcium", rate: 0.2, trough: 0.02, timing: "continuous", freeSteps: 12, clampedSteps: 3 } as const;
    const ds = textureMemoryDataset({ sequences: 6, length: 5, seed: 8, low: 0.05 });
    const opts = { epochs: 3, batchSize: 4, sequences: {}, optimizer: { kind: "momentum" as const, momentum: 0.5 } };
    const straight = buildNetwork(small());
    new Trainer(straight, rule, ds, opts).run();

    const first = buildNetwork(small());
    const a = new Trainer(first, rule, ds, opts);
    a.runEpoch();
    for (let k = 0; k < 3; k++) expect(a.sequenceStep()).toBeNull();
    const saved = JSON.parse(JSON.stringify(a.saveState()));
    expect(saved.sequence.position).toBe(3);
    expect(saved.sequence.carried).not.toBeNull();
    expect(saved.rule.traces.batch).toBeGreaterThan(0);
    const resumed = buildNetwork(small());
    copyParameters(first, resumed);
    const b = new Trainer(resumed, rule, ds, opts);
    b.loadState(saved);
    b.run();
    const want = parameterBuffers(straight);
    parameterBuffers(resumed).forEach((p, i) => expect(Array.from(p)).toEqual(Array.from(want[i]!)));
  });

  it("resumes mid-sequence bit for bit through a checkpoint file (saveCheckpoint / loadCheckpoint, schema-checked)", async () => {
    const rule = { rule: "calcium", rate: 0.2, trough: 0.02, timing: "continuous", freeSteps: 12, clampedSteps: 3 } as const;
    const ds = textureMemoryDataset({ sequences: 4, length: 5, seed: 9, low: 0.05 });
    const opts = { epochs: 2, batchSize: 2, sequences: { reset: "never" as const } };
    const straight = buildNetwork(small());
    new Trainer(straight, rule, ds, opts).run();
    const a = new Trainer(buildNetwork(small()), rule, ds, opts);
    for (let k = 0; k < 7; k++) a.sequenceStep();
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-seqck-"));
    try {
      const file = path.join(dir, "checkpoint.json");
      await saveCheckpoint(file, a, { note: "mid-sequence" });
      const loaded = await loadCheckpoint(file);
      expect(loaded.state.sequence?.position).toBe(2);
      const b = new Trainer(loaded.net, rule, ds, opts);
      b.loadState(loaded.state);
      b.run();
      const want = parameterBuffers(straight);
      parameterBuffers(loaded.net).forEach((p, i) => expect(Array.from(p)).toEqual(Array.from(want[i]!)));
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it("carrying the calcium rule's traces changes the step; resetting them before every step gives the bits of no carry", () => {
    const spec = small();
    const ds = textureMemoryDataset({ sequences: 1, length: 3, seed: 2, low: 0.05 });
    const cfg = { rule: "calcium", rate: 0.5, trough: 0.02, timing: "continuous", freeSteps: 8, clampedSteps: 3 } as const;
    const run = (carry: boolean, reset: boolean) => {
      const net = buildNetwork(spec);
      const r = createRule(net, cfg) as SlidingThresholdRule;
      r.carryTraces = carry;
      for (let t = 0; t < 3; t++) {
        if (reset) r.resetTraces();
        r.step({ inputs: { sensors: ds.inputs.subarray(t * 4, t * 4 + 4) }, targets: { report: ds.targets.subarray(t, t + 1) } });
      }
      return parameterBuffers(net).flatMap((p) => Array.from(p));
    };
    expect(run(true, true)).toEqual(run(false, false));
    expect(run(true, false)).not.toEqual(run(false, false));
  });

  it("refuses what sequence mode cannot do, with typed errors naming the field", () => {
    const net = buildNetwork(small());
    const seqs = textureMemoryDataset({ sequences: 3, length: 4 });
    const plain = { ...seqs, sequenceStarts: undefined } as never;
    expect(() => new Trainer(net, { rule: "generec", rate: 0.1 }, plain, { epochs: 1, sequences: {} })).toThrow(/data\.train/);
    const uneven = createSequenceDataset("uneven", [{ inputs: [[1, 1, 0, 0]], targets: [[0]] }, { inputs: [[1, 1, 0, 0], [0, 0, 1, 1]], targets: [[0], [1]] }]);
    expect(() => new Trainer(net, { rule: "generec", rate: 0.1 }, uneven, { epochs: 1, sequences: { reset: "never" } })).toThrow(/training\.sequences\.reset/);
    expect(() => new Trainer(net, { rule: "generec", rate: 0.1 }, seqs, { epochs: 1, sequences: {}, persistentStates: true })).toThrow(/training\.persistentStates/);
    const t = new Trainer(net, { rule: "generec", rate: 0.1 }, seqs, { epochs: 2, batchSize: 2, sequences: {} });
    t.sequenceStep();
    const s = JSON.parse(JSON.stringify(t.saveState()));
    s.sequence.position = 9;
    try {
      t.loadState(s);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(EbbflowError);
      expect((e as EbbflowError).path).toBe("trainer.sequence.position");
    }
    const u = JSON.parse(JSON.stringify(t.saveState()));
    u.sequence.carried.state[1] = [1];
    expect(() => t.loadState(u)).toThrow(/trainer\.sequence\.carried\.state\[1\]/);
  });
});

function copyParameters(from: Network, to: Network): void {
  const src = parameterBuffers(from);
  parameterBuffers(to).forEach((p, i) => p.set(src[i]!));
}

describe("sequence mode and several output layers", () => {
  it("refuses a network with two output layers in sequence mode, naming training.sequences (not the first layer silently)", () => {
    const net = buildNetwork({
      seed: 3,
      layers: [
        { name: "touch", size: 2, role: "input" },
        { name: "hidden", size: 3, role: "hidden" },
        { name: "say", size: 1, role: "output" },
        { name: "point", size: 1, role: "output" },
      ],
      connections: [
        { from: "touch", to: "hidden" },
        { from: "hidden", to: "say" },
        { from: "hidden", to: "point" },
      ],
    });
    const rows = createLayeredDataset("two-outputs", { inputs: { touch: [[1, 0], [0, 1], [1, 1]] }, targets: { say: [[1], [0], [1]], point: [[0], [1], [1]] } });
    const ds = withSequences(rows, [0, 2, 3]);
    let error: unknown;
    try {
      new Trainer(net, { rule: "generec", rate: 0.1 }, ds, { epochs: 1, batchSize: 1, sequences: {} });
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(EbbflowError);
    const issue = (error as EbbflowError).issues[0]!;
    expect(issue.code).toBe("unsupported");
    expect(issue.path).toBe("training.sequences");
    expect(issue.received).toMatch(/1 input and 2 output layers/);
    // the same data trains outside sequence mode
    expect(() => new Trainer(net, { rule: "generec", rate: 0.1 }, rows, { epochs: 1, batchSize: 1 }).run()).not.toThrow();
  });
});
