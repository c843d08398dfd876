import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { expandSweep, runIdOf, type SweepPlan } from "../../src/sweep/expand.js";
import { formatConfigPath, lookupPath, parseConfigPath, setPath } from "../../src/sweep/paths.js";
import { parseSweepFile } from "../../src/sweep/schema.js";
import { EbbflowError, type Issue } from "../../src/errors/index.js";
import { check } from "../helpers/property.js";
import { reverseKeys, stripExperiment } from "./fixtures.js";

const base = stripExperiment;

/** Expands and returns the error's issues (the test fails if it does not throw). */
function problems(sweep: unknown, b: unknown = base): Issue[] {
  try {
    expandSweep(sweep, b);
  } catch (e) {
    expect(e).toBeInstanceOf(EbbflowError);
    return [...(e as EbbflowError).issues];
  }
  return expect.unreachable("expected the sweep to be rejected") as never;
}

describe("expanding a sweep", () => {
  it("runs every combination of grid values with every seed, paths sorted, the last path changing fastest", () => {
    const plan = expandSweep({ base, grid: { "rule.rate": [0.5, 1], "network.layers[1].size": [2, 4, 6] }, seeds: [1, 2] }, base);
    expect(plan.paths).toEqual(["network.layers[1].size", "rule.rate"]);
    expect(plan.configurations).toHaveLength(6);
    expect(plan.runs).toHaveLength(12);
    expect(plan.configurations.map((c) => c.label)).toEqual([
      "network.layers[1].size=2, rule.rate=0.5",
      "network.layers[1].size=2, rule.rate=1",
      "network.layers[1].size=4, rule.rate=0.5",
      "network.layers[1].size=4, rule.rate=1",
      "network.layers[1].size=6, rule.rate=0.5",
      "network.layers[1].size=6, rule.rate=1",
    ]);
    const r = plan.runs[3]!;
    expect([r.index, r.seed, r.config.network.layers[1]!.size, r.config.rule.rate, r.config.network.seed]).toEqual([3, 2, 2, 1, 2]);
    // defaults are filled in: the resolved config is complete
    expect(r.config.training.shuffle).toBe(true);
    expect(r.config.network.dynamics.bound).toBe(1e6);
    expect(plan.runs.map((x) => x.index)).toEqual([...plan.runs.keys()]);
  });

  it("a sweep without grid or draws runs the base once per seed", () => {
    const plan = expandSweep({ base, seeds: [1, "two", 3] }, base);
    expect(plan.configurations.map((c) => c.label)).toEqual(["base"]);
    expect(plan.runs.map((r) => r.seed)).toEqual([1, "two", 3]);
    expect(plan.runs.map((r) => r.config.network.seed)).toEqual([1, "two", 3]);
    expect(plan.name).toBe("strip");
  });

  it("gives runs ids that do not depend on key order, defaults written out, or grid order", () => {
    const a = expandSweep({ base, grid: { "rule.rate": [0.5, 1], "training.batchSize": [2, 4] }, seeds: [1, 2] }, base);
    const spelledOut = { ...reverseKeys(base), training: { batchSize: 2, epochs: 12, shuffle: true, persistentStates: false } };
    const b = expandSweep(reverseKeys({ seeds: [1, 2], grid: { "training.batchSize": [2, 4], "rule.rate": [0.5, 1] }, base: spelledOut }), spelledOut);
    expect(b.runs.map((r) => r.id)).toEqual(a.runs.map((r) => r.id));
    expect(b.configurations.map((c) => c.id)).toEqual(a.configurations.map((c) => c.id));
    check(
      fc.property(fc.shuffledSubarray(["rule.rate", "training.batchSize", "network.layers[1].size"], { minLength: 3, maxLength: 3 }), (order) => {
        const values: Record<string, unknown[]> = { "rule.rate": [0.5, 1], "training.batchSize": [2, 4], "network.layers[1].size": [3] };
        const grid: Record<string, unknown[]> = {};
        for (const p of order) grid[p] = values[p]!;
        const plan = expandSweep({ base, grid, seeds: [5] }, base);
        const reference = expandSweep({ base, grid: values, seeds: [5] }, base);
        expect(plan.runs.map((r) => r.id)).toEqual(reference.runs.map((r) => r.id));
      }),
      20,
    );
  });

  it("gives different ids to different configs and seeds, and the same id to the same run in another sweep", () => {
    const plan = expandSweep({ base, grid: { "rule.rate": [0.5, 1, 2], "network.layers[1].size": [2, 4] }, seeds: [1, 2, 3] }, base);
    expect(new Set(plan.runs.map((r) => r.id)).size).toBe(18);
    expect(new Set(plan.configurations.map((c) => c.id)).size).toBe(6);
    // seeds of one configuration share its configuration id
    for (const c of plan.configurations) expect(plan.runs.filter((r) => r.configuration === c.id).map((r) => r.seed)).toEqual([1, 2, 3]);
    // a single-config sweep whose base already has rate 2 and size 2 names the same runs
    const same = { ...base, network: { ...base.network, layers: base.network.layers.map((l, i) => (i === 1 ? { ...l, size: 2 } : l)) }, rules: [{ rule: "generec", rate: 2 }] };
    const single = expandSweep({ base: same, seeds: [2] }, same);
    const match = plan.runs.find((r) => r.config.rule.rate === 2 && r.config.network.layers[1]!.size === 2 && r.seed === 2)!;
    expect(single.runs[0]!.id).toBe(match.id);
    expect(runIdOf(match.config, 2)).toBe(match.id);
    // changing anything that affects results (here the epochs) changes every id
    const longer = { ...base, training: { ...base.training, epochs: 13 } };
    const other = expandSweep({ base: longer, grid: { "rule.rate": [0.5, 1, 2], "network.layers[1].size": [2, 4] }, seeds: [1, 2, 3] }, longer);
    for (const r of other.runs) expect(plan.runs.some((x) => x.id === r.id)).toBe(false);
  });

  it("does not put the checkpoint interval into ids (it does not change results)", () => {
    const a = expandSweep({ base, seeds: [1], checkpointEvery: 1 }, base);
    const b = expandSweep({ base, seeds: [1], checkpointEvery: 50 }, base);
    expect(a.runs[0]!.id).toBe(b.runs[0]!.id);
    expect([a.checkpointEvery, b.checkpointEvery, expandSweep({ base, seeds: [1] }, base).checkpointEvery]).toEqual([1, 50, 10]);
  });

  it("varies the whole rule with grid[\"rule\"], filling each rule's defaults", () => {
    const two = { ...base, rules: [{ rule: "generec", rate: 1 }, { rule: "eqprop", beta: 0.1, rate: 1 }] };
    const plan = expandSweep({ base: two, grid: { rule: two.rules }, seeds: [1] }, two);
    expect(plan.runs.map((r) => r.config.rule.rule)).toEqual(["generec", "eqprop"]);
    expect(plan.runs[1]!.config.rule).toMatchObject({ rule: "eqprop", mode: "one-sided", beta: 0.1 });
  });

  it("accepts a new optional field whose parent exists (training.earlyStopping)", () => {
    const plan = expandSweep({ base, grid: { "training.earlyStopping": [{ split: "train", patience: 3 }] }, seeds: [1] }, base);
    expect(plan.runs[0]!.config.training.earlyStopping).toEqual({ metric: "sse", split: "train", patience: 3, minDelta: 0 });
  });
});

