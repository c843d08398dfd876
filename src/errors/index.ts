/**
 * The one error type of ebbflow: every problem carries a machine-readable
 * code, the path of the offending value, what was expected and what was found.
 * @module
 */

/** Machine-readable kind of a problem. @category Errors */
export type ErrorCode =
  | "invalid_parameter"
  | "invalid_config"
  | "unknown_name"
  | "shape_mismatch"
  | "divergence"
  | "non_finite_update"
  | "unsupported"
  | "io_error"
  | "parse_error"
  | "resource_limit";

/** One problem found in a value, a config or a run. @category Errors */
export interface Issue {
  /** Kind of problem. */
  readonly code: ErrorCode;
  /** Where the problem sits, e.g. `layers[2].size` or `traces.tau`. */
  readonly path: string;
  /** What a valid value looks like, in words. */
  readonly expected: string;
  /** What was found, rendered as text. */
  readonly received: string;
  /** Optional extra detail (for example the settling step). */
  readonly detail?: string;
}

/** Renders any value compactly for an error message (never throws). @category Errors */
export function describeValue(value: unknown): string {
  if (typeof value === "number") {
    if (Number.isNaN(value)) return "NaN";
    if (!Number.isFinite(value)) return value > 0 ? "Infinity" : "-Infinity";
    return String(value);
  }
  if (typeof value === "string") return JSON.stringify(value);
  if (value === undefined) return "undefined (missing)";
  if (value === null) return "null";
  if (typeof value === "bigint" || typeof value === "boolean") return String(value);
  if (Array.isArray(value)) return `array of length ${value.length}`;
  if (ArrayBuffer.isView(value)) return `${value.constructor.name} of length ${(value as unknown as { length: number }).length}`;
  if (typeof value === "function") return "a function";
  try {
    const s = JSON.stringify(value);
    return s.length > 80 ? `${s.slice(0, 77)}...` : s;
  } catch {
    return "an object";
  }
}

/** Formats one issue as a line: `path: expected X, received Y`. @category Errors */
export function formatIssue(issue: Issue): string {
  const where = issue.path === "" ? "(root)" : issue.path;
  const detail = issue.detail ? ` (${issue.detail})` : "";
  return `${where}: expected ${issue.expected}, received ${issue.received}${detail} [${issue.code}]`;
}

/**
 * The typed error thrown by every part of ebbflow.
 *
 * `code`, `path`, `expected` and `received` describe the first problem;
 * `issues` lists every problem found (config parsing reports all at once).
 * @category Errors
 * @example
 * ```ts
 * try { exponentialTrace({ tau: -1, dt: 1 }); }
 * catch (e) { if (e instanceof EbbflowError) console.log(e.code, e.path); } // invalid_parameter tau
 * ```
 */
export class EbbflowError extends Error {
  readonly code: ErrorCode;
  readonly path: string;
  readonly expected: string;
  readonly received: string;
  readonly issues: readonly Issue[];

  constructor(issues: Issue | readonly Issue[]) {
    const list: readonly Issue[] = Array.isArray(issues) ? issues : [issues as Issue];
    if (list.length === 0) throw new TypeError("EbbflowError needs at least one issue");
    const first = list[0] as Issue;
    const message =
      list.length === 1
        ? formatIssue(first)
        : `${list.length} problems:\n` + list.slice(0, 100).map((i) => `  - ${formatIssue(i)}`).join("\n") + (list.length > 100 ? `\n  ... and ${list.length - 100} more` : "");
    super(message);
    this.name = "EbbflowError";
    this.code = first.code;
    this.path = first.path;
    this.expected = first.expected;
    this.received = first.received;
    this.issues = list;
  }
}

/** Renders a zod path as `layers[2].size`. @category Errors */
export function formatPath(path: readonly PropertyKey[]): string {
  let out = "";
  for (const key of path) {
    if (typeof key === "number") out += `[${key}]`;
    else out += out === "" ? String(key) : `.${String(key)}`;
  }
  return out;
}

/** The value found at a path (zod path segments) inside `root`, or undefined. @category Errors */
export function valueAt(root: unknown, path: readonly PropertyKey[]): unknown {
  let v: unknown = root;
  for (const key of path) {
    if (v === null || typeof v !== "object") return undefined;
    v = (v as Record<PropertyKey, unknown>)[key];
  }
  return v;
}

/**
 * Joins two config paths: `joinPath("layers[0].unit", "gain")` is `layers[0].unit.gain`,
 * `joinPath("range", "[0]")` is `range[0]`; an empty side leaves the other.
 * @category Errors
 */
export function joinPath(prefix: string, rest: string): string {
  if (prefix === "") return rest;
  if (rest === "") return prefix;
  return rest.startsWith("[") ? prefix + rest : `${prefix}.${rest}`;
}

/** Builds an issue; `received` is rendered with {@link describeValue}. @category Errors */
export function issue(code: ErrorCode, path: string, expected: string, received: unknown, detail?: string): Issue {
  return issueText(code, path, expected, describeValue(received), detail);
}

/** Builds an issue whose `received` is already a description in words. @category Errors */
export function issueText(code: ErrorCode, path: string, expected: string, received: string, detail?: string): Issue {
  return detail === undefined ? { code, path, expected, received } : { code, path, expected, received, detail };
}

/** Throws an {@link EbbflowError} with one issue. @category Errors */
export function fail(code: ErrorCode, path: string, expected: string, received: unknown, detail?: string): never {
  throw new EbbflowError(issue(code, path, expected, received, detail));
}

/** Requires a finite number. @category Errors */
export function requireFinite(path: string, value: unknown): number {
  if (typeof value !== "number" || !Number.isFinite(value)) fail("invalid_parameter", path, "a finite number", value);
  return value;
}

/** Requires a finite number > 0. @category Errors */
export function requirePositive(path: string, value: unknown): number {
  if (typeof value !== "number" || !Number.isFinite(value) || value <= 0) fail("invalid_parameter", path, "a finite number > 0", value);
  return value;
}

/** Requires a finite number >= 0. @category Errors */
export function requireNonNegative(path: string, value: unknown): number {
  if (typeof value !== "number" || !Number.isFinite(value) || value < 0) fail("invalid_parameter", path, "a finite number >= 0", value);
  return value;
}

/** Requires an integer >= `min`. @category Errors */
export function requireInteger(path: string, value: unknown, min = 1): number {
  if (typeof value !== "number" || !Number.isInteger(value) || value < min) fail("invalid_parameter", path, `an integer >= ${min}`, value);
  return value;
}

/** Requires a finite number in the open interval (lo, hi). @category Errors */
export function requireOpenInterval(path: string, value: unknown, lo: number, hi: number): number {
  if (typeof value !== "number" || !Number.isFinite(value) || value <= lo || value >= hi) {
    fail("invalid_parameter", path, `a number in the open interval (${lo}, ${hi})`, value);
  }
  return value;
}

export { inputShapeIssues, capIssues, MAX_INPUT_DEPTH, MAX_ISSUES, RESERVED_KEYS } from "./input.js";
