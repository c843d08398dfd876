import { describe, it, expect } from "vitest";
import { buildNetwork, parseNetwork, safeParseNetwork, networkJsonSchema, EbbflowError, type NetworkSpecInput } from "../../src/index.js";
import { readFileSync } from "node:fs";

const issuesOf = (input: unknown) => {
  const r = safeParseNetwork(input);
  if (r.ok) throw new Error("expected problems");
  return r.issues;
};

describe("network declarations", () => {
  it("reports every problem at once, each with its path, what was expected and what was found", () => {
    const issues = issuesOf({
      layers: [
        { name: "in", size: 0, role: "input" },
        { name: "h", size: 2.5, role: "hidden" },
        { name: "out", size: 3, role: "output", inhibition: { kind: "kwta", k: 2 } },
      ],
      connections: [{ from: "in", to: "h", feedback: { kind: "tied", gain: -0.1 } }],
      dynamics: { dt: 0 },
    });
    const paths = issues.map((i) => i.path);
    expect(paths).toEqual(expect.arrayContaining(["layers[0].size", "layers[1].size", "connections[0].feedback.gain", "dynamics.dt"]));
    const size = issues.find((i) => i.path === "layers[0].size")!;
    expect(size.expected).toBe("a positive integer");
    expect(size.received).toBe("0");
    expect(issues.find((i) => i.path === "dynamics.dt")!.received).toBe("0");
  });

  it("cross-field problems: unknown layer, k > size, duplicate names, unreachable layers", () => {
    const issues = issuesOf({
      layers: [
        { name: "in", size: 2, role: "input" },
        { name: "h", size: 2, role: "hidden", inhibition: { kind: "kwta", k: 3 } },
        { name: "h", size: 2, role: "output" },
      ],
      connections: [{ from: "in", to: "nowhere" }],
    });
    const byPath = Object.fromEntries(issues.map((i) => [i.path, i]));
    expect(byPath["layers[1].inhibition.k"]?.expected).toBe("k <= size (2)");
    expect(byPath["layers[2].name"]?.expected).toBe("a unique layer name");
    expect(byPath["connections[0].to"]?.received).toBe('"nowhere"');
  });

  it("a non-input layer unreachable from every input is reported with its path", () => {
    const issues = issuesOf({
      layers: [
        { name: "in", size: 2, role: "input" },
        { name: "h", size: 2, role: "hidden" },
        { name: "island", size: 2, role: "output" },
      ],
      connections: [{ from: "in", to: "h" }],
    });
    expect(issues).toHaveLength(1);
    expect(issues[0]!.path).toBe("layers[2]");
    expect(issues[0]!.received).toMatch(/island/);
  });

  it("feedback paths count for reachability (a layer fed only by feedback is reachable)", () => {
    expect(
      safeParseNetwork({
        layers: [
          { name: "in", size: 2, role: "input" },
          { name: "top", size: 2, role: "output" },
          { name: "side", size: 2, role: "hidden" },
        ],
        connections: [
          { from: "in", to: "top" },
          { from: "side", to: "top", feedback: { kind: "tied", gain: 0.5 } },
        ],
      }).ok,
    ).toBe(true);
  });

  it("unknown keys are reported with their path", () => {
    const issues = issuesOf({ layers: [{ name: "in", size: 1, role: "input", colour: "red" }], connections: [] });
    expect(issues[0]!.path).toBe("layers[0].colour");
  });

  it("parseNetwork throws an EbbflowError whose message lists every problem", () => {
    try {
      parseNetwork({ layers: [{ name: "in", size: -1, role: "input" }, { name: "o", size: 1, role: "exit" }], connections: [] });
      throw new Error("no error");
    } catch (e) {
      expect(e).toBeInstanceOf(EbbflowError);
      const err = e as EbbflowError;
      expect(err.code).toBe("invalid_config");
      expect(err.issues.length).toBeGreaterThanOrEqual(2);
      expect(err.message).toMatch(/layers\[0\]\.size/);
      expect(err.message).toMatch(/layers\[1\]\.role/);
    }
  });

  it("building from the declaration and building in code give the same network", () => {
    const decl = {
      seed: 11,
      layers: [
        { name: "in", size: 3, role: "input" },
        { name: "out", size: 2, role: "output" },
      ],
      connections: [{ from: "in", to: "out", feedback: { kind: "separate", learned: false } }],
    };
    const fromText = buildNetwork(JSON.parse(JSON.stringify(decl)) as NetworkSpecInput);
    const inCode = buildNetwork({
      seed: 11,
      layers: [
        { name: "in", size: 3, role: "input" },
        { name: "out", size: 2, role: "output" },
      ],
      connections: [{ from: "in", to: "out", feedback: { kind: "separate", learned: false } }],
    });
    expect(Array.from(fromText.connections[0]!.weights)).toEqual(Array.from(inCode.connections[0]!.weights));
    expect(fromText.spec).toEqual(inCode.spec);
  });

  it("adding a connection never changes another connection's initial weights (named random sub-streams)", () => {
    const base = {
      seed: 5,
      layers: [
        { name: "in", size: 3, role: "input" as const },
        { name: "h", size: 4, role: "hidden" as const },
        { name: "out", size: 2, role: "output" as const },
      ],
    };
    const a = buildNetwork({ ...base, connections: [{ from: "in", to: "h" }, { from: "h", to: "out" }] });
    const b = buildNetwork({ ...base, connections: [{ from: "in", to: "out" }, { from: "in", to: "h" }, { from: "h", to: "out" }] });
    expect(Array.from(b.connection("h", "out").weights)).toEqual(Array.from(a.connection("h", "out").weights));
  });

  it("sign constraints hold on the initial weights (Dale's principle)", () => {
    const net = buildNetwork({
      layers: [
        { name: "in", size: 5, role: "input" },
        { name: "e", size: 5, role: "output" },
      ],
      connections: [{ from: "in", to: "e", sign: "inhibitory", init: { kind: "normal", std: 1 } }],
    });
    expect(Array.from(net.connections[0]!.weights).every((w) => w <= 0)).toBe(true);
  });

  it("the committed JSON Schema (schema/network.schema.json) equals the one derived from the declaration", () => {
    const committed = JSON.parse(readFileSync(new URL("../../schema/network.schema.json", import.meta.url), "utf8")) as unknown;
    expect(committed).toEqual(networkJsonSchema());
  });
});