describe("seeded random draws", () => {
  const over = {
    "rule.rate": { kind: "log-uniform", low: 0.01, high: 10 },
    "training.batchSize": { kind: "uniform", low: 1, high: 4, integer: true },
    "network.dynamics.dt": { kind: "uniform", low: 0.2, high: 0.6 },
  };
  const draws = (count: number, o: Record<string, unknown> = over, seed: number | string = 7): SweepPlan => expandSweep({ base, draws: { count, seed, over: o }, seeds: [1] }, base);

  it("draws within each distribution's range, the same values every time", () => {
    const plan = draws(60);
    expect(plan.runs).toHaveLength(60);
    for (const r of plan.runs) {
      expect(r.config.rule.rate).toBeGreaterThanOrEqual(0.01);
      expect(r.config.rule.rate).toBeLessThan(10);
      expect(Number.isInteger(r.config.training.batchSize)).toBe(true);
      expect(r.config.training.batchSize).toBeGreaterThanOrEqual(1);
      expect(r.config.training.batchSize).toBeLessThanOrEqual(4);
      expect(r.config.network.dynamics.dt).toBeGreaterThanOrEqual(0.2);
      expect(r.config.network.dynamics.dt).toBeLessThan(0.6);
    }
    expect(draws(60).runs.map((r) => r.id)).toEqual(plan.runs.map((r) => r.id));
    expect(draws(60, over, 8).runs.map((r) => r.id)).not.toEqual(plan.runs.map((r) => r.id));
    // every whole number from low to high inclusive turns up
    expect(new Set(plan.runs.map((r) => r.config.training.batchSize))).toEqual(new Set([1, 2, 3, 4]));
  });

  it("log-uniform draws spread evenly over the logarithm: about half fall below the geometric mean", () => {
    // analytic: for log-uniform on [a, b), P(x < √(ab)) = ½; with 400 draws the binomial sd is 0.025
    const plan = draws(400, { "rule.rate": { kind: "log-uniform", low: 0.01, high: 10 } });
    const below = plan.runs.filter((r) => r.config.rule.rate < Math.sqrt(0.1)).length / plan.runs.length;
    expect(Math.abs(below - 0.5)).toBeLessThan(0.1);
  });

  it("keeps earlier draws when more draws or more paths are added", () => {
    const few = draws(5);
    const more = draws(9);
    expect(more.runs.slice(0, 5).map((r) => r.config.rule.rate)).toEqual(few.runs.map((r) => r.config.rule.rate));
    const extra = draws(5, { ...over, "rule.variant": { kind: "choice", values: ["basic", "symmetric"] } });
    expect(extra.runs.map((r) => r.config.rule.rate)).toEqual(few.runs.map((r) => r.config.rule.rate));
  });

  it("combines every grid point with every draw, and drops repeated configurations", () => {
    const plan = expandSweep({ base, grid: { "rule.rate": [0.5, 1, 2] }, draws: { count: 4, seed: 1, over: { "network.dynamics.dt": { kind: "uniform", low: 0.2, high: 0.6 } } }, seeds: [1, 2] }, base);
    expect(plan.configurations).toHaveLength(12);
    expect(plan.runs).toHaveLength(24);
    const choice = expandSweep({ base, draws: { count: 12, seed: 1, over: { "training.batchSize": { kind: "choice", values: [2, 4] } } }, seeds: [1] }, base);
    expect(choice.configurations).toHaveLength(2);
    expect(choice.duplicates).toBe(10);
  });
});

