/**
 * Rules and a unit kind of a user's own, defined in a separate module (examples/plugins/own-rules.js) and used by name
 * everywhere: the Trainer, checkpoint and resume, gradientAgreement, worker threads, a local sweep and the
 * command line. Everything here comes from the built package (dist/), as a user's code and the plugin
 * (which imports "ebbflow") see it, so the plugin and the library are one copy.
 */
import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { pathToFileURL } from "node:url";
import * as ebbflow from "../../dist/index.js";
import * as ebbflowNode from "../../dist/node/index.js";
import { check } from "../helpers/property.js";

const { builtinRegistry, buildNetwork, createDataset, createRule, gradientAgreement, parameterBuffers, ParameterDelta, Registry, Trainer } = ebbflow;
const { loadPlugins, saveCheckpoint, loadCheckpoint, loadSweepFile, runSweepLocally, ParallelRule, loadResults } = ebbflowNode;

const root = path.resolve(import.meta.dirname, "../..");
const pluginFile = path.join(root, "examples", "plugins", "own-rules.js");
const bin = path.join(root, "dist", "cli", "main.js");
const cli = (args: string[], cwd: string) => {
  const r = spawnSync(process.execPath, [bin, ...args], { encoding: "utf8", cwd, env: { ...process.env, FORCE_COLOR: "0" } });
  return { code: r.status, out: r.stdout, err: r.stderr };
};

/**
 * A foraging scenario of our own: a flower is seen through 4 colour channels (ultraviolet, blue, green,
 * red, each 0 or 1); flowers hold nectar when ultraviolet plus blue outweighs red plus half the green
 * (8 of the 16 kinds, a linearly separable rule). The forager should land on those and skip the rest.
 * Targets one-hot (land, skip).
 */
function flowers(): ebbflow.Dataset {
  const inputs: number[][] = [];
  const targets: number[][] = [];
  for (let k = 0; k < 16; k++) {
    const c = [k & 1, (k >> 1) & 1, (k >> 2) & 1, (k >> 3) & 1];
    const nectar = c[0]! + c[1]! > c[3]! + 0.5 * c[2]!;
    inputs.push(c);
    targets.push(nectar ? [1, 0] : [0, 1]);
  }
  return createDataset("flowers", inputs, targets);
}

const declaration = (seed = 4, hidden = 0) => ({
  seed,
  layers: [
    { name: "colour", size: 4, role: "input" as const },
    // the hidden layer's units are the plugin's own kind (Naka–Rushton contrast response)
    ...(hidden > 0 ? [{ name: "hidden", size: hidden, role: "hidden" as const, unit: { kind: "naka-rushton", exponent: 2, halfInput: 0.5 } }] : []),
    { name: "choice", size: 2, role: "output" as const },
  ],
  connections:
    hidden > 0
      ? [
          { from: "colour", to: "hidden", init: { kind: "uniform" as const, low: -1, high: 1 }, feedback: { kind: "tied" as const, gain: 1 } },
          { from: "hidden", to: "choice", init: { kind: "uniform" as const, low: -1, high: 1 }, feedback: { kind: "tied" as const, gain: 1 } },
        ]
      : [{ from: "colour", to: "choice", init: { kind: "uniform" as const, low: -1, high: 1 }, feedback: { kind: "tied" as const, gain: 1 } }],
  dynamics: { dt: 0.5, maxSteps: 200, tolerance: 1e-7 },
});

const bits = (a: ArrayLike<number>) => Array.from(a, (v) => v);

