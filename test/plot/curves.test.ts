import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { readResults, learningCurveSvg, bandCurveSvg, summarizeEpochs, learningCurveSpec, type Results } from "../../src/node/plot.js";
import { check } from "../helpers/property.js";
import { expectClose, EPS64 } from "../helpers/tolerance.js";
import { ariaFields, axisMap, expectPixel, marks, points, xmlProblems } from "./svg.js";

/** A results file of our own invention: train (and test) metrics per epoch. */
function run(seed: number, train: readonly number[], test?: readonly (number | undefined)[], metric = "sse"): Results {
  const lines = [{ kind: "header", ebbflow: "0.1.0", seed, config: { demo: true }, started: "2025-01-31T12:00:00Z" }];
  train.forEach((v, i) => {
    const t = test?.[i];
    lines.push({ kind: "epoch", epoch: i + 1, seconds: 0.1, rate: 0.05, train: { [metric]: v }, ...(t === undefined ? {} : { test: { [metric]: t } }) } as never);
  });
  return readResults(lines.map((l) => JSON.stringify(l)).join("\n"), `seed-${seed}.jsonl`);
}

/** Rendered coordinates are rounded to 1/1000 px; ticks read off the axes fit to about that: half a pixel is strict for a 400 px axis. */
const PX = 0.5;

function byField(svg: string, kind: string, field: string): Map<string, [number, number][]> {
  const out = new Map<string, [number, number][]>();
  for (const m of marks(svg, kind)) out.set(ariaFields(m["aria-label"]!)[field]! + "/" + (ariaFields(m["aria-label"]!).split ?? ""), points(m.d!));
  return out;
}

