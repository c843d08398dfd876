import { describe, it, expect } from "vitest";
import * as E from "../../src/index.js";

const net = () => E.buildNetwork({ layers: [{ name: "in", size: 1, role: "input" }, { name: "out", size: 1, role: "output" }], connections: [{ from: "in", to: "out" }] });
const ds = () => E.createDataset("d", [[0], [1], [0], [1]], [[0], [1], [0], [1]]);
const spec = { layers: [{ name: "in", size: 1, role: "input" as const }, { name: "out", size: 1, role: "output" as const }], connections: [{ from: "in", to: "out" }] };

describe("functions that take options refuse keys they do not know (a misspelt option is never silently ignored)", () => {
  const calls: [string, string, () => unknown][] = [
    ["Settler.settle", "options.tolerence", () => new E.Settler(net(), 1).settle({ phase: "free", inputs: { in: [1] }, tolerence: 1e-9 } as never)],
    ["buildNetwork", "options.backnd", () => E.buildNetwork(spec, { backnd: 1 } as never)],
    ["createDataset", "options.inputsize", () => E.createDataset("d", [[0]], [[0]], { inputsize: 1 } as never)],
    ["trainTestSplit", "options.stratified", () => E.trainTestSplit(ds(), 0.5, 1, { stratified: true } as never)],
    ["kFold", "options.stratified", () => E.kFold(ds(), 2, 1, { stratified: true } as never)],
    ["parseCsvDataset", "options.delimeter", () => E.parseCsvDataset("a,b\n1,0\n", { source: "x.csv", targetColumns: ["b"], delimeter: ";" } as never)],
    ["Trainer extras", "extras.regsitry", () => new E.Trainer(net(), { rule: "chl", rate: 1 }, ds(), { epochs: 1 }, { regsitry: 1 } as never)],
    ["xorDataset", "options.lo", () => E.xorDataset({ lo: 0 } as never)],
    ["randomAssociation", "options.sed", () => E.randomAssociation({ patterns: 2, inputSize: 2, targetSize: 2, seed: 1, sed: 2 } as never)],
    ["recurrentGradient", "options.lose", () => E.recurrentGradient(net(), { inputs: { in: [1] }, targets: { out: [1] } }, { lose: "x" } as never)],
  ];
  for (const [name, path, call] of calls)
    it(name, () => {
      try {
        call();
        expect.unreachable();
      } catch (e) {
        expect(e).toBeInstanceOf(E.EbbflowError);
        expect((e as E.EbbflowError).code).toBe("invalid_parameter");
        expect((e as E.EbbflowError).path).toBe(path);
      }
    });
});