describe("rejecting bad sweep files, with the path of each problem", () => {
  it("names an unknown config path as grid[\"rule.rte\"] and says what the base has there", () => {
    const [p, ...rest] = problems({ base, grid: { "rule.rte": [0.5] }, seeds: [1] });
    expect(rest).toHaveLength(0);
    expect(p).toMatchObject({ code: "invalid_config", path: 'grid["rule.rte"]', received: '"rule.rte"' });
    expect(p!.expected).toMatch(/config path of the base experiment/);
    expect(p!.expected).toMatch(/rate/);
    const [q] = problems({ base, grid: { "network.layers[5].size": [3] }, seeds: [1] });
    expect(q).toMatchObject({ path: 'grid["network.layers[5].size"]' });
    expect(q!.expected).toMatch(/network\.layers has indices 0 to 2/);
    const [r] = problems({ base, draws: { count: 2, seed: 1, over: { "trainng.epochs": { kind: "choice", values: [1, 2] } } }, seeds: [1] });
    expect(r).toMatchObject({ path: 'draws.over["trainng.epochs"]' });
    expect(problems({ base, grid: { "training.earlyStoping": [{ split: "train" }] }, seeds: [1] })[0]).toMatchObject({ path: 'grid["training.earlyStoping"]' });
    expect(problems({ base, grid: { "rule..rate": [1] }, seeds: [1] })[0]).toMatchObject({ path: 'grid["rule..rate"]' });
  });

  it("reports empty grid values, repeated values and repeated seeds together", () => {
    const list = problems({ base, grid: { "rule.rate": [], "training.batchSize": [2, 4, 2] }, seeds: [1, 2, 1, "2"] });
    const paths = list.map((i) => i.path);
    expect(paths).toContain('grid["rule.rate"]');
    expect(paths).toContain('grid["training.batchSize"][2]');
    expect(paths).toContain("seeds[2]");
    expect(paths).toContain("seeds[3]");
    expect(list.find((i) => i.path === 'grid["rule.rate"]')!.expected).toMatch(/at least one value/);
    expect(list.find((i) => i.path === "seeds[2]")!.detail).toMatch(/same as seeds\[0\]/);
    expect(problems({ base, seeds: [] })[0]).toMatchObject({ path: "seeds" });
  });

  it("blames a bad value on its grid entry, including problems it causes elsewhere in the config", () => {
    const [p] = problems({ base, grid: { "rule.rate": [0.5, -1] }, seeds: [1] });
    expect(p).toMatchObject({ path: 'grid["rule.rate"][1]', received: "-1" });
    expect(p!.expected).toMatch(/learning rate > 0/);
    // a kWTA k larger than the layer it is in: found at network.layers[1].inhibition.k, caused by the size value
    const kwta = { ...base, network: { ...base.network, layers: base.network.layers.map((l, i) => (i === 1 ? { ...l, inhibition: { kind: "kwta", k: 3 } } : l)) } };
    const [q] = problems({ base: kwta, grid: { "network.layers[1].size": [4, 2] }, seeds: [1] }, kwta);
    expect(q).toMatchObject({ path: 'grid["network.layers[1].size"][1]' });
    expect(q!.detail).toMatch(/network\.layers\[1\]\.inhibition\.k/);
    const [r] = problems({ base, draws: { count: 3, seed: 1, over: { rule: { kind: "choice", values: [{ rule: "eqprop", rate: 1 }] } } }, seeds: [1] });
    expect(r).toMatchObject({ path: 'draws.over["rule"]' });
  });

  it("rejects network.seed (the seeds list sets it), overlapping paths and empty or reversed ranges", () => {
    expect(problems({ base, grid: { "network.seed": [1, 2] }, seeds: [1] })[0]).toMatchObject({ path: 'grid["network.seed"]' });
    expect(problems({ base, grid: { rule: [{ rule: "chl", rate: 1 }], "rule.rate": [1] }, seeds: [1] })[0]).toMatchObject({ path: 'grid["rule.rate"]' });
    expect(problems({ base, grid: { "rule.rate": [1] }, draws: { count: 1, seed: 1, over: { "rule.rate": { kind: "uniform", low: 0.1, high: 1 } } }, seeds: [1] })[0]).toMatchObject({
      path: 'draws.over["rule.rate"]',
    });
    expect(problems({ base, draws: { count: 1, seed: 1, over: { "rule.rate": { kind: "log-uniform", low: 1, high: 0.5 } } }, seeds: [1] })[0]).toMatchObject({ path: 'draws.over["rule.rate"].high' });
    expect(problems({ base, draws: { count: 1, seed: 1, over: { "rule.rate": { kind: "gaussian" } } }, seeds: [1] })[0]!.path).toMatch(/^draws\.over\["rule\.rate"\]/);
    expect(problems({ base, draws: { count: 0, seed: 1, over: {} }, seeds: [1] })[0]).toMatchObject({ path: "draws.count" });
  });

  it("rejects unknown fields, and a base without data or with several rules and no grid[\"rule\"]", () => {
    expect(problems({ base, seeds: [1], grids: {} })[0]).toMatchObject({ path: "grids", expected: "no such field (unknown key)" });
    const { data: _d, ...noData } = base;
    expect(problems({ base: noData, seeds: [1] }, noData)[0]).toMatchObject({ path: "base.data" });
    const two = { ...base, rules: [{ rule: "generec", rate: 1 }, { rule: "chl", rate: 1 }] };
    expect(problems({ base: two, seeds: [1] }, two)[0]).toMatchObject({ path: "base.rules" });
    const badNet = { ...base, network: { ...base.network, layers: [{ name: "x", size: 0, role: "input" }] } };
    expect(problems({ base: badNet, seeds: [1] }, badNet).map((i) => i.path)).toContain("base.network.layers[0].size");
  });

  it("parses the shape alone with parseSweepFile, filling defaults", () => {
    expect(parseSweepFile({ base: "experiment.json", seeds: [1] })).toEqual({ base: "experiment.json", seeds: [1], checkpointEvery: 10 });
    expect(() => parseSweepFile({ base: 3, seeds: [1] })).toThrow(expect.objectContaining({ path: "base" }));
  });
});

