/**
 * The public surface, snapshotted: every change to what the package root, `ebbflow/kernels` and
 * `ebbflow/node` export must be deliberate (update test/fixtures/public-api.json in the same change).
 */
import { describe, it, expect } from "vitest";
import { readFileSync } from "node:fs";
import path from "node:path";
import * as root from "../src/index.js";
import * as kernels from "../src/kernels/public.js";

const here = import.meta.dirname;
const fixture = JSON.parse(readFileSync(path.join(here, "fixtures", "public-api.json"), "utf8")) as { root: string[]; rootTypes: string[]; kernels: string[] };

/** Names exported by `export { a, type B } from "..."` clauses of an entry file (values and types). */
function declared(file: string): { values: string[]; types: string[] } {
  const text = readFileSync(file, "utf8");
  const values: string[] = [];
  const types: string[] = [];
  for (const m of text.matchAll(/export\s*\{([^}]*)\}\s*from/g)) {
    for (const raw of m[1]!.split(",")) {
      const name = raw.trim();
      if (name === "") continue;
      if (name.startsWith("type ")) types.push(name.slice(5).trim());
      else values.push(name);
    }
  }
  return { values: values.sort(), types: types.sort() };
}

describe("the public API", () => {
  it("the package root exports exactly the listed values and types, by name (no export *)", () => {
    const src = readFileSync(path.join(here, "..", "src", "index.ts"), "utf8");
    expect(src).not.toMatch(/export\s*\*/);
    expect(Object.keys(root).sort()).toEqual(fixture.root);
    const d = declared(path.join(here, "..", "src", "index.ts"));
    expect(d.values).toEqual(fixture.root);
    expect(d.types).toEqual(fixture.rootTypes);
  });

  it("the root holds no generic kernel names: those live under ebbflow/kernels", () => {
    expect(Object.keys(kernels).sort()).toEqual(fixture.kernels);
    const blas = ["gemm", "gemv", "ger", "axpy", "axpby", "scale", "fill", "copy", "add", "sub", "mul", "dot", "sumSquares", "maxAbs", "maxAbsDiff", "allFinite", "sumRows", "addRowVector", "fillUnit"];
    for (const name of blas) {
      expect(Object.keys(kernels)).toContain(name);
      expect(Object.keys(root)).not.toContain(name);
    }
  });
});