describe("a registry of rules", () => {
  it("lists the ten built-in rules once, each a descriptor like any other", () => {
    expect(builtinRegistry.ruleNames).toEqual(["chl", "generec", "xie-seung", "eqprop", "calcium", "bcm", "feedback-alignment", "direct-feedback-alignment", "predictive-coding", "backprop"]);
    for (const d of builtinRegistry.rules.values()) {
      expect(typeof d.create).toBe("function");
      expect(d.summary.length).toBeGreaterThan(10);
    }
  });

  it("refuses a rule that is not registered, naming it and the registered ones; refuses duplicate and malformed descriptors", async () => {
    const net = buildNetwork(declaration());
    expect(() => createRule(net, { rule: "reward-hebbian", rate: 0.1 })).toThrow(expect.objectContaining({ code: "unknown_name", path: "rule.rule" }));
    try {
      createRule(net, { rule: "reward-hebbian", rate: 0.1 });
    } catch (e) {
      expect((e as Error).message).toMatch(/reward-hebbian/);
      expect((e as Error).message).toMatch(/eqprop/);
    }
    const registry = await loadPlugins([pluginFile]);
    expect(() => registry.with({ rules: [registry.rule("reward-hebbian")] })).toThrow(expect.objectContaining({ code: "invalid_config", path: "rules[0].name" }));
    expect(() => builtinRegistry.with({ rules: [{ name: "Bad Name", summary: "x" } as never] })).toThrow(expect.objectContaining({ code: "invalid_config" }));
    await expect(loadPlugins([path.join(root, "README.md")])).rejects.toThrow(expect.objectContaining({ code: "io_error", path: "plugins[0]" }));
    await expect(loadPlugins([path.join(root, "dist", "rules", "delta.js")])).rejects.toThrow(expect.objectContaining({ code: "invalid_config", path: "plugins[0]" }));
    // the registry of the built-ins is not changed by additions
    expect(builtinRegistry.rules.has("reward-hebbian")).toBe(false);
    expect(registry.plugins).toEqual([pathToFileURL(pluginFile).href]);
  });

  it("validates a rule's config with its own schema, reporting paths", async () => {
    const registry = await loadPlugins([pluginFile]);
    expect(() => registry.parseRule({ rule: "reward-hebbian", rate: 0.1, baselineTau: -1 })).toThrow(expect.objectContaining({ code: "invalid_config", path: "rule.baselineTau" }));
    expect(() => registry.parseRule({ rule: "reward-hebbian", rate: 0.1, extra: 1 })).toThrow(expect.objectContaining({ path: "rule.extra" }));
    expect(registry.parseRule({ rule: "reward-hebbian", rate: 0.1 })).toEqual({ rule: "reward-hebbian", rate: 0.1, baselineTau: 10, norm: 1 });
  });
});

