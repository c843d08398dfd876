import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { createHash } from "node:crypto";
import { canonicalJson, contentId, sha256Bytes, sha256Hex } from "../../src/sweep/hash.js";
import { EbbflowError } from "../../src/errors/index.js";
import { check } from "../helpers/property.js";

const nodeSha = (data: string | Uint8Array) => createHash("sha256").update(data).digest("hex");
const hex = (b: Uint8Array) => Buffer.from(b).toString("hex");

describe("SHA-256 in plain JavaScript", () => {
  it("matches the published test vectors", () => {
    // NIST FIPS 180-2 (2002), Appendix B.1: one-block message "abc"
    expect(sha256Hex("abc")).toBe("ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    // NIST FIPS 180-2, Appendix B.2: two-block message (448 bits)
    expect(sha256Hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq")).toBe("248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
    // NIST FIPS 180-2, Appendix B.3: one million repetitions of "a"
    expect(sha256Hex("a".repeat(1_000_000))).toBe("cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
    // the empty message: value from memory, and checked against Node's own SHA-256 in the next test
    expect(sha256Hex("")).toBe("e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
  });

  it("equals Node's own SHA-256 on random bytes, especially around the 55/56/64-byte padding boundaries", () => {
    check(
      fc.property(fc.oneof(fc.uint8Array({ maxLength: 300 }), fc.integer({ min: 50, max: 130 }).map((n) => new Uint8Array(n).fill(0x61))), (bytes) => {
        expect(hex(sha256Bytes(bytes))).toBe(nodeSha(bytes));
      }),
      300,
    );
  });

  it("hashes the UTF-8 bytes of text (equals Node's SHA-256 on random Unicode strings)", () => {
    check(
      fc.property(fc.string({ unit: "grapheme", maxLength: 60 }), (s) => {
        expect(sha256Hex(s)).toBe(nodeSha(Buffer.from(s, "utf8")));
      }),
    );
  });
});

/** Rebuilds a JSON value with every object's keys in a shuffled order. */
function shuffleKeys(v: unknown, order: (keys: string[]) => string[]): unknown {
  if (Array.isArray(v)) return v.map((x) => shuffleKeys(x, order));
  if (v !== null && typeof v === "object") {
    const o = v as Record<string, unknown>;
    const out: Record<string, unknown> = {};
    // defined, not assigned: a key named "__proto__" (fast-check draws it) stays an own key instead of setting the prototype
    for (const k of order(Object.keys(o))) Object.defineProperty(out, k, { value: shuffleKeys(o[k], order), enumerable: true, writable: true, configurable: true });
    return out;
  }
  return v;
}

describe("canonical JSON and content ids", () => {
  it("sorts keys at every depth", () => {
    expect(canonicalJson({ b: 1, a: [2, { d: 3, c: 4 }] })).toBe('{"a":[2,{"c":4,"d":3}],"b":1}');
  });

  it("does not depend on key order, and parses back to an equal value", () => {
    check(
      fc.property(fc.jsonValue({ maxDepth: 4 }), fc.integer(), (value, salt) => {
        const reversed = shuffleKeys(value, (k) => k.slice().reverse());
        const rotated = shuffleKeys(value, (k) => k.map((_, i) => k[(i + Math.abs(salt)) % k.length] as string));
        expect(canonicalJson(reversed)).toBe(canonicalJson(value));
        expect(canonicalJson(rotated)).toBe(canonicalJson(value));
        expect(contentId(rotated)).toBe(contentId(value));
        // JSON equality up to -0 (JSON has no negative zero)
        expect(JSON.parse(canonicalJson(value))).toEqual(JSON.parse(JSON.stringify(value)));
      }),
    );
  });

  it("gives different ids to different values (no collisions among many distinct small configs)", () => {
    const ids = new Set<string>();
    for (let rate = 1; rate <= 200; rate++) for (const size of [2, 3, 4, 5, 6]) ids.add(contentId({ rule: { rule: "generec", rate: rate / 100 }, size }));
    expect(ids.size).toBe(1000);
    expect(contentId({ a: 1 })).toMatch(/^[0-9a-f]{16}$/);
  });

  it("rejects values JSON cannot hold, naming where they sit", () => {
    try {
      canonicalJson({ a: [1, Number.NaN] });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(EbbflowError);
      expect((e as EbbflowError).path).toBe("value.a[1]");
      expect((e as EbbflowError).code).toBe("invalid_parameter");
    }
    expect(() => canonicalJson({ f: () => 1 })).toThrow(EbbflowError);
    expect(() => canonicalJson(Infinity)).toThrow(/finite/);
  });
});
