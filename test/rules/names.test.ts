import { describe, it, expect } from "vitest";
import { ruleDisplayName, EbbflowError } from "../../src/index.js";

describe("ruleDisplayName", () => {
  // documented in docs/guide/rules.md ("Names in output"): the id, with variant or mode, defaults filled in
  it("is the rule id, with generec's variant or eqprop's mode in parentheses", () => {
    expect(ruleDisplayName({ rule: "chl", rate: 1 })).toBe("chl");
    expect(ruleDisplayName({ rule: "generec", rate: 1 })).toBe("generec (basic)");
    expect(ruleDisplayName({ rule: "generec", rate: 1, variant: "symmetric-midpoint" })).toBe("generec (symmetric-midpoint)");
    expect(ruleDisplayName({ rule: "eqprop", beta: 0.1, rate: 1 })).toBe("eqprop (one-sided)");
    expect(ruleDisplayName({ rule: "eqprop", beta: 0.1, rate: 1, mode: "symmetric" })).toBe("eqprop (symmetric)");
    expect(ruleDisplayName({ rule: "calcium", rate: 1, threshold: "blend", timing: "continuous" })).toBe("calcium");
    expect(ruleDisplayName({ rule: "direct-feedback-alignment", rate: 1 })).toBe("direct-feedback-alignment");
  });

  it("refuses an invalid config with the typed error", () => {
    expect(() => ruleDisplayName({ rule: "calcium", rate: 1, mix: 0.5 } as never)).toThrow(EbbflowError);
  });
});