describe("rules of a user's own, by name", () => {
  it("train through the Trainer, labelled with their own names, and learn the foraging task", async () => {
    const registry = await loadPlugins([pluginFile]);
    const data = flowers();
    // a reward-gated Hebbian rule on a network without a hidden layer (the task is linearly separable);
    // without exploration it finds the rule from some starting weights only (measured: 3 of seeds 4-8), seed 7 among them
    const trainer = new Trainer(buildNetwork(declaration(7)), { rule: "reward-hebbian", rate: 0.1, norm: 1 }, data, { epochs: 200, batchSize: 4 }, { registry, seed: 7 });
    expect(trainer.ruleLabel).toBe("reward-hebbian");
    const before = trainer.evaluate(data).accuracy;
    trainer.run();
    const after = trainer.evaluate(data).accuracy;
    expect(after).toBeGreaterThan(before);
    expect(after).toBeGreaterThanOrEqual(0.8);
    // weight normalisation: every receiving unit's incoming weights have length 1
    const w = trainer.net.connections[0]!.weights;
    for (let i = 0; i < 2; i++) expect(Math.hypot(...bits(w.subarray(i * 4, i * 4 + 4)))).toBeCloseTo(1, 10);
    const blend = new Trainer(buildNetwork(declaration(5, 4), { units: registry.units }), { rule: "blended-contrast", rate: 0.5, lambda: 0.3 }, data, { epochs: 2, batchSize: 4 }, { registry, seed: 5 });
    expect(blend.ruleLabel).toBe("blended-contrast (λ=0.3)");
  });

  it("the Trainer also takes a rule instance (bound to its network), labelled with its own config's name", async () => {
    const registry = await loadPlugins([pluginFile]);
    const net = buildNetwork(declaration(7));
    const instance = registry.createRule(net, { rule: "reward-hebbian", rate: 0.1 });
    const trainer = new Trainer(net, instance, flowers(), { epochs: 1, batchSize: 4 }, { registry });
    expect(trainer.rule).toBe(instance);
    expect(trainer.ruleLabel).toBe("reward-hebbian");
    expect(() => new Trainer(buildNetwork(declaration(7)), instance, flowers(), { epochs: 1 })).toThrow(expect.objectContaining({ code: "invalid_config", path: "rule" }));
  });

  it("resume from a checkpoint is bit-identical, with the rule's own state restored", async () => {
    const registry = await loadPlugins([pluginFile]);
    const data = flowers();
    const rule = { rule: "reward-hebbian", rate: 0.3, baselineTau: 5 };
    const options = { epochs: 6, batchSize: 5 };
    const units = registry.units;
    const straight = new Trainer(buildNetwork(declaration(6, 3), { units }), rule, data, options, { registry, seed: 9 });
    straight.run();
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-plugin-"));
    const file = path.join(dir, "checkpoint.json");
    const first = new Trainer(buildNetwork(declaration(6, 3), { units }), rule, data, options, { registry, seed: 9 });
    for (let e = 0; e < 3; e++) first.runEpoch();
    await saveCheckpoint(file, first, { rule });
    expect((JSON.parse(readFileSync(file, "utf8")) as { trainer: { rule: unknown } }).trainer.rule).toEqual(first.rule.saveState());
    // the checkpoint names the plugin's unit kind: it loads with the registry and is refused without
    await expect(loadCheckpoint(file)).rejects.toThrow(/naka-rushton/);
    const saved = await loadCheckpoint(file, { units });
    const second = new Trainer(saved.net, rule, data, options, { registry, seed: 9 });
    second.loadState(saved.state);
    while (second.epoch < 6) second.runEpoch();
    expect(parameterBuffers(second.net).map(bits)).toEqual(parameterBuffers(straight.net).map(bits));
    expect(second.history.map((r) => r.train)).toEqual(straight.history.map((r) => r.train));
    expect(second.rule.saveState()).toEqual(straight.rule.saveState());
    // a damaged rule state is a typed error naming the field
    const bad = { ...saved.state, rule: { baseline: "x", started: true } };
    const third = new Trainer(buildNetwork(declaration(6, 3), { units }), rule, data, options, { registry, seed: 9 });
    expect(() => third.loadState(bad)).toThrow(expect.objectContaining({ code: "invalid_config", path: "trainer.rule.baseline" }));
  });

  it("gradientAgreement takes them by name: the blend at λ = 1 is CHL, at λ = 0 GeneRec (to rounding)", async () => {
    const registry = await loadPlugins([pluginFile]);
    const net = buildNetwork({ ...declaration(7, 3), dynamics: { dt: 0.5, maxSteps: 100000, tolerance: 1e-13 } }, { units: registry.units });
    const data = flowers();
    const batch = { inputs: { colour: data.inputs.subarray(0, 6 * 4) }, targets: { choice: data.targets.subarray(0, 6 * 2) } };
    // settle the blend to the fixed points too (its phases run a fixed number of steps)
    const pairs: [Record<string, unknown>, Record<string, unknown>][] = [
      [{ rule: "blended-contrast", rate: 1, lambda: 1, steps: 400 }, { rule: "chl", rate: 1 }],
      [{ rule: "blended-contrast", rate: 1, lambda: 0, steps: 400 }, { rule: "generec", rate: 1 }],
    ];
    for (const [mine, published] of pairs) {
      const a = gradientAgreement(net, mine, batch, { registry });
      const b = gradientAgreement(net, published, batch);
      expect(a.rule).toMatch(/^blended-contrast/);
      a.rows.forEach((row, i) => {
        expect(row.parameter).toBe(b.rows[i]!.parameter);
        expect(row.cosine).toBeCloseTo(b.rows[i]!.cosine, 8);
        expect(row.updateNorm).toBeCloseTo(b.rows[i]!.updateNorm, 8);
      });
    }
    const r = gradientAgreement(net, { rule: "reward-hebbian", rate: 1, norm: 0 }, batch, { registry });
    expect(r.rule).toBe("reward-hebbian");
    expect(Number.isFinite(r.overall.cosine)).toBe(true);
    expect(() => gradientAgreement(net, { rule: "chl", rate: 1 }, batch, { loss: "cross-entropy" } as never)).toThrow(expect.objectContaining({ code: "invalid_parameter", path: "options.loss" }));
  });

  it("a rule declared by its contrast form equals the published rules it blends, on random small networks (property)", async () => {
    const registry = await loadPlugins([pluginFile]);
    await check(
      fc.asyncProperty(fc.integer({ min: 1, max: 4 }), fc.integer({ min: 1, max: 4 }), fc.integer({ min: 1, max: 5 }), fc.integer({ min: 0, max: 999 }), fc.double({ min: 0, max: 1, noNaN: true }), async (hidden, out, B, seed, lambda) => {
        const spec = {
          seed,
          layers: [
            { name: "in", size: 3, role: "input" as const },
            { name: "h", size: hidden, role: "hidden" as const, unit: { kind: "naka-rushton" } },
            { name: "out", size: out, role: "output" as const },
          ],
          connections: [
            { from: "in", to: "h", feedback: { kind: "tied" as const, gain: 1 } },
            { from: "h", to: "out", feedback: { kind: "tied" as const, gain: 1 } },
          ],
          dynamics: { dt: 0.5, maxSteps: 80, tolerance: Number.MIN_VALUE },
        };
        const net = buildNetwork(spec, { units: registry.units });
        const rnd = ebbflow.createRandom(seed).child("batch");
        const batch = { inputs: { in: Float64Array.from({ length: 3 * B }, () => rnd.uniform()) }, targets: { out: Float64Array.from({ length: out * B }, () => rnd.uniform()) } };
        const blend = createRule(net, { rule: "blended-contrast", rate: 0.7, lambda, steps: 80 }, registry).computeDelta(batch, new ParameterDelta(net));
        const chl = createRule(net, { rule: "chl", rate: 0.7 }).computeDelta(batch, new ParameterDelta(net));
        const gen = createRule(net, { rule: "generec", rate: 0.7 }).computeDelta(batch, new ParameterDelta(net));
        blend.weights.forEach((w, c) => {
          for (let k = 0; k < w.length; k++) expect(w[k]).toBeCloseTo(lambda * chl.weights[c]![k]! + (1 - lambda) * gen.weights[c]![k]!, 12);
        });
        blend.biases.forEach((b, l) => {
          for (let k = 0; k < b.length; k++) expect(b[k]).toBeCloseTo(chl.biases[l]![k]!, 12);
        });
      }),
      40,
    );
  });

  it("2 workers give the same bits as one thread for the rule declared by its form; the stateful rule is refused for workers", async () => {
    const registry = await loadPlugins([pluginFile]);
    const data = flowers();
    for (const dtype of ["float64", "float32"] as const) {
      const rule = { rule: "blended-contrast", rate: 0.4, lambda: 0.6, steps: 30 };
      const one = buildNetwork({ ...declaration(8, 5), dtype }, { units: registry.units });
      const r1 = createRule(one, rule, registry);
      const par = await ParallelRule.create(buildNetwork({ ...declaration(8, 5), dtype }, { units: registry.units }), rule, 2, { registry, kernels: "typescript" });
      try {
        expect(par.split).toBe("rows");
        for (const [from, size] of [
          [0, 6],
          [6, 5],
          [11, 5],
        ] as const) {
          const batch = { inputs: { colour: data.inputs.subarray(from * 4, (from + size) * 4) }, targets: { choice: data.targets.subarray(from * 2, (from + size) * 2) } };
          r1.step(batch);
          await par.step(batch);
        }
        expect(parameterBuffers(par.net).map(bits)).toEqual(parameterBuffers(one).map(bits));
      } finally {
        await par.close();
      }
    }
    await expect(ParallelRule.create(buildNetwork(declaration(8)), { rule: "reward-hebbian", rate: 0.1 }, 2, { registry })).rejects.toThrow(expect.objectContaining({ code: "unsupported", path: "rule" }));
    // a descriptor added in code only cannot reach the workers: refused with the way to fix it
    const inCode = Registry.of([...builtinRegistry.rules.values(), registry.rule("blended-contrast")], [], registry.units);
    await expect(ParallelRule.create(buildNetwork(declaration(8, 5), { units: registry.units }), { rule: "blended-contrast", rate: 0.1 }, 2, { registry: inCode })).rejects.toThrow(/loadPlugins/);
  });

  it("run in a local sweep from a base experiment that names the plugin", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-plugin-sweep-"));
    const data = flowers();
    writeFileSync(path.join(dir, "flowers.json"), ebbflow.datasetToJson(data));
    const experiment = { name: "forage", plugins: [path.relative(dir, pluginFile)], network: declaration(3, 3), rules: [{ rule: "reward-hebbian", rate: 0.5 }], training: { epochs: 4, batchSize: 4 }, data: { source: "flowers.json" } };
    writeFileSync(path.join(dir, "forage.json"), JSON.stringify(experiment));
    writeFileSync(path.join(dir, "forage.sweep.json"), JSON.stringify({ base: "forage.json", grid: { "rule.rate": [0.2, 0.5] }, seeds: [1, 2] }));
    const plan = await loadSweepFile(path.join(dir, "forage.sweep.json"));
    expect(plan.plugins).toEqual([pathToFileURL(pluginFile).href]);
    const report = await runSweepLocally(plan, { out: path.join(dir, "sweep"), workers: 2 });
    expect(report.failed, JSON.stringify(report.runs)).toBe(0);
    expect(report.finished).toBe(4);
    const results = await loadResults(path.join(dir, "sweep", "runs", plan.runs[0]!.id, "results.jsonl"));
    expect((results.header.config as { rule: { rule: string } }).rule.rule).toBe("reward-hebbian");
    expect(results.epochs.length).toBe(4);
  });

  it("train from the command line with --plugin (and from an experiment's plugins); without it the rule is refused by name", () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-plugin-cli-"));
    writeFileSync(path.join(dir, "flowers.json"), ebbflow.datasetToJson(flowers()));
    const experiment = { name: "forage", network: declaration(3, 3), rules: [{ rule: "reward-hebbian", rate: 0.5 }], training: { epochs: 3, batchSize: 4 }, data: { source: "flowers.json" } };
    writeFileSync(path.join(dir, "forage.json"), JSON.stringify(experiment));
    const refused = cli(["train", "forage.json", "--out", "a", "--json"], dir);
    expect(refused.code).toBe(2);
    expect(refused.err).toMatch(/reward-hebbian/);
    expect(refused.err).toMatch(/naka-rushton/);
    const ok = cli(["train", "forage.json", "--plugin", pluginFile, "--out", "b", "--json"], dir);
    expect(ok.code, ok.err).toBe(0);
    const header = JSON.parse(readFileSync(path.join(dir, "b", "results.jsonl"), "utf8").split("\n")[0]!) as { config: { rule: { rule: string }; plugins: string[] } };
    expect(header.config.rule.rule).toBe("reward-hebbian");
    expect(header.config.plugins).toEqual([pathToFileURL(pluginFile).href]);
    // named in the experiment file instead, relative to it; a bare rule name on the command line
    writeFileSync(path.join(dir, "forage2.json"), JSON.stringify({ ...experiment, plugins: [path.relative(dir, pluginFile)] }));
    const own = cli(["train", "forage2.json", "--rule", "blended-contrast", "--rate", "0.3", "--out", "c", "--json"], dir);
    expect(own.code, own.err).toBe(0);
    const check = cli(["check", "forage2.json", "--rule", "blended-contrast", "--rule", "chl", "--json"], dir);
    expect(check.code, check.err).toBe(0);
    expect((JSON.parse(check.out) as { rule: string }[]).map((r) => r.rule)).toEqual(["blended-contrast (λ=0.5)", "chl"]);
  });
});