describe("learningCurveSvg", () => {
  const a = run(1, [2, 1, 0.7, 0.5, 0.41], [2.4, 1.2, 0.8, 0.6, 0.5]);
  const b = run(2, [3, 1.5, 1, 0.75], [3.6, 1.8, 1.2, 0.9]);

  it("writes well-formed SVG with the (escaped) title, one line per run and the labels in the legend", async () => {
    const svg = await learningCurveSvg([{ label: "rule A", results: a }, { label: "rule B", results: b }], { metric: "sse", title: "error <&> epochs" });
    expect(svg.startsWith("<svg")).toBe(true);
    expect(xmlProblems(svg)).toEqual([]);
    expect(svg).toContain(">error &lt;&amp;&gt; epochs</text>");
    expect(marks(svg, "line mark")).toHaveLength(2);
    expect(svg).toContain(">rule A</text>");
    expect(svg).toContain(">rule B</text>");
    expect(svg).toContain(">sse (train)</text>");
  });

  it('draws train and test per run with split "both" (2 runs -> 4 lines)', async () => {
    const svg = await learningCurveSvg([{ label: "A", results: a }, { label: "B", results: b }], { metric: "sse", split: "both" });
    expect(xmlProblems(svg)).toEqual([]);
    expect([...byField(svg, "line mark", "run").keys()].sort()).toEqual(["A/test", "A/train", "B/test", "B/train"]);
  });

  it("places each run's points where the axes' own tick labels say: last epoch and last value land on the axis maps", async () => {
    const svg = await learningCurveSvg([{ label: "A", results: a }, { label: "B", results: b }], { metric: "sse", split: "both", height: 400, width: 400 });
    const x = axisMap(svg, "X");
    const y = axisMap(svg, "Y");
    const lines = byField(svg, "line mark", "run");
    const expected: [string, readonly number[]][] = [["A/train", [2, 1, 0.7, 0.5, 0.41]], ["A/test", [2.4, 1.2, 0.8, 0.6, 0.5]], ["B/train", [3, 1.5, 1, 0.75]], ["B/test", [3.6, 1.8, 1.2, 0.9]]];
    for (const [key, values] of expected) {
      const pts = lines.get(key)!;
      expect(pts).toHaveLength(values.length);
      values.forEach((v, i) => {
        expectPixel(pts[i]![0], x.toPixel(i + 1), PX, `${key} x of epoch ${i + 1}`);
        expectPixel(pts[i]![1], y.toPixel(v), PX, `${key} y of ${v}`);
      });
    }
    // the y ticks span the data: the domain covers the largest and smallest values drawn
    expect(Math.min(...y.ticks)).toBeLessThanOrEqual(0.41);
    expect(Math.max(...y.ticks)).toBeGreaterThanOrEqual(3.6);
  });

  it("maps values through log10 on a logarithmic axis", async () => {
    const values = [5, 0.5, 0.05, 0.012];
    const svg = await learningCurveSvg([{ label: "A", results: run(3, values) }], { metric: "sse", logY: true, height: 400 });
    const y = axisMap(svg, "Y", true);
    const pts = points(marks(svg, "line mark")[0]!.d!);
    values.forEach((v, i) => expectPixel(pts[i]![1], y.toPixel(v), PX, `log y of ${v}`));
    // equal ratios are equal distances on a log axis (5/0.5 = 0.5/0.05)
    expectClose(pts[1]![1] - pts[0]![1], pts[2]![1] - pts[1]![1], 0.01, "decade spacing");
  });

  it("ends a curve on a log axis where the error reaches 0 (0 has no place on it)", async () => {
    const svg = await learningCurveSvg([{ label: "A", results: run(9, [1, 0.1, 0.01, 0, 0]) }], { metric: "sse", logY: true });
    const y = axisMap(svg, "Y", true);
    const pts = points(marks(svg, "line mark")[0]!.d!);
    expect(pts).toHaveLength(3);
    expectPixel(pts[2]![1], y.toPixel(0.01), PX, "last drawn value");
  });

  it("orders points on y opposite to the values (larger value, higher on the page) for any series", async () => {
    await check(
      fc.asyncProperty(fc.array(fc.double({ min: -1e3, max: 1e3, noNaN: true }), { minLength: 2, maxLength: 8 }), async (values) => {
        const svg = await learningCurveSvg([{ label: "r", results: run(4, values, undefined, "score") }], { metric: "score" });
        const pts = points(marks(svg, "line mark")[0]!.d!);
        expect(pts).toHaveLength(values.length);
        for (let i = 0; i < values.length; i++) {
          for (let j = 0; j < values.length; j++) {
            if (values[i]! > values[j]!) expect(pts[i]![1]).toBeLessThanOrEqual(pts[j]![1]);
          }
        }
      }),
      12,
    );
  });

  it("renders any finite values, from subnormals to the largest doubles, on linear and log axes without failing", async () => {
    const finite = fc.double({ noNaN: true, noDefaultInfinity: true });
    const positive = fc.double({ min: 1e-300, max: Number.MAX_VALUE, noNaN: true });
    const tiny = fc.double({ min: -1e-300, max: 1e-300, noNaN: true });
    await check(
      fc.asyncProperty(fc.oneof(fc.array(finite, { minLength: 1, maxLength: 5 }), fc.array(tiny, { minLength: 1, maxLength: 5 })), fc.array(positive, { minLength: 1, maxLength: 5 }), async (linear, logs) => {
        const a = await learningCurveSvg([{ label: "r", results: run(1, linear, undefined, "m") }], { metric: "m" });
        const b = await learningCurveSvg([{ label: "r", results: run(1, logs, undefined, "m") }], { metric: "m", logY: true });
        expect(marks(a, "line mark")).toHaveLength(1);
        expect(marks(b, "line mark")).toHaveLength(1);
      }),
      10,
    );
  });

  it("skips epochs that did not report the metric (test measured every other epoch)", async () => {
    const r = run(5, [1, 0.8, 0.6, 0.5], [1.1, undefined, 0.7, undefined]);
    const svg = await learningCurveSvg([{ label: "A", results: r }], { metric: "sse", split: "test" });
    expect(points(marks(svg, "line mark")[0]!.d!)).toHaveLength(2);
  });

  it("shows a one-epoch run as a point (a line of one point would draw nothing)", () => {
    const spec = learningCurveSpec([{ label: "A", results: run(6, [0.3]) }], { metric: "sse" }) as { mark: { point: boolean } };
    expect(spec.mark.point).toBe(true);
  });

  it("rejects empty and inconsistent input with the path of the problem", async () => {
    const empty = run(7, []);
    const nan: Results = { ...a, epochs: [a.epochs[0]!, { ...a.epochs[1]!, train: { sse: Number.NaN } }] };
    const swapped: Results = { header: a.header, epochs: [a.epochs[1]!, a.epochs[0]!] };
    const cases: [() => Promise<string>, string, string][] = [
      [() => learningCurveSvg([], { metric: "sse" }), "invalid_parameter", "runs"],
      [() => learningCurveSvg([{ label: "A", results: swapped }], { metric: "sse" }), "invalid_parameter", "runs[0].results.epochs[1].epoch"],
      [() => learningCurveSvg([{ label: "A", results: empty }], { metric: "sse" }), "invalid_parameter", "runs[0].results.epochs"],
      [() => learningCurveSvg([{ label: "A", results: nan }], { metric: "sse" }), "invalid_parameter", "runs[0].results.epochs[1].train.sse"],
      [() => learningCurveSvg([{ label: "A", results: a }, { label: "A", results: b }], { metric: "sse" }), "invalid_parameter", "runs[1].label"],
      [() => learningCurveSvg([{ label: "", results: a }], { metric: "sse" }), "invalid_parameter", "runs[0].label"],
      [() => learningCurveSvg([{ label: "A", results: a }], { metric: "accuracy" }), "invalid_parameter", "runs[0].results"],
      [() => learningCurveSvg([{ label: "A", results: run(8, [1, -0.5], undefined, "cosine") }], { metric: "cosine", logY: true }), "invalid_parameter", "runs[0].results.epochs[1].train.cosine"],
      [() => learningCurveSvg([{ label: "A", results: run(8, [0, 1e-310]) }], { metric: "sse", logY: true }), "invalid_parameter", "runs[0].results"],
      [() => learningCurveSvg([{ label: "A", results: a }], { metric: "" }), "invalid_parameter", "options.metric"],
      [() => learningCurveSvg([{ label: "A", results: a }], { metric: "sse", split: "validation" as "test" }), "invalid_parameter", "options.split"],
      [() => learningCurveSvg([{ label: "A", results: a }], { metric: "sse", width: 0 }), "invalid_parameter", "options.width"],
      [() => learningCurveSvg([{ label: "A", results: a }], { metric: "sse", height: Number.NaN }), "invalid_parameter", "options.height"],
    ];
    for (const [call, code, path] of cases) await expect(call()).rejects.toMatchObject({ code, path });
  });
});

