import { describe, it, expect } from "vitest";
import { EbbflowError, formatIssue } from "../../src/index.js";
import { issue, describeValue } from "../../src/errors/index.js";

describe("EbbflowError", () => {
  it("carries the first issue's code, path, expected and received, and lists every issue in its message", () => {
    const e = new EbbflowError([issue("invalid_config", "layers[2].size", "a positive integer", 0), issue("invalid_config", "dynamics.dt", "a step dt > 0", -1)]);
    expect(e).toBeInstanceOf(Error);
    expect([e.name, e.code, e.path, e.expected, e.received]).toEqual(["EbbflowError", "invalid_config", "layers[2].size", "a positive integer", "0"]);
    expect(e.issues).toHaveLength(2);
    expect(e.message).toBe("2 problems:\n  - layers[2].size: expected a positive integer, received 0 [invalid_config]\n  - dynamics.dt: expected a step dt > 0, received -1 [invalid_config]");
  });

  it("renders values readably and never throws while doing so", () => {
    expect([describeValue(Number.NaN), describeValue(-Infinity), describeValue("x"), describeValue(undefined), describeValue([1, 2]), describeValue(new Float32Array(3))]).toEqual([
      "NaN",
      "-Infinity",
      '"x"',
      "undefined (missing)",
      "array of length 2",
      "Float32Array of length 3",
    ]);
    const cyclic: Record<string, unknown> = {};
    cyclic.self = cyclic;
    expect(describeValue(cyclic)).toBe("an object");
    expect(formatIssue(issue("divergence", "", "finite", Infinity, "step 3"))).toBe("(root): expected finite, received Infinity (step 3) [divergence]");
  });

  it("refuses to be built without an issue", () => {
    expect(() => new EbbflowError([])).toThrow(TypeError);
  });
});
