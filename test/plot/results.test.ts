import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { EbbflowError } from "../../src/errors/index.js";
import { readResults, loadResults } from "../../src/node/plot.js";
import { check } from "../helpers/property.js";

const header = { kind: "header", ebbflow: "0.1.0", seed: 7, config: { rule: { rule: "chl", rate: 0.05 } }, started: "2025-01-31T12:00:00.000Z" };
const epoch = (n: number, sse: number, extra: object = {}) => ({ kind: "epoch", epoch: n, seconds: 0.12, rate: 0.05, train: { sse, accuracy: 0.5 }, ...extra });
const jsonl = (...records: unknown[]) => records.map((r) => (typeof r === "string" ? r : JSON.stringify(r))).join("\n") + "\n";

function problem(text: string, source = "run.jsonl"): EbbflowError {
  try {
    readResults(text, source);
  } catch (e) {
    if (e instanceof EbbflowError) return e;
    throw e;
  }
  throw new Error("expected readResults to throw");
}

describe("readResults", () => {
  it("reads back exactly what JSON.stringify wrote, line by line (the writer's own encoding as reference)", () => {
    const metrics = fc.record(
      { sse: fc.double({ min: 0, max: 1e6, noNaN: true }), accuracy: fc.double({ min: 0, max: 1, noNaN: true }), cosine: fc.double({ min: -1, max: 1, noNaN: true }) },
      { requiredKeys: [] },
    );
    const epochs = fc.array(fc.record({ seconds: fc.double({ min: 0, max: 1e4, noNaN: true }), rate: fc.double({ min: 0, max: 10, noNaN: true }), train: metrics, test: fc.option(metrics, { nil: undefined }) }), { maxLength: 12 });
    check(
      fc.property(epochs, fc.oneof(fc.integer(), fc.string()), fc.boolean(), (list, seed, ended) => {
        const records = list.map((r, i) => {
          const base = { kind: "epoch" as const, epoch: i + 1, seconds: r.seconds, rate: r.rate, train: r.train };
          return r.test === undefined ? base : { ...base, test: r.test };
        });
        const end = { kind: "end" as const, epochs: records.length, stopped: "max-epochs" as const, seconds: 1 };
        const h = { ...header, seed };
        const r = readResults(jsonl(h, ...records, ...(ended ? [end] : [])), "gen.jsonl");
        expect(r.source).toBe("gen.jsonl");
        // JSON keeps every finite double except the sign of zero (-0 is written as 0)
        const written = <T>(x: T): T => JSON.parse(JSON.stringify(x)) as T;
        expect(r.header).toEqual(written(h));
        expect(r.epochs).toEqual(written(records));
        expect(r.end).toEqual(ended ? end : undefined);
      }),
      60,
    );
  });

  it("accepts CRLF line ends and skips blank lines, while line numbers still count them", () => {
    const text = [JSON.stringify(header), "", JSON.stringify(epoch(1, 0.5)), "   ", JSON.stringify(epoch(2, 0.25))].join("\r\n") + "\r\n\r\n";
    expect(readResults(text, "f").epochs.map((e) => e.train!.sse)).toEqual([0.5, 0.25]);
    const bad = [JSON.stringify(header), "", "", '{"kind":"epoch",'].join("\n");
    expect(problem(bad, "f").path).toBe("f:line 4");
  });

  it("reports a line that is not JSON with its number, what was expected and an excerpt of what was found", () => {
    const e = problem(jsonl(header, epoch(1, 0.5), '{"kind":"epoch","epoch":2,"seconds":0.1', epoch(3, 0.2)));
    expect(e.code).toBe("parse_error");
    expect(e.path).toBe("run.jsonl:line 3");
    expect(e.expected).toBe("one JSON object per line");
    expect(e.received).toContain('{\\"kind\\":\\"epoch\\"');
  });

  it("collects every bad line before failing, each with its own line number", () => {
    const e = problem(jsonl(header, epoch(1, -1), "[1, 2]", epoch(3, 0.2), { kind: "checkpoint" }));
    expect(e.issues.map((i) => i.path)).toEqual(["run.jsonl:line 2", "run.jsonl:line 3", "run.jsonl:line 5"]);
    expect(e.issues[0]!.expected).toBe('"train.sse" to be a finite number >= 0');
    expect(e.issues[1]!.received).toBe("array of length 2");
    expect(e.issues[2]!.received).toBe('"checkpoint"');
  });

  it("rejects a NaN metric: JSON.stringify writes NaN and Infinity as null, and a literal NaN is not JSON", () => {
    const fromWriter = jsonl(header, JSON.stringify(epoch(1, Number.NaN)), JSON.stringify(epoch(2, 0.1, { test: { sse: Infinity } })));
    const e = problem(fromWriter);
    expect(e.issues.map((i) => [i.path, i.expected, i.received])).toEqual([
      ["run.jsonl:line 2", '"train.sse" to be a finite number >= 0', "null"],
      ["run.jsonl:line 3", '"test.sse" to be a finite number >= 0', "null"],
    ]);
    const literal = problem(jsonl(header, '{"kind":"epoch","epoch":1,"seconds":0,"rate":0.1,"train":{"sse":NaN}}'));
    expect([literal.path, literal.expected]).toEqual(["run.jsonl:line 2", "one JSON object per line"]);
  });

  it("checks the ranges of the named metrics: accuracy is a fraction, cosine in [-1, 1], errors non-negative", () => {
    const e = problem(jsonl(header, epoch(1, 0.1, { train: { accuracy: 87 } }), epoch(2, 0.1, { train: { cosine: -1.5 } }), epoch(3, 0.1, { train: { crossEntropy: -0.1 } })));
    expect(e.issues.map((i) => i.expected)).toEqual(['"train.accuracy" to be a fraction in [0, 1]', '"train.cosine" to be a number in [-1, 1]', '"train.crossEntropy" to be a finite number >= 0']);
    // further metrics by other names are kept
    expect(readResults(jsonl(header, epoch(1, 0.1, { train: { sse: 0.1, settlingSteps: 41 } })), "f").epochs[0]!.train!.settlingSteps).toBe(41);
  });

  it("requires the header first, once, with a version, a seed, a config object and an ISO date", () => {
    expect(problem(jsonl(epoch(1, 0.5))).expected).toBe('"kind" to be "header" on the first line');
    expect(problem(jsonl(header, header)).path).toBe("run.jsonl:line 2");
    const e = problem(jsonl({ kind: "header", ebbflow: "", seed: null, config: [], started: "31/01/2025" }));
    expect(e.issues.map((i) => i.expected.split(" ")[0])).toEqual(['"ebbflow"', '"seed"', '"config"', '"started"']);
    expect(problem(jsonl({ ...header, started: "2025-02-30T25:00:00Z" })).expected).toContain('"started"');
    expect(problem("", "empty.jsonl").path).toBe("empty.jsonl:line 1");
    expect(problem("\n\n", "empty.jsonl").received).toBe("an empty file");
  });

  it("requires epochs as integers >= 1, strictly increasing, with seconds and rate >= 0; train metrics are optional but must be an object", () => {
    const e = problem(jsonl(header, epoch(2, 0.5), epoch(2, 0.4), epoch(1.5, 0.3), { kind: "epoch", epoch: 4, seconds: -1, rate: 0.1, train: 3 }));
    expect(e.issues.map((i) => [i.path, i.expected])).toEqual([
      ["run.jsonl:line 3", '"epoch" to be an epoch number > 2 (strictly increasing)'],
      ["run.jsonl:line 4", '"epoch" to be an integer >= 1'],
      ["run.jsonl:line 5", '"seconds" to be a finite number >= 0'],
      ["run.jsonl:line 5", '"train" to be an object of metrics (name: finite number)'],
    ]);
  });

  it("accepts an end line only last, naming the last epoch and a known stop reason", () => {
    const end = { kind: "end", epochs: 2, stopped: "early-stopping", seconds: 0.3 };
    expect(readResults(jsonl(header, epoch(1, 0.5), epoch(2, 0.4), end), "f").end).toEqual(end);
    expect(problem(jsonl(header, epoch(1, 0.5), end)).expected).toBe('"epochs" to be the last epoch number (1)');
    expect(problem(jsonl(header, epoch(1, 0.5), { ...end, epochs: 1, stopped: "tired" })).expected).toContain('"stopped"');
    const after = problem(jsonl(header, epoch(1, 0.5), { ...end, epochs: 1 }, epoch(2, 0.4)));
    expect([after.path, after.expected]).toEqual(["run.jsonl:line 4", '"kind" to be nothing after the end line (line 3)']);
    // a header-only file is a run that has just started
    expect(readResults(jsonl(header), "f").epochs).toEqual([]);
  });

  it("rejects arguments that are not text", () => {
    expect(() => readResults(42 as unknown as string, "f")).toThrow(expect.objectContaining({ code: "invalid_parameter", path: "text" }));
    expect(() => readResults("", undefined as unknown as string)).toThrow(expect.objectContaining({ code: "invalid_parameter", path: "source" }));
  });

  it("loadResults reads a file, names it in errors, and reports a missing file as io_error", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-plot-"));
    const file = path.join(dir, "run.jsonl");
    writeFileSync(file, jsonl(header, epoch(1, 0.5)));
    expect((await loadResults(file)).epochs[0]!.train!.sse).toBe(0.5);
    writeFileSync(file, jsonl(header, "oops"));
    await expect(loadResults(file)).rejects.toMatchObject({ code: "parse_error", path: `${file}:line 2` });
    await expect(loadResults(path.join(dir, "missing.jsonl"))).rejects.toMatchObject({ code: "io_error" });
  });
});