describe("summarizeEpochs", () => {
  it("gives mean, sample sd (n - 1), min and max per epoch: sse 1, 2, 3 -> mean 2, sd 1 (closed form)", () => {
    const s = summarizeEpochs([run(1, [1, 4]), run(2, [2, 4]), run(3, [3, 4])], "sse", "train");
    expect(s).toEqual([
      { epoch: 1, n: 3, mean: 2, sd: 1, min: 1, max: 3 },
      { epoch: 2, n: 3, mean: 4, sd: 0, min: 4, max: 4 },
    ]);
  });

  it("counts only the runs that reached an epoch (early-stopped runs drop out); one run has sd 0", () => {
    const s = summarizeEpochs([run(1, [1, 2, 3]), run(2, [3])], "sse", "train");
    expect(s.map((p) => [p.epoch, p.n, p.mean, p.sd])).toEqual([[1, 2, 2, Math.SQRT2], [2, 1, 2, 0], [3, 1, 3, 0]]);
  });

  it("keeps min <= mean <= max, matches the sum-of-squares identity for sd and shifts with the data", () => {
    check(
      fc.property(fc.array(fc.double({ min: -1e3, max: 1e3, noNaN: true }), { minLength: 1, maxLength: 9 }), fc.double({ min: -100, max: 100, noNaN: true }), (xs, c) => {
        const p = summarizeEpochs(xs.map((x, i) => run(i, [x], undefined, "m")), "m", "train")[0]!;
        expect(p.n).toBe(xs.length);
        expect(p.min).toBeLessThanOrEqual(p.mean);
        expect(p.mean).toBeLessThanOrEqual(p.max);
        // textbook identity: (n - 1) sd^2 = sum x^2 - n mean^2
        const n = xs.length;
        const sumSq = xs.reduce((s, x) => s + x * x, 0);
        expectClose((n - 1) * p.sd * p.sd, Math.max(0, sumSq - n * p.mean * p.mean), 1e-9 * (sumSq + 1), "sd identity");
        const q = summarizeEpochs(xs.map((x, i) => run(i, [x + c], undefined, "m")), "m", "train")[0]!;
        expectClose(q.mean, p.mean + c, 1e-9 * (Math.abs(p.mean) + Math.abs(c) + 1e3), "shifted mean");
        expectClose(q.sd, p.sd, 1e-9 * (p.sd + 1e3), "shifted sd");
        expect([q.min, q.max]).toEqual([p.min + c, p.max + c]);
      }),
      100,
    );
  });

  it("avoids overflow and underflow at the ends of the double range: s·(1, 1/2, 1/4) has mean 7s/12 and sd s·sqrt(21)/12 (closed form)", () => {
    for (const s of [Number.MAX_VALUE, 1e-200]) {
      const p = summarizeEpochs([1, 0.5, 0.25].map((f, i) => run(i, [s * f], undefined, "m")), "m", "train")[0]!;
      expectClose(p.mean / s, 7 / 12, 4 * EPS64, `mean / s at s = ${s}`);
      expectClose(p.sd / s, Math.sqrt(21) / 12, 8 * EPS64, `sd / s at s = ${s}`);
    }
  });

  it("rejects an empty list, a bad split and a non-finite value", () => {
    expect(() => summarizeEpochs([], "sse", "train")).toThrow(expect.objectContaining({ code: "invalid_parameter", path: "runs" }));
    expect(() => summarizeEpochs([run(1, [1])], "sse", "both" as "train")).toThrow(expect.objectContaining({ path: "split" }));
    const r = run(1, [1]);
    const bad: Results = { ...r, epochs: [{ ...r.epochs[0]!, train: { sse: Infinity } }] };
    expect(() => summarizeEpochs([bad], "sse", "train")).toThrow(expect.objectContaining({ path: "runs[0].epochs[0].train.sse" }));
  });
});

