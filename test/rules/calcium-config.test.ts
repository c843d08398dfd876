import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { buildNetwork, createRule, parseExperiment, parseRule, ruleJsonSchema, ParameterDelta, type RuleConfigInput } from "../../src/index.js";
import { check } from "../helpers/property.js";
import { expectEbbflowError } from "../traces/expect-error.js";

describe("calcium rule config: renamed options", () => {
  it("the old weight key `mix` is refused with invalid_config, and the message names errorShare", () => {
    const e = expectEbbflowError(() => parseRule({ rule: "calcium", rate: 1, threshold: "blend", mix: 0.9 }), "invalid_config", "rule.mix");
    expect(e.message).toContain("errorShare");
    expect(e.received).toBe("0.9");
  });

  it('the old threshold value "mix" is refused with invalid_config, and the message names "blend"', () => {
    const e = expectEbbflowError(() => parseRule({ rule: "calcium", rate: 1, threshold: "mix" }), "invalid_config", "rule.threshold");
    expect(e.message).toContain("blend");
    // any other wrong value gets the plain list
    expect(expectEbbflowError(() => parseRule({ rule: "calcium", rate: 1, threshold: "mixed" }), "invalid_config", "rule.threshold").expected).toBe("one of error, bcm, blend");
  });

  it("both old spellings together are reported at once, also through createRule and inside an experiment file", () => {
    const old = { rule: "calcium", rate: 1, threshold: "mix", mix: 0.5 };
    expect(expectEbbflowError(() => parseRule(old), "invalid_config", "rule.threshold").issues.map((i) => i.path).sort()).toEqual(["rule.mix", "rule.threshold"]);
    const net = buildNetwork({ layers: [{ name: "in", size: 2, role: "input" }, { name: "out", size: 1, role: "output" }], connections: [{ from: "in", to: "out" }] });
    expectEbbflowError(() => createRule(net, old as never), "invalid_config", "rule.threshold");
    const inFile = expectEbbflowError(() => parseExperiment({ network: { layers: [{ name: "in", size: 2, role: "input" }, { name: "out", size: 1, role: "output" }], connections: [{ from: "in", to: "out" }] }, rules: [old] }), "invalid_config", "rules[0].threshold");
    expect(inFile.issues.map((i) => i.path).sort()).toEqual(["rules[0].mix", "rules[0].threshold"]);
    expect(inFile.message).toContain("errorShare");
  });

  it("the new names parse, with errorShare defaulting to 0.9 and refused outside [0, 1]", () => {
    const c = parseRule({ rule: "calcium", rate: 1, threshold: "blend" });
    expect(c).toMatchObject({ threshold: "blend", errorShare: 0.9 });
    expectEbbflowError(() => parseRule({ rule: "calcium", rate: 1, errorShare: 1.5 }), "invalid_config", "rule.errorShare");
    expectEbbflowError(() => parseRule({ rule: "calcium", rate: 1, errorShare: -0.1 }), "invalid_config", "rule.errorShare");
  });

  it("the JSON Schema offers blend and errorShare and forbids mix", () => {
    const text = JSON.stringify(ruleJsonSchema());
    expect(text).toContain('"enum":["error","bcm","blend"]');
    expect(text).toContain('"errorShare"');
    expect(text).toContain('"mix":{"not":{}}');
  });
});

describe("calcium rule: the blend's limits", () => {
  // definition θ = s θ_error + (1 − s) θ_bcm: s = 1 is the error threshold, s = 0 the BCM one, exactly
  const deltaOf = (seed: number, hidden: number, patterns: number[], config: RuleConfigInput) => {
    const net = buildNetwork({
      seed,
      layers: [
        { name: "in", size: 3, role: "input" },
        { name: "h", size: hidden, role: "hidden" },
        { name: "out", size: 2, role: "output" },
      ],
      connections: [
        { from: "in", to: "h", feedback: { kind: "tied", gain: 1 } },
        { from: "h", to: "out", feedback: { kind: "tied", gain: 1 } },
      ],
    });
    const B = patterns.length / 5;
    const inputs = patterns.filter((_, k) => k % 5 < 3);
    const targets = patterns.filter((_, k) => k % 5 >= 3);
    const d = createRule(net, config).computeDelta({ inputs: { in: inputs }, targets: { out: targets } }, new ParameterDelta(net));
    expect(B).toBeGreaterThan(0);
    return [...d.weights, ...d.biases].map((a) => Array.from(a));
  };

  it("blend with errorShare 1 gives the error threshold's change, with errorShare 0 the bcm threshold's", () => {
    check(
      fc.property(
        fc.integer({ min: 1, max: 1000 }),
        fc.integer({ min: 1, max: 4 }),
        fc.integer({ min: 1, max: 3 }).chain((b) => fc.array(fc.double({ min: 0.05, max: 0.95, noNaN: true }), { minLength: 5 * b, maxLength: 5 * b })),
        (seed, hidden, patterns) => {
          const base = { rule: "calcium", rate: 1 } as const;
          expect(deltaOf(seed, hidden, patterns, { ...base, threshold: "blend", errorShare: 1 })).toEqual(deltaOf(seed, hidden, patterns, { ...base, threshold: "error" }));
          expect(deltaOf(seed, hidden, patterns, { ...base, threshold: "blend", errorShare: 0 })).toEqual(deltaOf(seed, hidden, patterns, { ...base, threshold: "bcm" }));
        },
      ),
      30,
    );
  });
});
