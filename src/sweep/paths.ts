/**
 * Config paths of a sweep, such as `rule.rate`, `network.layers[1].size` or `rule.rates["in->hidden"]`:
 * parsing, formatting, and reading or writing the value they name inside a run's config.
 * @module
 */
import { RESERVED_KEYS } from "../errors/index.js";

/** One step of a config path: an object key or an array index. @category Sweeps */
export type PathSegment = string | number;

const IDENT = /^[A-Za-z_$][\w$]*/;

/**
 * Parses a config path: dot-separated names, `[N]` array indices, and `["key"]` for keys that are not plain
 * names (JSON string syntax).
 * @param text - The path as written, e.g. `network.layers[1].size`.
 * @returns The segments, or a description of what is wrong with the path.
 * @category Sweeps
 * @example
 * ```ts
 * parseConfigPath("network.layers[1].size"); // { ok: true, segments: ["network", "layers", 1, "size"] }
 * ```
 */
export function parseConfigPath(text: string): { readonly ok: true; readonly segments: readonly PathSegment[] } | { readonly ok: false; readonly problem: string } {
  const segments: PathSegment[] = [];
  let rest = text;
  const first = IDENT.exec(rest);
  if (first === null) return { ok: false, problem: "a path starting with a field name such as rule, network, training or data" };
  segments.push(first[0]);
  rest = rest.slice(first[0].length);
  while (rest.length > 0) {
    if (rest.startsWith(".")) {
      const m = IDENT.exec(rest.slice(1));
      if (m === null) return { ok: false, problem: `a field name after "." at ${JSON.stringify(rest)}` };
      segments.push(m[0]);
      rest = rest.slice(1 + m[0].length);
    } else if (rest.startsWith("[")) {
      const index = /^\[(\d+)\]/.exec(rest);
      if (index !== null) {
        segments.push(Number(index[1]));
        rest = rest.slice(index[0].length);
        continue;
      }
      const quoted = /^\[("(?:[^"\\]|\\.)*")\]/.exec(rest);
      if (quoted === null) return { ok: false, problem: `[index] or ["key"] at ${JSON.stringify(rest)}` };
      try {
        segments.push(JSON.parse(quoted[1] as string) as string);
      } catch {
        return { ok: false, problem: `a JSON string key at ${JSON.stringify(rest)}` };
      }
      rest = rest.slice(quoted[0].length);
    } else return { ok: false, problem: `"." or "[" at ${JSON.stringify(rest)}` };
  }
  // keys that name the object machinery are never config fields (and must never be followed or set)
  const reserved = segments.find((s) => typeof s === "string" && RESERVED_KEYS.has(s));
  if (reserved !== undefined) return { ok: false, problem: `no reserved key such as ${JSON.stringify(reserved)}` };
  return { ok: true, segments };
}

/**
 * Writes segments back as a config path (plain names joined by dots, `[N]`, `["key"]` for other keys).
 * @param segments - The path's steps.
 * @returns The path text; {@link parseConfigPath} reads it back to the same segments.
 * @category Sweeps
 */
export function formatConfigPath(segments: readonly PathSegment[]): string {
  let out = "";
  for (const s of segments) {
    if (typeof s === "number") out += `[${s}]`;
    else if (/^[A-Za-z_$][\w$]*$/.test(s)) out += out === "" ? s : `.${s}`;
    else out += `[${JSON.stringify(s)}]`;
  }
  return out;
}

/** Where a path leads inside a value: found (the value there), or where it stops. @category Sweeps */
export type PathLookup =
  | { readonly found: true; readonly value: unknown }
  | { readonly found: false; readonly depth: number; readonly parentKind: "object" | "array" | "other"; readonly available: readonly string[] };

/**
 * Follows a path inside plain data. When it fails, `depth` is the index of the first segment that does not
 * exist, `parentKind` says what the value before it was, and `available` lists that value's keys (for messages).
 * @param root - The value to search.
 * @param segments - The path.
 * @returns The lookup result.
 * @category Sweeps
 */
export function lookupPath(root: unknown, segments: readonly PathSegment[]): PathLookup {
  let v: unknown = root;
  for (let i = 0; i < segments.length; i++) {
    const key = segments[i] as PathSegment;
    if (Array.isArray(v)) {
      if (typeof key === "number" && key < v.length) {
        v = v[key];
        continue;
      }
      return { found: false, depth: i, parentKind: "array", available: [`indices 0 to ${v.length - 1}`] };
    }
    if (v !== null && typeof v === "object") {
      const obj = v as Record<string, unknown>;
      if (typeof key === "string" && Object.prototype.hasOwnProperty.call(obj, key)) {
        v = obj[key];
        continue;
      }
      return { found: false, depth: i, parentKind: "object", available: Object.keys(obj) };
    }
    return { found: false, depth: i, parentKind: "other", available: [] };
  }
  return { found: true, value: v };
}

/**
 * Sets the value at a path inside plain data, in place. Every step but the last must exist; the last may
 * be a new key of an object.
 * @param root - The value to change (an object).
 * @param segments - The path (at least one segment).
 * @param value - The new value (stored as given, not copied).
 * @returns Whether the path could be followed.
 * @category Sweeps
 */
export function setPath(root: unknown, segments: readonly PathSegment[], value: unknown): boolean {
  if (segments.length === 0) return false;
  const parent = lookupPath(root, segments.slice(0, -1));
  if (!parent.found) return false;
  const key = segments[segments.length - 1] as PathSegment;
  const p = parent.value;
  if (Array.isArray(p)) {
    if (typeof key !== "number" || key >= p.length) return false;
    p[key] = value;
    return true;
  }
  if (p === null || typeof p !== "object" || typeof key !== "string") return false;
  (p as Record<string, unknown>)[key] = value;
  return true;
}

/**
 * Whether path `outer` equals `inner` or contains it (`rule` contains `rule.rate`).
 * @param outer - The shorter path.
 * @param inner - The longer path.
 * @returns True when every segment of `outer` starts `inner`.
 * @category Sweeps
 */
export function pathContains(outer: readonly PathSegment[], inner: readonly PathSegment[]): boolean {
  if (outer.length > inner.length) return false;
  for (let i = 0; i < outer.length; i++) if (outer[i] !== inner[i]) return false;
  return true;
}