describe("config paths", () => {
  it("parse and format round-trip, quoting keys that are not plain names", () => {
    expect(parseConfigPath("network.layers[1].size")).toEqual({ ok: true, segments: ["network", "layers", 1, "size"] });
    expect(parseConfigPath('rule.rates["in->hidden"]')).toEqual({ ok: true, segments: ["rule", "rates", "in->hidden"] });
    for (const bad of ["", ".rule", "rule.", "rule[x]", "rule[1", "1abc", "rule rate"]) expect(parseConfigPath(bad).ok, bad).toBe(false);
    const segment = fc.oneof(fc.stringMatching(/^[A-Za-z_][\w]{0,6}$/), fc.nat(20), fc.string({ minLength: 1, maxLength: 6 }));
    check(
      fc.property(fc.stringMatching(/^[A-Za-z_]\w{0,6}$/), fc.array(segment, { maxLength: 5 }), (head, rest) => {
        const segs = [head, ...rest];
        const text = formatConfigPath(segs);
        expect(parseConfigPath(text)).toEqual({ ok: true, segments: segs });
      }),
    );
  });

  it("a value set at an existing path is found there, and nothing else changes", () => {
    check(
      fc.property(fc.jsonValue({ maxDepth: 3 }), fc.nat(), fc.jsonValue({ maxDepth: 1 }), (doc, pick, value) => {
        // collect the paths that exist in a random document, then set one of them
        const paths: (string | number)[][] = [];
        const walk = (v: unknown, at: (string | number)[]) => {
          if (at.length > 0) paths.push(at);
          if (Array.isArray(v)) v.forEach((x, i) => walk(x, [...at, i]));
          else if (v !== null && typeof v === "object") for (const [k, x] of Object.entries(v)) walk(x, [...at, k]);
        };
        const root = { doc };
        walk(root, []);
        const target = paths[pick % paths.length]!;
        // compare against the JSON round trip of the document (JSON writes -0 as 0)
        const before = JSON.parse(JSON.stringify(root)) as unknown;
        const copy = JSON.parse(JSON.stringify(root)) as unknown;
        expect(setPath(copy, target, value)).toBe(true);
        expect(lookupPath(copy, target)).toEqual({ found: true, value });
        for (const other of paths) {
          const related = other.length <= target.length ? target.slice(0, other.length).every((s, i) => s === other[i]) : other.slice(0, target.length).every((s, i) => s === target[i]);
          if (!related) expect(lookupPath(copy, other)).toEqual(lookupPath(before, other));
        }
      }),
    );
    expect(lookupPath({ a: [1, 2] }, ["a", 5])).toEqual({ found: false, depth: 1, parentKind: "array", available: ["indices 0 to 1"] });
    expect(setPath({ a: 1 }, ["b", "c"], 2)).toBe(false);
  });
});
