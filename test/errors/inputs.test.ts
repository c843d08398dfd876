/**
 * The causes of untyped errors and hangs of the input-validation report, one check each: every one is now a
 * typed EbbflowError with a path (resource limits state the bytes needed and how to raise the limit).
 */
import { describe, it, expect, afterEach } from "vitest";
import {
  buildNetwork,
  createRule,
  EbbflowError,
  expandSweep,
  parseExperiment,
  parseJsonDataset,
  parseRule,
  parseSweepFile,
  resourceLimits,
  setResourceLimits,
  Settler,
  summarizeRuns,
  Trainer,
  xorDataset,
} from "../../src/index.js";
import { inputShapeIssues } from "../../src/errors/input.js";
import { requireBytes } from "../../src/limits/index.js";

const layers = (n: number, m: number) => ({
  layers: [
    { name: "in", size: n, role: "input" as const },
    { name: "out", size: m, role: "output" as const },
  ],
  connections: [{ from: "in", to: "out" }],
});
const typed = (f: () => unknown, code: string, path: RegExp) => {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(EbbflowError);
    expect((e as EbbflowError).code).toBe(code);
    expect((e as EbbflowError).path).toMatch(path);
    return e as EbbflowError;
  }
  throw new Error("no error");
};
const experiment = { network: layers(2, 1), rules: [{ rule: "chl", rate: 0.1 }], training: { epochs: 2 }, data: { source: "xor" } };

afterEach(() => setResourceLimits({}));

describe("resource limits, checked before allocation", () => {
  it("in 1e5 × out 1e5 and a 1e9-unit layer: the bytes needed and how to raise the limit, nothing allocated", () => {
    // 1e10 float64 weights = 8e10 bytes (8 bytes per IEEE 754 double)
    const e = typed(() => buildNetwork(layers(1e5, 1e5)), "resource_limit", /^layers$/);
    expect(e.received).toMatch(/8\.000e\+10 bytes/);
    expect(e.expected).toMatch(/EBBFLOW_MAX_BYTES/);
    typed(() => buildNetwork(layers(2, 1e9)), "resource_limit", /^layers$/);
  });

  it("a batch whose settling states exceed the limit, and a raised limit", () => {
    const net = buildNetwork(layers(2, 1));
    typed(() => new Settler(net, 2 ** 31), "resource_limit", /^batch$/);
    setResourceLimits({ maxBytes: 100 });
    expect(resourceLimits().maxBytes).toBe(100);
    typed(() => requireBytes("x", "a test block", 101), "resource_limit", /^x$/);
    typed(() => setResourceLimits({ maxBytes: -1 }), "invalid_parameter", /maxBytes/);
  });

  it("a JSON data set with label 2147483647, and a sweep with draws.count 1e9", () => {
    typed(() => parseJsonDataset(JSON.stringify({ inputs: [[0], [1]], labels: [0, 2147483647] }), "d.json"), "resource_limit", /d\.json:labels/);
    typed(() => expandSweep({ base: experiment, draws: { count: 1e9, seed: 1, over: { "rule.rate": { kind: "uniform", low: 0.1, high: 1 } } }, seeds: [1] }, experiment), "resource_limit", /draws\.count/);
  });
});

describe("every error path typed", () => {
  it("null inputs to settle and rule.step", () => {
    const net = buildNetwork(layers(2, 1));
    typed(() => new Settler(net, 1).settle(null as never), "invalid_parameter", /options/);
    typed(() => new Settler(net, 1).settle({ phase: "free", inputs: { in: null } } as never), "shape_mismatch", /inputs\.in/);
    for (const rule of ["chl", "backprop", "feedback-alignment"] as const) {
      typed(() => createRule(net, { rule, rate: 0.1 }).step(null as never), "invalid_parameter", /batch/);
      typed(() => createRule(net, { rule, rate: 0.1 }).step({ inputs: { in: [0, 1] }, targets: null } as never), "shape_mismatch", /targets/);
    }
  });

  it("deeply nested grid values and 2e5 invalid entries in a sweep", () => {
    let deep: unknown = 1;
    for (let i = 0; i < 100_000; i++) deep = [deep];
    typed(() => parseSweepFile({ base: experiment, grid: { "rule.rate": [deep] }, seeds: [1] }), "invalid_config", /grid\.rule\.rate/);
    typed(() => parseSweepFile({ base: experiment, seeds: new Array(200_000).fill(null) }), "resource_limit", /seeds/);
    const many = typed(() => parseSweepFile({ base: experiment, seeds: new Array(50_000).fill(null) }), "invalid_config", /seeds\[0\]/);
    expect(many.message.split("\n").length).toBeLessThan(110);
  });

  it("__proto__, constructor and prototype keys are refused with a path, like any unknown key", () => {
    typed(() => parseRule(JSON.parse('{"rule":"chl","rate":1,"rates":{"__proto__":0.5}}')), "invalid_config", /rule\.rates\.__proto__/);
    typed(() => parseExperiment(JSON.parse('{"network":{"layers":[],"connections":[],"constructor":1}}')), "invalid_config", /network\.constructor/);
    typed(() => expandSweep({ base: experiment, grid: { "rule.__proto__.x": [1] }, seeds: [1] }, experiment), "invalid_config", /grid/);
    expect(inputShapeIssues(JSON.parse('{"a":[{"prototype":1}]}'))[0]?.path).toBe("a[0].prototype");
  });

  it("initialisers that overflow the storage type are refused; explicit weights must meet the connection's constraints", () => {
    const net = (conn: Record<string, unknown>, dtype = "float64") => buildNetwork({ dtype, ...layers(2, 1), connections: [{ from: "in", to: "out", ...conn }] } as never);
    typed(() => net({ init: { kind: "uniform", low: -1e308, high: 1e308 } }), "invalid_config", /connections\[0\]\.init/);
    typed(() => net({ init: { kind: "constant", value: 1e39 } }, "float32"), "invalid_config", /connections\[0\]\.init/);
    typed(() => net({ init: { kind: "normal", std: 1e38 } }, "float32"), "invalid_config", /connections\[0\]\.init/);
    typed(() => net({ weights: [0.5, -0.1], sign: "excitatory" }), "invalid_config", /connections\[0\]\.weights\[1\]/);
    typed(() => net({ weights: [0.5, 0.1], sign: "inhibitory" }), "invalid_config", /connections\[0\]\.weights\[0\]/);
    typed(() => net({ weights: [1.5, 0.1], bounds: "soft" }), "invalid_config", /connections\[0\]\.weights\[0\]/);
    typed(() => net({ weights: [1e39, 0] }, "float32"), "invalid_config", /connections\[0\]\.weights\[0\]/);
    expect(net({ weights: [0.5, 0], sign: "excitatory", bounds: "soft" }).connections[0]!.weights[0]).toBe(0.5);
  });

  it("summarize with --metric constructor is an unknown metric, not a crash", () => {
    const plan = expandSweep({ base: experiment, seeds: [1] }, experiment);
    const finals = new Map([[plan.runs[0]!.id, { epochs: 2, train: { sse: 0.5 } }]]);
    typed(() => summarizeRuns(plan, finals as never, { metric: "constructor", split: "train" }), "invalid_parameter", /metric/);
  });

  it("a batch size far above the data set's size allocates only what the data needs", () => {
    const t = new Trainer(buildNetwork({ ...layers(2, 1), seed: 1 }), { rule: "chl", rate: 0.1 }, xorDataset(), { epochs: 1, batchSize: 2 ** 31 - 1 });
    expect(t.runEpoch().epoch).toBe(1);
  });
});
