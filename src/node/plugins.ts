/**
 * Plugins: modules that define rules (and units) of your own, loaded by path so that the command line,
 * experiment and sweep files, worker threads and resumed runs all see the same definitions.
 *
 * A plugin is an ES module exporting `rules` (an array of rule descriptors) and/or `units` (an array of
 * unit descriptors), either as named exports or on its default export:
 *
 * ```js
 * import { defineRule, commonRuleFields } from "ebbflow";
 * export const rules = [defineRule({ name: "reward-hebbian", ... })];
 * ```
 * @module
 */
import path from "node:path";
import { pathToFileURL } from "node:url";
import { EbbflowError, fail, issueText, type Issue } from "../errors/index.js";
import { builtinRegistry, type Registry, type RegistryAdditions } from "../rules/registry.js";

/** Where a plugin specifier points: a file URL for paths (resolved against `baseDir`), else the specifier as is (a package name). */
export function resolvePlugin(specifier: string, baseDir: string = process.cwd()): string {
  if (/^[a-z]+:/i.test(specifier) && !/^[a-z]:[\\/]/i.test(specifier)) return specifier; // file:, data:, node: URLs
  if (specifier.startsWith(".") || path.isAbsolute(specifier)) return pathToFileURL(path.resolve(baseDir, specifier)).href;
  return specifier;
}

/** The additions a plugin module exports (named `rules`, or on its default export). */
function additionsOf(mod: Record<string, unknown>, at: string): RegistryAdditions {
  const source = (mod.rules === undefined && mod.units === undefined && mod.default !== null && typeof mod.default === "object" ? mod.default : mod) as Record<string, unknown>;
  const { rules, units } = source;
  if (rules === undefined && units === undefined) fail("invalid_config", at, "a module exporting `rules` (rule descriptors) and/or `units` (unit descriptors)", Object.keys(mod).join(", ") || "no exports");
  if (rules !== undefined && !Array.isArray(rules)) fail("invalid_config", `${at}.rules`, "an array of rule descriptors", rules);
  if (units !== undefined && !Array.isArray(units)) fail("invalid_config", `${at}.units`, "an array of unit descriptors", units);
  return { rules: rules as RegistryAdditions["rules"], units: units as RegistryAdditions["units"] };
}

/**
 * Imports plugin modules and returns `base` (default: the built-in rules and units) with their rules and units added; the
 * resolved module addresses are recorded in {@link Registry.plugins} so that worker threads import the same
 * modules. Relative paths are resolved against `baseDir` (default: the working directory).
 * @throws EbbflowError `io_error` for a module that cannot be imported (naming it), `invalid_config`
 *   for a module without `rules` or with a malformed or duplicate rule (all problems at once).
 * @category Files
 * @example
 * ```ts
 * const registry = await loadPlugins(["./my-rules.js"]);
 * const trainer = new Trainer(net, { rule: "reward-hebbian", rate: 0.1 }, data, { epochs: 10 }, { registry });
 * ```
 */
export async function loadPlugins(specifiers: readonly string[], options: { baseDir?: string | undefined; registry?: Registry | undefined } = {}): Promise<Registry> {
  let registry = options.registry ?? builtinRegistry;
  const problems: Issue[] = [];
  for (const [i, spec] of specifiers.entries()) {
    const at = `plugins[${i}]`;
    if (typeof spec !== "string" || spec.length === 0) {
      problems.push(issueText("invalid_config", at, "a module path", JSON.stringify(spec)));
      continue;
    }
    const href = resolvePlugin(spec, options.baseDir);
    if (registry.plugins.includes(href)) continue;
    let mod: Record<string, unknown>;
    try {
      mod = (await import(href)) as Record<string, unknown>;
    } catch (e) {
      problems.push(issueText("io_error", at, `an importable module (${href})`, (e as Error)?.message ?? String(e)));
      continue;
    }
    let additions: RegistryAdditions;
    try {
      additions = additionsOf(mod, at);
    } catch (e) {
      if (!(e instanceof EbbflowError)) throw e;
      problems.push(...e.issues);
      continue;
    }
    try {
      registry = registry.with({ ...additions, plugins: [href] });
    } catch (e) {
      if (!(e instanceof EbbflowError)) throw e;
      problems.push(...e.issues.map((x) => ({ ...x, path: `${at} (${spec}): ${x.path}` })));
    }
  }
  if (problems.length > 0) throw new EbbflowError(problems);
  return registry;
}
