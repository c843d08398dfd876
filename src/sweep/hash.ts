/**
 * Stable identifiers for sweep runs: a canonical JSON text (object keys sorted, so key order never
 * matters) hashed with SHA-256, written in plain JavaScript so that the core needs no Node built-ins.
 * @module
 */
import { fail } from "../errors/index.js";

/** SHA-256 round constants: the first 32 bits of the fractional parts of the cube roots of the first 64 primes (NIST FIPS 180-4, 2015, sec. 4.2.2). */
const K = new Uint32Array([
  0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4, 0xab1c5ed5, 0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe, 0x9bdc06a7, 0xc19bf174,
  0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f, 0x4a7484aa, 0x5cb0a9dc, 0x76f988da, 0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7, 0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967,
  0x27b70a85, 0x2e1b2138, 0x4d2c6dfc, 0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85, 0xa2bfe8a1, 0xa81a664b, 0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070,
  0x19a4c116, 0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3, 0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208, 0x90befffa, 0xa4506ceb, 0xbef9a3f7, 0xc67178f2,
]);

/** The round constants as int32 (same bits), for the int32 arithmetic of {@link sha256Bytes}. */
const KI = new Int32Array(K.buffer);

/** Initial hash value: the first 32 bits of the fractional parts of the square roots of the first 8 primes (NIST FIPS 180-4, 2015, sec. 5.3.3). */
const H0 = [0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a, 0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19];

/**
 * SHA-256 digest of bytes (NIST FIPS 180-4, 2015, "Secure Hash Standard", sec. 6.2).
 * @param bytes - The message.
 * @returns The 32-byte digest.
 * @category Sweeps
 * @example
 * ```ts
 * sha256Bytes(new TextEncoder().encode("abc")); // ba 78 16 bf ... 15 ad
 * ```
 */
export function sha256Bytes(bytes: Uint8Array): Uint8Array {
  const n = bytes.length;
  const padded = new Uint8Array(Math.ceil((n + 9) / 64) * 64);
  padded.set(bytes);
  padded[n] = 0x80;
  // the message length in bits as a 64-bit big-endian integer
  const bits = n * 8;
  const hi = Math.floor(bits / 0x100000000);
  const lo = bits >>> 0;
  const end = padded.length;
  padded[end - 8] = hi >>> 24;
  padded[end - 7] = (hi >>> 16) & 255;
  padded[end - 6] = (hi >>> 8) & 255;
  padded[end - 5] = hi & 255;
  padded[end - 4] = lo >>> 24;
  padded[end - 3] = (lo >>> 16) & 255;
  padded[end - 2] = (lo >>> 8) & 255;
  padded[end - 1] = lo & 255;
  // 32-bit arithmetic in int32 (| 0): the same bits as unsigned arithmetic modulo 2^32, and faster in engines
  let h0 = H0[0]! | 0, h1 = H0[1]! | 0, h2 = H0[2]! | 0, h3 = H0[3]! | 0, h4 = H0[4]! | 0, h5 = H0[5]! | 0, h6 = H0[6]! | 0, h7 = H0[7]! | 0;
  const w = new Int32Array(64);
  const k = KI;
  for (let block = 0; block < end; block += 64) {
    for (let t = 0, o = block; t < 16; t++, o += 4) w[t] = (padded[o]! << 24) | (padded[o + 1]! << 16) | (padded[o + 2]! << 8) | padded[o + 3]!;
    for (let t = 16; t < 64; t++) {
      const x = w[t - 15]!;
      const y = w[t - 2]!;
      const s0 = ((x >>> 7) | (x << 25)) ^ ((x >>> 18) | (x << 14)) ^ (x >>> 3);
      const s1 = ((y >>> 17) | (y << 15)) ^ ((y >>> 19) | (y << 13)) ^ (y >>> 10);
      w[t] = (w[t - 16]! + s0 + w[t - 7]! + s1) | 0;
    }
    let a = h0, b = h1, c = h2, d = h3, e = h4, f = h5, g = h6, hh = h7;
    for (let t = 0; t < 64; t++) {
      const S1 = ((e >>> 6) | (e << 26)) ^ ((e >>> 11) | (e << 21)) ^ ((e >>> 25) | (e << 7));
      const ch = (e & f) ^ (~e & g);
      const t1 = (hh + S1 + ch + k[t]! + w[t]!) | 0;
      const S0 = ((a >>> 2) | (a << 30)) ^ ((a >>> 13) | (a << 19)) ^ ((a >>> 22) | (a << 10));
      const maj = (a & b) ^ (a & c) ^ (b & c);
      const t2 = (S0 + maj) | 0;
      hh = g;
      g = f;
      f = e;
      e = (d + t1) | 0;
      d = c;
      c = b;
      b = a;
      a = (t1 + t2) | 0;
    }
    h0 = (h0 + a) | 0;
    h1 = (h1 + b) | 0;
    h2 = (h2 + c) | 0;
    h3 = (h3 + d) | 0;
    h4 = (h4 + e) | 0;
    h5 = (h5 + f) | 0;
    h6 = (h6 + g) | 0;
    h7 = (h7 + hh) | 0;
  }
  const out = new Uint8Array(32);
  const words = [h0, h1, h2, h3, h4, h5, h6, h7];
  for (let i = 0; i < 8; i++) {
    const v = words[i]!;
    out[4 * i] = v >>> 24;
    out[4 * i + 1] = (v >>> 16) & 255;
    out[4 * i + 2] = (v >>> 8) & 255;
    out[4 * i + 3] = v & 255;
  }
  return out;
}

