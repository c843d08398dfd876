/**
 * The package's entry points, resolved by Node through package.json "exports" (the package refers to itself by
 * name, as an installed copy is referred to): ESM imports, the ESM-only message of require(), the schemas, the
 * shipped data and package.json.
 */
import { spawnSync } from "node:child_process";
import { readFileSync } from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";

const root = path.resolve(import.meta.dirname, "..");
const node = (args: string[]) => spawnSync(process.execPath, args, { encoding: "utf8", cwd: root });
const pkg = JSON.parse(readFileSync(path.join(root, "package.json"), "utf8")) as { version: string; license: string; engines: { node: string } };

describe("package entry points", () => {
  it('require("ebbflow"), require("ebbflow/node") and require("ebbflow/kernels") throw the ESM-only message (ERR_REQUIRE_ESM), naming import()', () => {
    for (const id of ["ebbflow", "ebbflow/node", "ebbflow/kernels"]) {
      const r = node(["-e", `try { require(${JSON.stringify(id)}); console.log("loaded"); } catch (e) { console.log(e.code + " " + e.message); }`]);
      expect(r.stdout.trim()).toMatch(/^ERR_REQUIRE_ESM ebbflow is an ES module package and cannot be loaded with require\(\)\..*await import\("ebbflow"\)/);
    }
  });

  it("import works for both entry points; schemas, data and package.json resolve through exports", () => {
    const r = node([
      "--input-type=module",
      "-e",
      `const core = await import("ebbflow"); const n = await import("ebbflow/node");
       const { createRequire } = await import("node:module"); const require = createRequire(import.meta.url);
       console.log(typeof core.buildNetwork, typeof n.loadModel);
       console.log(require("ebbflow/schema/network.schema.json").type === "object", require("ebbflow/package.json").version);
       console.log(require.resolve("ebbflow/data/iris.csv").endsWith("data/iris.csv"));`,
    ]);
    expect(r.stdout.trim().split("\n"), r.stderr).toEqual(["function function", `true ${pkg.version}`, "true"]);
  });

  it("the licence file is MIT, as package.json says", () => {
    expect(pkg.license).toBe("MIT");
    expect(readFileSync(path.join(root, "LICENSE"), "utf8")).toMatch(/^MIT License\n/);
  });

  it("examples/iris.json (shipped) is the experiment file the command-line guide prints", () => {
    const guide = readFileSync(path.join(root, "docs/guide/cli.md"), "utf8");
    const printed = /```json\n([\s\S]*?)```/.exec(guide)![1]!;
    expect(JSON.parse(readFileSync(path.join(root, "examples/iris.json"), "utf8"))).toEqual(JSON.parse(printed));
  });
});
