import { describe, it, expect } from "vitest";
import { readFileSync, writeFileSync, mkdtempSync } from "node:fs";
import { execFileSync } from "node:child_process";
import { tmpdir } from "node:os";
import path from "node:path";

describe("README", () => {
  it("the embedding example runs as printed (each console.log prints what its comment says)", () => {
    const root = path.resolve(import.meta.dirname, "..");
    const readme = readFileSync(path.join(root, "README.md"), "utf8");
    const block = /## Embedding[\s\S]*?```ts\n([\s\S]*?)```/.exec(readme)?.[1];
    expect(block).toBeDefined();
    const code = block!.replace(/from "ebbflow"/g, `from ${JSON.stringify(path.join(root, "dist", "index.js"))}`);
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-readme-"));
    const file = path.join(dir, "example.mjs");
    writeFileSync(file, code);
    const out = execFileSync(process.execPath, [file], { encoding: "utf8" }).trim().split("\n");
    const expected = code
      .split("\n")
      .filter((l) => l.includes("console.log("))
      .map((l) => l.split("// ")[1]!.replace(/\s+\(.*\)$/, "").trim());
    expect(out.map((l) => l.trim())).toEqual(expected);
  });
});
