/**
 * Generators of bad input for the fuzz suite: mutations of valid JSON values (a value replaced by a hostile
 * one, a key removed, an unknown or reserved key added, a value wrapped or nested very deep) and bit flips
 * of valid file texts. Each mutation is plain data drawn by fast-check and applied deterministically, so a
 * failing case is reproduced from its seed.
 * @module
 */
import fc from "fast-check";

/** Values that break naive code: out-of-range numbers, wrong types, huge or deep structures, reserved keys. */
export const hostileValue: fc.Arbitrary<unknown> = fc.oneof(
  { arbitrary: fc.constantFrom<unknown>(-1, 0, -0, 0.5, 1, 2, 1e308, -1e308, 1e39, -1e39, 2147483647, 2147483648, 1e9, 1e15, 2 ** 53 + 2, Number.MIN_VALUE, -1e-300, 255, 256, 65536), weight: 4 },
  { arbitrary: fc.constantFrom<unknown>(NaN, Infinity, -Infinity, undefined), weight: 2 },
  { arbitrary: fc.constantFrom<unknown>(null, true, false, "", "x", "-1", "1e3", "0x3", " 3", "constructor", "__proto__", "toString", "../../etc", "a/b", "\u0000", "é"), weight: 3 },
  { arbitrary: fc.constantFrom<unknown>([], {}, [null], [-1], [1, 2, 3], { __proto__: null }, JSON.parse('{"__proto__": 1}'), { constructor: 1 }, { prototype: {} }), weight: 3 },
  { arbitrary: fc.double(), weight: 2 },
  { arbitrary: fc.integer(), weight: 2 },
  { arbitrary: fc.string({ maxLength: 8 }), weight: 2 },
  { arbitrary: fc.jsonValue({ maxDepth: 3 }), weight: 2 },
  // deep nesting (up to 100,000 levels) and long arrays (the 2e5-entry case is drawn by the sweep kind)
  { arbitrary: fc.integer({ min: 65, max: 100_000 }).map((depth) => nested(depth)), weight: 1 },
  { arbitrary: fc.integer({ min: 1000, max: 20_000 }).map((n) => new Array<unknown>(n).fill(-1)), weight: 1 },
);

/** A value nested `depth` levels deep: `[[[...[1]...]]]`, built without recursion. */
export function nested(depth: number): unknown {
  let v: unknown = 1;
  for (let i = 0; i < depth; i++) v = i % 2 === 0 ? [v] : { a: v };
  return v;
}

/** One mutation of a JSON value. */
export interface JsonMutation {
  /** Which path of the value (modulo the number of paths). */
  readonly at: number;
  readonly op: "replace" | "delete" | "add-key" | "add-reserved" | "wrap" | "duplicate-array";
  readonly value: unknown;
  readonly key: string;
}

/** A random mutation of a JSON value (1 to 3 of them per case). */
export const jsonMutations: fc.Arbitrary<JsonMutation[]> = fc.array(
  fc.record({
    at: fc.nat(),
    op: fc.constantFrom("replace", "replace", "replace", "delete", "add-key", "add-reserved", "wrap", "duplicate-array"),
    value: hostileValue,
    key: fc.oneof(fc.constantFrom("zz", "x", "kind", "epoch", "size", "rate"), fc.string({ maxLength: 6 })),
  }),
  { minLength: 1, maxLength: 3 },
);

type Path = (string | number)[];

/** Every path of a JSON value (its root included), depth first, without recursion. */
export function paths(value: unknown, limit = 5000): Path[] {
  const out: Path[] = [];
  const stack: [unknown, Path][] = [[value, []]];
  while (stack.length > 0 && out.length < limit) {
    const [v, p] = stack.pop()!;
    out.push(p);
    // mutations go no deeper than a document's own structure (deep values come in whole)
    if (p.length >= 12) continue;
    if (Array.isArray(v)) {
      // long arrays: only a few of their elements
      const n = v.length;
      const picks = n <= 8 ? [...Array(n).keys()] : [0, 1, n >> 1, n - 1];
      for (const i of picks) stack.push([v[i], [...p, i]]);
    } else if (v !== null && typeof v === "object") for (const k of Object.keys(v)) stack.push([(v as Record<string, unknown>)[k], [...p, k]]);
  }
  return out;
}

function parentOf(root: unknown, p: Path): unknown {
  let v = root;
  for (const k of p.slice(0, -1)) v = (v as Record<string | number, unknown>)[k];
  return v;
}

/** A deep copy of JSON data (cycles never occur here), without recursion limits for ordinary values. */
export function copy<T>(v: T): T {
  return structuredClone(v);
}

/**
 * Applies mutations to a copy of a JSON value.
 * @returns The mutated value, and whether a mutation made it invalid by construction (a reserved key added).
 */
