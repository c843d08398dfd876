import { describe, it, expect } from "vitest";
import { readFileSync } from "node:fs";
import path from "node:path";
import { sweepJsonSchema } from "../../src/sweep/schema.js";

const root = path.resolve(import.meta.dirname, "../..");

describe("the sweep file's JSON Schema", () => {
  it("schema/sweep.schema.json is current (regenerate: node dist/cli/main.js sweep schema > schema/sweep.schema.json)", () => {
    const committed = JSON.parse(readFileSync(path.join(root, "schema", "sweep.schema.json"), "utf8")) as unknown;
    expect(committed).toEqual(sweepJsonSchema());
  });

  it("describes the fields editors need: base, grid, draws and seeds, with base and seeds required", () => {
    const s = sweepJsonSchema() as { $schema: string; properties: Record<string, { description?: string }>; required: string[]; additionalProperties: boolean };
    expect(s.$schema).toBe("https://json-schema.org/draft/2020-12/schema");
    expect(Object.keys(s.properties)).toEqual(["$schema", "name", "base", "grid", "draws", "seeds", "checkpointEvery"]);
    expect(s.required).toEqual(["base", "seeds"]);
    expect(s.additionalProperties).toBe(false);
    for (const k of ["base", "grid", "draws", "seeds"]) expect(s.properties[k]!.description, k).toMatch(/\w/);
    // the three kinds of draws
    expect(JSON.stringify(s.properties.draws)).toMatch(/"log-uniform"/);
    expect(JSON.stringify(s.properties.draws)).toMatch(/"choice"/);
  });
});
