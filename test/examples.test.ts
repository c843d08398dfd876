import { describe, it, expect } from "vitest";
import { runEmbeddingExample } from "../examples/embedding.js";

describe("docs/guide/embedding.md worked example", () => {
  it("verifies the rule, trains with a custom loop and reads a trace, as the guide says", () => {
    const r = runEmbeddingExample();
    expect(r.cosine).toBeGreaterThan(0.9999);
    expect(r.after).toBeLessThan(0.1 * r.before);
    expect(r.traceMean).toBeGreaterThan(0);
    expect(r.traceMean).toBeLessThan(1);
  });
});