describe("bandCurveSvg", () => {
  const g1 = [run(1, [3, 2, 1]), run(2, [1, 1, 1]), run(3, [2, 0.5, 0.4])];
  const g2 = [run(4, [2.5, 1.5, 0.8], [2.6, 1.6, 1.0]), run(5, [2.7, 1.7, 0.9], [2.9, 1.8, 1.2])];

  it("draws one mean line and one band per group, with the title and the band kind stated", async () => {
    const svg = await bandCurveSvg([{ label: "one", runs: g1 }, { label: "two", runs: g2 }], { metric: "sse", title: "sweep" });
    expect(svg.startsWith("<svg")).toBe(true);
    expect(xmlProblems(svg)).toEqual([]);
    expect(svg).toContain(">sweep</text>");
    expect(svg).toContain("band: min to max");
    expect(marks(svg, "line mark")).toHaveLength(2);
    expect(marks(svg, "area mark")).toHaveLength(2);
  });

  it("puts the mean on the line and min/max (or mean ± sd) on the band edges, read against the axes", async () => {
    for (const band of ["range", "sd"] as const) {
      const svg = await bandCurveSvg([{ label: "one", runs: g1 }], { metric: "sse", band, height: 400 });
      const x = axisMap(svg, "X");
      const y = axisMap(svg, "Y");
      const line = points(marks(svg, "line mark")[0]!.d!);
      // epoch 1 values 3, 1, 2: mean 2, sd 1 (closed form); epoch 3 values 1, 1, 0.4: mean 0.8
      expectPixel(line[0]![1], y.toPixel(2), PX, "mean at epoch 1");
      expectPixel(line[2]![1], y.toPixel(0.8), PX, "mean at epoch 3");
      const area = points(marks(svg, "area mark")[0]!.d!);
      const atFirst = area.filter((p) => Math.abs(p[0] - x.toPixel(1)) < PX).map((p) => p[1]).sort((p, q) => p - q);
      // epoch 1: range [1, 3]; mean ± sd = 2 ± 1, the same edges
      const [upper, lower] = [3, 1];
      expectPixel(atFirst[0]!, y.toPixel(upper), PX, `${band} upper edge at epoch 1`);
      expectPixel(atFirst[atFirst.length - 1]!, y.toPixel(lower), PX, `${band} lower edge at epoch 1`);
      // epoch 3: range [0.4, 1]; sd = sqrt(((0.2)^2 * 2 + 0.4^2) / 2) = sqrt(0.12)
      const atLast = area.filter((p) => Math.abs(p[0] - x.toPixel(3)) < PX).map((p) => p[1]).sort((p, q) => p - q);
      const edges = band === "range" ? [1, 0.4] : [0.8 + Math.sqrt(0.12), 0.8 - Math.sqrt(0.12)];
      expectPixel(atLast[0]!, y.toPixel(edges[0]!), PX, `${band} upper edge at epoch 3`);
      expectPixel(atLast[atLast.length - 1]!, y.toPixel(edges[1]!), PX, `${band} lower edge at epoch 3`);
    }
  });

  it('draws train and test per group with split "both"', async () => {
    const svg = await bandCurveSvg([{ label: "two", runs: g2 }], { metric: "sse", split: "both", band: "sd" });
    expect(marks(svg, "line mark")).toHaveLength(2);
    expect(marks(svg, "area mark")).toHaveLength(2);
  });

  it("rejects empty groups, empty runs, repeated labels, a bad band and a band reaching 0 on a log axis", async () => {
    const cases: [() => Promise<string>, string][] = [
      [() => bandCurveSvg([], { metric: "sse" }), "groups"],
      [() => bandCurveSvg([{ label: "g", runs: [] }], { metric: "sse" }), "groups[0].runs"],
      [() => bandCurveSvg([{ label: "g", runs: [g1[0]!, run(9, [])] }], { metric: "sse" }), "groups[0].runs[1].epochs"],
      [() => bandCurveSvg([{ label: "g", runs: g1 }, { label: "g", runs: g2 }], { metric: "sse" }), "groups[1].label"],
      [() => bandCurveSvg([{ label: "g", runs: g1 }], { metric: "sse", band: "iqr" as "sd" }), "options.band"],
      // values 0.1 and 3: mean 1.55, sd 2.05, so the lower edge mean - sd is below 0
      [() => bandCurveSvg([{ label: "g", runs: [run(1, [0.1]), run(2, [3])] }], { metric: "sse", band: "sd", logY: true }), "options.logY"],
      [() => bandCurveSvg([{ label: "g", runs: [run(1, [0.1, 0]), run(2, [3, 1])] }], { metric: "sse", logY: true }), "options.logY"],
    ];
    for (const [call, path] of cases) await expect(call()).rejects.toMatchObject({ code: "invalid_parameter", path });
  });
});
