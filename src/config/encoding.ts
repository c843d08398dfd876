/**
 * Bit-exact text encoding of float arrays: little-endian IEEE 754 bytes in
 * base64 (RFC 4648), with no Node built-ins so it runs in browsers too.
 * @module
 */
import { fail } from "../errors/index.js";
import type { Dtype, FloatArray } from "../types/index.js";

const ALPHABET = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
const LOOKUP = new Int16Array(128).fill(-1);
for (let i = 0; i < ALPHABET.length; i++) LOOKUP[ALPHABET.charCodeAt(i)] = i;

/** Base64 (RFC 4648, with padding) of a byte array. @category Files */
export function bytesToBase64(bytes: Uint8Array): string {
  const parts: string[] = [];
  let chunk = "";
  for (let i = 0; i < bytes.length; i += 3) {
    const a = bytes[i] as number;
    const b = i + 1 < bytes.length ? (bytes[i + 1] as number) : 0;
    const c = i + 2 < bytes.length ? (bytes[i + 2] as number) : 0;
    const n = (a << 16) | (b << 8) | c;
    chunk += ALPHABET[(n >> 18) & 63]! + ALPHABET[(n >> 12) & 63]! + (i + 1 < bytes.length ? ALPHABET[(n >> 6) & 63]! : "=") + (i + 2 < bytes.length ? ALPHABET[n & 63]! : "=");
    if (chunk.length >= 4096) {
      parts.push(chunk);
      chunk = "";
    }
  }
  parts.push(chunk);
  return parts.join("");
}

/** Bytes of a base64 string; `path` names the field in errors. @category Files */
export function base64ToBytes(text: string, path: string): Uint8Array {
  if (typeof text !== "string" || text.length % 4 !== 0) fail("parse_error", path, "base64 text whose length is a multiple of 4", typeof text === "string" ? `${text.length} characters` : text);
  const pad = text.endsWith("==") ? 2 : text.endsWith("=") ? 1 : 0;
  const out = new Uint8Array((text.length / 4) * 3 - pad);
  let o = 0;
  for (let i = 0; i < text.length; i += 4) {
    let n = 0;
    for (let k = 0; k < 4; k++) {
      const ch = text.charCodeAt(i + k);
      const isPad = ch === 61 && i + k >= text.length - pad;
      const v = isPad ? 0 : ch < 128 ? (LOOKUP[ch] as number) : -1;
      if (v < 0) fail("parse_error", path, "base64 characters (A-Z a-z 0-9 + / =)", `character ${JSON.stringify(text[i + k])} at ${i + k}`);
      n = (n << 6) | v;
    }
    if (o < out.length) out[o++] = (n >> 16) & 255;
    if (o < out.length) out[o++] = (n >> 8) & 255;
    if (o < out.length) out[o++] = n & 255;
  }
  return out;
}

/** Encodes a float array as little-endian base64. @category Files */
export function encodeFloats(a: FloatArray): string {
  const width = a instanceof Float32Array ? 4 : 8;
  const bytes = new Uint8Array(a.length * width);
  const view = new DataView(bytes.buffer);
  if (width === 4) for (let i = 0; i < a.length; i++) view.setFloat32(i * 4, a[i] as number, true);
  else for (let i = 0; i < a.length; i++) view.setFloat64(i * 8, a[i] as number, true);
  return bytesToBase64(bytes);
}

/** Decodes little-endian base64 into `out` (its dtype decides the width); checks the length. @category Files */
export function decodeFloatsInto(out: FloatArray, text: string, path: string): FloatArray {
  const bytes = base64ToBytes(text, path);
  const width = out instanceof Float32Array ? 4 : 8;
  if (bytes.length !== out.length * width) fail("shape_mismatch", path, `${out.length} ${width === 4 ? "float32" : "float64"} values (${out.length * width} bytes)`, `${bytes.length} bytes`);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  for (let i = 0; i < out.length; i++) {
    const v = width === 4 ? view.getFloat32(i * 4, true) : view.getFloat64(i * 8, true);
    if (!Number.isFinite(v)) fail("parse_error", `${path}[${i}]`, "a finite number", v);
    out[i] = v;
  }
  return out;
}

/** Width in bytes of one value of a dtype. @category Files */
export function bytesPerValue(dtype: Dtype): number {
  return dtype === "float32" ? 4 : 8;
}
