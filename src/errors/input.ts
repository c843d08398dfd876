/**
 * Checks on raw input data before any schema sees it: nesting depth (deeply nested values would overflow
 * the call stack of recursive code such as `JSON.stringify`), keys that name the object machinery
 * (`__proto__`, `constructor`, `prototype`: refused like any unknown key rather than dropped or, worse,
 * followed), and a cap on how many problems one error lists.
 * @module
 */
import { describeValue, issueText, joinPath, type Issue } from "./index.js";

/** Deepest nesting of arrays and objects accepted in input files (ebbflow's own formats need fewer than 12 levels). @category Errors */
export const MAX_INPUT_DEPTH = 64;

/** Most problems listed in one error; further ones are counted in a last issue. @category Errors */
export const MAX_ISSUES = 100;

/** Object keys that are never fields of ebbflow's formats. @category Errors */
export const RESERVED_KEYS: ReadonlySet<string> = new Set(["__proto__", "constructor", "prototype"]);

/** `base` extended by one key: `a.b`, `a[2]`. */
function childPath(base: string, key: string | number): string {
  return joinPath(base, typeof key === "number" ? `[${key}]` : key);
}

/**
 * Problems of a raw input value's shape: nesting deeper than {@link MAX_INPUT_DEPTH}, reserved keys
 * (`__proto__`, `constructor`, `prototype`) at any depth. Walks iteratively (no recursion), typed arrays
 * are not entered. At most {@link MAX_ISSUES} issues are returned.
 * @param value - Parsed JSON (or any plain data).
 * @param prefix - Path of the value, e.g. `network` (default: the root, "").
 * @returns The problems, each with its path; empty when the value is fine.
 * @category Errors
 * @example
 * ```ts
 * inputShapeIssues(JSON.parse('{"rates": {"__proto__": 1}}'), "rule")[0]?.path; // "rule.rates.__proto__"
 * ```
 */
export function inputShapeIssues(value: unknown, prefix = ""): Issue[] {
  const out: Issue[] = [];
  const stack: [unknown, string, number][] = [[value, prefix, 0]];
  while (stack.length > 0 && out.length < MAX_ISSUES) {
    const [v, path, depth] = stack.pop() as [unknown, string, number];
    if (v === null || typeof v !== "object" || ArrayBuffer.isView(v)) continue;
    if (depth >= MAX_INPUT_DEPTH) {
      out.push(issueText("invalid_config", path === "" ? "(root)" : path, `values nested at most ${MAX_INPUT_DEPTH} levels deep`, "deeper nesting"));
      continue;
    }
    if (Array.isArray(v)) {
      for (let i = v.length - 1; i >= 0; i--) {
        const x = v[i] as unknown;
        if (x !== null && typeof x === "object") stack.push([x, childPath(path, i), depth + 1]);
      }
      continue;
    }
    const keys = Object.keys(v);
    for (let i = keys.length - 1; i >= 0; i--) {
      const k = keys[i] as string;
      const x = (v as Record<string, unknown>)[k];
      if (RESERVED_KEYS.has(k)) out.push(issueText("invalid_config", childPath(path, k), "no such field (reserved key)", describeValue(x)));
      else if (x !== null && typeof x === "object") stack.push([x, childPath(path, k), depth + 1]);
    }
  }
  return capIssues(out);
}

/**
 * At most {@link MAX_ISSUES} issues: the first ones, then one issue counting the rest.
 * @param issues - All problems found.
 * @returns The capped list (the same array when it is short enough).
 * @category Errors
 */
export function capIssues(issues: readonly Issue[]): Issue[] {
  if (issues.length <= MAX_ISSUES) return issues as Issue[];
  const kept = issues.slice(0, MAX_ISSUES - 1);
  const first = issues[MAX_ISSUES - 1] as Issue;
  kept.push(issueText(first.code, first.path, first.expected, first.received, `and ${issues.length - kept.length - 1} more problems not listed`));
  return kept;
}