export function applyMutations(base: unknown, mutations: readonly JsonMutation[]): { value: unknown; mustRefuse: boolean } {
  let root: unknown = copy(base);
  for (const m of mutations) {
    const all = paths(root);
    const p = all[m.at % all.length]!;
    const target = p.length === 0 ? root : (parentOf(root, p) as Record<string | number, unknown>)[p[p.length - 1]!];
    const set = (v: unknown) => {
      if (p.length === 0) root = v;
      else (parentOf(root, p) as Record<string | number, unknown>)[p[p.length - 1]!] = v;
    };
    switch (m.op) {
      case "replace":
        set(m.value);
        break;
      case "delete":
        if (p.length > 0) {
          const parent = parentOf(root, p) as Record<string | number, unknown>;
          if (Array.isArray(parent)) parent.splice(p[p.length - 1] as number, 1);
          else delete parent[p[p.length - 1]!];
        }
        break;
      case "add-key":
        if (target !== null && typeof target === "object" && !Array.isArray(target)) (target as Record<string, unknown>)[m.key] = m.value;
        break;
      case "add-reserved":
        if (target !== null && typeof target === "object" && !Array.isArray(target)) {
          const key = ["__proto__", "constructor", "prototype"][m.at % 3]!;
          Object.defineProperty(target, key, { value: m.value ?? 1, enumerable: true, configurable: true, writable: true });
        }
        break;
      case "wrap":
        set([target]);
        break;
      case "duplicate-array":
        if (Array.isArray(target)) set([...target, ...target]);
        break;
    }
  }
  // invalid by construction when a reserved key is still there after every mutation
  return { value: root, mustRefuse: holdsReservedKey(root) };
}

/** Whether a value holds one of the reserved keys anywhere (walked without recursion, up to 100,000 nodes). */
export function holdsReservedKey(v: unknown): boolean {
  const stack = [v];
  let seen = 0;
  while (stack.length > 0 && seen++ < 100_000) {
    const x = stack.pop();
    if (x === null || typeof x !== "object" || ArrayBuffer.isView(x)) continue;
    for (const k of Object.keys(x)) {
      if (k === "__proto__" || k === "constructor" || k === "prototype") return true;
      stack.push((x as Record<string, unknown>)[k]);
    }
  }
  return false;
}

/** Flips of bits in a text's UTF-8 bytes (1 to 3), at positions drawn as fractions of the length. */
export const bitFlips: fc.Arbitrary<{ at: number; bit: number }[]> = fc.array(fc.record({ at: fc.double({ min: 0, max: 1, maxExcluded: true, noNaN: true }), bit: fc.integer({ min: 0, max: 7 }) }), { minLength: 1, maxLength: 3 });

/** Applies bit flips to a text (decoded back leniently: invalid UTF-8 becomes U+FFFD, as a file reader would). */
export function flipBits(text: string, flips: readonly { at: number; bit: number }[]): string {
  const bytes = new TextEncoder().encode(text);
  for (const f of flips) {
    const i = Math.min(bytes.length - 1, Math.floor(f.at * bytes.length));
    bytes[i] = (bytes[i] as number) ^ (1 << f.bit);
  }
  return new TextDecoder("utf-8", { fatal: false }).decode(bytes);
}

/** Edits of a text: a range deleted, a line cut short, bytes inserted. */
export const textEdits: fc.Arbitrary<{ at: number; kind: "cut" | "truncate" | "insert"; text: string; length: number }> = fc.record({
  at: fc.double({ min: 0, max: 1, maxExcluded: true, noNaN: true }),
  kind: fc.constantFrom("cut", "truncate", "insert"),
  text: fc.oneof(fc.string({ maxLength: 10 }), fc.constantFrom("\n", "{", "}", '"', ",", "null", "-1", "NaN", "\u0000")),
  length: fc.integer({ min: 1, max: 200 }),
});

export function editText(text: string, e: { at: number; kind: "cut" | "truncate" | "insert"; text: string; length: number }): string {
  const i = Math.floor(e.at * text.length);
  if (e.kind === "cut") return text.slice(0, i) + text.slice(i + e.length);
  if (e.kind === "truncate") return text.slice(0, i);
  return text.slice(0, i) + e.text + text.slice(i);
}

/**
 * JSON text of a value, as `JSON.stringify` writes it (NaN and infinities as null, undefined fields left out)
 * but without recursion, so that values nested 100,000 levels deep can be written as files.
 */
export function toJsonText(value: unknown): string {
  const out: string[] = [];
  // a stack of things to write: values, or literal text
  const stack: ({ v: unknown } | { text: string })[] = [{ v: value }];
  while (stack.length > 0) {
    const item = stack.pop()!;
    if ("text" in item) {
      out.push(item.text);
      continue;
    }
    const v = item.v;
    if (v === null || v === undefined || typeof v === "function" || typeof v === "symbol") out.push("null");
    else if (typeof v === "number") out.push(Number.isFinite(v) ? JSON.stringify(v) : "null");
    else if (typeof v === "string" || typeof v === "boolean") out.push(JSON.stringify(v));
    else if (typeof v === "bigint") out.push(String(v));
    else if (ArrayBuffer.isView(v)) out.push(JSON.stringify(Array.from(v as unknown as ArrayLike<number>)));
    else if (Array.isArray(v)) {
      const parts: ({ v: unknown } | { text: string })[] = [{ text: "[" }];
      v.forEach((x, i) => {
        if (i > 0) parts.push({ text: "," });
        parts.push({ v: x });
      });
      parts.push({ text: "]" });
      for (let i = parts.length - 1; i >= 0; i--) stack.push(parts[i]!);
    } else {
      const o = v as Record<string, unknown>;
      const keys = Object.keys(o).filter((k) => o[k] !== undefined && typeof o[k] !== "function");
      const parts: ({ v: unknown } | { text: string })[] = [{ text: "{" }];
      keys.forEach((k, i) => {
        parts.push({ text: `${i > 0 ? "," : ""}${JSON.stringify(k)}:` });
        parts.push({ v: o[k] });
      });
      parts.push({ text: "}" });
      for (let i = parts.length - 1; i >= 0; i--) stack.push(parts[i]!);
    }
  }
  return out.join("");
}

/** `JSON.parse` (which does not recurse in V8, so deep texts read fine). */
export function fromJsonText(text: string): unknown {
  return JSON.parse(text) as unknown;
}
