/**
 * The plotting stack (vega, vega-lite: optional peer dependencies) is loaded on the first render, never by
 * importing `ebbflow/node`; without it, plotting is a typed error naming the install command. Checked in a
 * fresh Node process whose module resolver refuses the two packages (a module customization hook, as if
 * they were not installed).
 */
import { spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { describe, expect, it } from "vitest";
import { stripExperiment } from "../sweep/fixtures.js";

const root = path.resolve(import.meta.dirname, "../..");

describe("plotting is loaded lazily", () => {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-lazy-"));
  writeFileSync(
    path.join(dir, "hooks.mjs"),
    `export async function resolve(specifier, context, next) {
  if (specifier === "vega" || specifier === "vega-lite" || specifier.startsWith("vega-")) {
    const e = new Error("Cannot find package '" + specifier + "' (refused by the test's resolver)");
    e.code = "ERR_MODULE_NOT_FOUND";
    throw e;
  }
  return next(specifier, context);
}
`,
  );
  writeFileSync(path.join(dir, "register.mjs"), `import { register } from "node:module";\nregister("./hooks.mjs", import.meta.url);\n`);
  const node = pathToFileURL(path.join(root, "dist", "node", "index.js")).href;

  it("importing ebbflow/node works without vega; renderSvg then throws unsupported naming the install command", () => {
    const script = `
const m = await import(${JSON.stringify(node)});
console.log("imported", typeof m.renderSvg, typeof m.loadModel);
try {
  await m.renderSvg({ mark: "point" });
  console.log("rendered");
} catch (e) {
  console.log(JSON.stringify({ name: e.name, code: e.code, path: e.path, expected: e.expected }));
}`;
    const r = spawnSync(process.execPath, ["--import", pathToFileURL(path.join(dir, "register.mjs")).href, "--input-type=module", "-e", script], { encoding: "utf8", cwd: dir });
    expect(r.status, r.stderr).toBe(0);
    const [first, second] = r.stdout.trim().split("\n");
    expect(first).toBe("imported function function");
    expect(JSON.parse(second!)).toEqual({
      name: "EbbflowError",
      code: "unsupported",
      path: "vega",
      expected: "the optional plotting packages vega and vega-lite installed (npm install vega@6.4.0 vega-lite@6.4.1)",
    });
  });

  it("without vega the demo and sweep summaries still run, leaving out their charts with the install command", () => {
    const cli = (args: string[]) =>
      spawnSync(process.execPath, ["--import", pathToFileURL(path.join(dir, "register.mjs")).href, path.join(root, "dist", "cli", "main.js"), ...args], { encoding: "utf8", cwd: dir });
    const demo = cli(["demo", "--seeds", "1", "--epochs", "20", "--out", "demo-out"]);
    expect(demo.status, demo.stderr).toBe(0);
    expect(demo.stdout).toContain("4. Learning curves not drawn: vega: expected the optional plotting packages vega and vega-lite installed (npm install vega@6.4.0 vega-lite@6.4.1)");
    expect(existsSync(path.join(dir, "demo-out"))).toBe(false);
    writeFileSync(path.join(dir, "strip.json"), JSON.stringify({ ...stripExperiment, training: { epochs: 2, batchSize: 2 } }));
    writeFileSync(path.join(dir, "strip.sweep.json"), JSON.stringify({ base: "strip.json", seeds: [1] }));
    expect(cli(["sweep", "run", "strip.sweep.json", "--workers", "1", "--out", "sweep"]).status).toBe(0);
    const summary = cli(["sweep", "summarize", "sweep"]);
    expect(summary.status, summary.stderr).toBe(0);
    expect(summary.stdout).toContain(`wrote ${path.join(dir, "sweep", "summary.json")}\n`);
    expect(summary.stdout).toContain("no chart: vega: expected the optional plotting packages");
    expect(existsSync(path.join(dir, "sweep", "plots"))).toBe(false);
  });

  it("with vega installed (this repository's dev dependencies) the same call renders", () => {
    const r = spawnSync(process.execPath, ["--input-type=module", "-e", `const m = await import(${JSON.stringify(node)}); console.log((await m.renderSvg({ data: { values: [{ x: 1 }] }, mark: "point", encoding: { x: { field: "x", type: "quantitative" } } })).slice(0, 4));`], { encoding: "utf8", cwd: root });
    expect([r.status, r.stdout.trim()], r.stderr).toEqual([0, "<svg"]);
  });
});