/**
 * SHA-256 of a text's UTF-8 bytes, as 64 lowercase hexadecimal digits (NIST FIPS 180-4, 2015).
 * @param text - The message as a string.
 * @returns The digest in hexadecimal.
 * @category Sweeps
 * @example
 * ```ts
 * sha256Hex("abc"); // "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
 * ```
 */
export function sha256Hex(text: string): string {
  const digest = sha256Bytes(new TextEncoder().encode(text));
  let out = "";
  for (const byte of digest) out += byte.toString(16).padStart(2, "0");
  return out;
}

/**
 * JSON text with object keys in sorted order at every depth, so that two objects that differ only in key
 * order give the same text. Numbers use JavaScript's shortest round-trip form; `undefined` object fields
 * are left out, as in `JSON.stringify`.
 * @param value - Plain data: objects, arrays, strings, finite numbers, booleans, null.
 * @returns The canonical text.
 * @throws {@link EbbflowError} `invalid_parameter` for a non-finite number, a function, a bigint or a symbol.
 * @category Sweeps
 * @example
 * ```ts
 * canonicalJson({ b: 1, a: [2, { d: 3, c: 4 }] }); // '{"a":[2,{"c":4,"d":3}],"b":1}'
 * ```
 */
export function canonicalJson(value: unknown): string {
  return write(value, "value");
}

function write(value: unknown, path: string): string {
  if (value === null) return "null";
  switch (typeof value) {
    case "number":
      if (!Number.isFinite(value)) fail("invalid_parameter", path, "a finite number (JSON has no NaN or Infinity)", value);
      return JSON.stringify(value);
    case "string":
    case "boolean":
      return JSON.stringify(value);
    case "object": {
      if (Array.isArray(value)) return `[${value.map((v, i) => (v === undefined ? "null" : write(v, `${path}[${i}]`))).join(",")}]`;
      const obj = value as Record<string, unknown>;
      const keys = Object.keys(obj)
        .filter((k) => obj[k] !== undefined)
        .sort();
      return `{${keys.map((k) => `${JSON.stringify(k)}:${write(obj[k], `${path}.${k}`)}`).join(",")}}`;
    }
    default:
      return fail("invalid_parameter", path, "plain JSON data", value);
  }
}

/** Number of hexadecimal digits kept in run and configuration ids (64 bits). @category Sweeps */
export const ID_DIGITS = 16;

/**
 * The identifier of a value: the first {@link ID_DIGITS} hexadecimal digits of the SHA-256 of its canonical JSON.
 * @param value - Plain data.
 * @returns A 16-digit lowercase hexadecimal id.
 * @category Sweeps
 */
export function contentId(value: unknown): string {
  return sha256Hex(canonicalJson(value)).slice(0, ID_DIGITS);
}
