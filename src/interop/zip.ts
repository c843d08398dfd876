/**
 * A minimal zip archive writer and reader (stored entries, no compression),
 * for NumPy's `.npz` files, without Node built-ins.
 *
 * Layout (PKWARE APPNOTE.TXT, version 6.3.x): for each entry a local file
 * header (section 4.3.7, signature 0x04034b50) followed by the entry's bytes;
 * then the central directory, one header per entry (4.3.12, signature
 * 0x02014b50); then the end of central directory record (4.3.16, signature
 * 0x06054b50). Integers are little-endian. Entries are "stored" (compression
 * method 0) and carry the CRC-32 of their bytes (4.4.7). Times are the
 * earliest DOS date (1980-01-01 00:00), so the same entries give the same bytes.
 * @module
 */
import { fail } from "../errors/index.js";

/** CRC-32 table of the reflected polynomial 0xEDB88320 (IEEE 802.3; APPNOTE 4.4.7). */
let table: Uint32Array | undefined;

/**
 * CRC-32 of bytes, as zip, gzip and PNG compute it (IEEE 802.3 polynomial, reflected,
 * initial value and final XOR 0xFFFFFFFF). Check value: CRC-32 of the ASCII digits
 * "123456789" is 0xCBF43926.
 * @param bytes - The data.
 * @param crc - The CRC of the bytes before these, to continue a running CRC (default: start).
 * @returns The CRC as an unsigned 32-bit integer.
 * @category Interop
 */
export function crc32(bytes: Uint8Array, crc = 0): number {
  if (table === undefined) {
    table = new Uint32Array(256);
    for (let n = 0; n < 256; n++) {
      let c = n;
      for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
      table[n] = c >>> 0;
    }
  }
  let c = (crc ^ 0xffffffff) >>> 0;
  for (let i = 0; i < bytes.length; i++) c = table[(c ^ bytes[i]!) & 0xff]! ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/** UTF-8 bytes of a string (TextEncoder is in every engine the core targets). */
function utf8(text: string): Uint8Array {
  return new TextEncoder().encode(text);
}

const LOCAL = 0x04034b50;
const CENTRAL = 0x02014b50;
const END = 0x06054b50;
/** Version needed to extract: 2.0 (APPNOTE 4.4.3.2, the default). */
const VERSION = 20;
/** General purpose flag bit 11: file names are UTF-8 (APPNOTE 4.4.4). */
const UTF8_NAMES = 0x0800;
/** DOS date of 1980-01-01 (APPNOTE 4.4.6: years from 1980 << 9 | month << 5 | day). */
const DOS_DATE = (0 << 9) | (1 << 5) | 1;
const LIMIT = 0xffffffff;

/**
 * Writes a zip archive of stored (uncompressed) entries.
 * @param entries - File names (UTF-8, `/`-separated) and their bytes, in archive order.
 * @returns The archive's bytes.
 * @throws {@link EbbflowError} `invalid_parameter` (path `entries[i].name`) for an empty or repeated name;
 *   `unsupported` (path `entries`) for an archive over 4 GiB or 65535 entries (which need the ZIP64 extension).
 * @category Interop
 */
export function writeZip(entries: readonly { readonly name: string; readonly bytes: Uint8Array }[]): Uint8Array {
  if (entries.length > 0xffff) fail("unsupported", "entries", "at most 65535 entries (more need ZIP64)", entries.length);
  const names = entries.map((e, i) => {
    if (typeof e.name !== "string" || e.name === "") fail("invalid_parameter", `entries[${i}].name`, "a non-empty file name", e.name);
    return utf8(e.name);
  });
  const seen = new Set<string>();
  entries.forEach((e, i) => {
    if (seen.has(e.name)) fail("invalid_parameter", `entries[${i}].name`, "a name not used by an earlier entry", e.name);
    seen.add(e.name);
  });
  let size = 22;
  entries.forEach((e, i) => (size += 30 + 46 + 2 * names[i]!.length + e.bytes.length));
  if (size > LIMIT) fail("unsupported", "entries", "an archive under 4 GiB (larger ones need ZIP64)", `${size} bytes`);
  const out = new Uint8Array(size);
  const dv = new DataView(out.buffer);
  let at = 0;
  const u16 = (v: number) => {
    dv.setUint16(at, v, true);
    at += 2;
  };
  const u32 = (v: number) => {
    dv.setUint32(at, v >>> 0, true);
    at += 4;
  };
  const offsets: number[] = [];
  const crcs: number[] = [];
  entries.forEach((e, i) => {
    const name = names[i]!;
    const ascii = name.every((b) => b < 0x80);
    offsets.push(at);
    crcs.push(crc32(e.bytes));
    u32(LOCAL);
    u16(VERSION);
    u16(ascii ? 0 : UTF8_NAMES);
    u16(0); // stored
    u16(0); // time 00:00:00
    u16(DOS_DATE);
    u32(crcs[i]!);
    u32(e.bytes.length); // compressed size
    u32(e.bytes.length); // uncompressed size
    u16(name.length);
    u16(0); // extra field length
    out.set(name, at);
    at += name.length;
    out.set(e.bytes, at);
    at += e.bytes.length;
  });
  const central = at;
  entries.forEach((e, i) => {
    const name = names[i]!;
    const ascii = name.every((b) => b < 0x80);
    u32(CENTRAL);
    u16(VERSION); // version made by (MS-DOS/FAT attributes, 2.0)
    u16(VERSION);
    u16(ascii ? 0 : UTF8_NAMES);
    u16(0);
    u16(0);
    u16(DOS_DATE);
    u32(crcs[i]!);
    u32(e.bytes.length);
    u32(e.bytes.length);
    u16(name.length);
    u16(0); // extra
    u16(0); // comment
    u16(0); // disk number start
    u16(0); // internal attributes
    u32(0); // external attributes
    u32(offsets[i]!);
    out.set(name, at);
    at += name.length;
  });
  const centralSize = at - central;
  u32(END);
  u16(0); // this disk
  u16(0); // disk of the central directory
  u16(entries.length);
  u16(entries.length);
  u32(centralSize);
  u32(central);
  u16(0); // comment length
  return out;
}

/**
 * Reads the entries of a zip archive of stored entries, checking each
 * entry's CRC-32. Entries compressed with another method (such as those of
 * `numpy.savez_compressed`) are refused.
 * @param bytes - The archive's bytes.
 * @param path - Name of the archive in error messages (default `zip`).
 * @returns Each entry's name and bytes (a view into `bytes`), in central-directory order.
 * @throws {@link EbbflowError} `parse_error` (path = `path` or `path:name`) for a damaged archive or a CRC
 *   mismatch; `unsupported` for compressed, encrypted or ZIP64 entries and multi-disk archives.
 * @category Interop
 */
export function readZip(bytes: Uint8Array, path = "zip"): { name: string; bytes: Uint8Array }[] {
  if (!(bytes instanceof Uint8Array)) return fail("invalid_parameter", path, "the bytes of a zip archive (a Uint8Array)", bytes);
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  // the end record is the last 22 bytes, or earlier when an archive comment follows it
  let end = -1;
  for (let i = bytes.length - 22; i >= Math.max(0, bytes.length - 22 - 0xffff); i--) {
    if (dv.getUint32(i, true) === END) {
      end = i;
      break;
    }
  }
  if (end < 0) return fail("parse_error", path, "a zip archive (an end of central directory record)", `${bytes.length} bytes without one`);
  if (dv.getUint16(end + 4, true) !== 0 || dv.getUint16(end + 6, true) !== 0) return fail("unsupported", path, "a single-disk archive", "a multi-disk archive");
  const count = dv.getUint16(end + 10, true);
  const centralSize = dv.getUint32(end + 12, true);
  let at = dv.getUint32(end + 16, true);
  if (at === LIMIT || count === 0xffff) return fail("unsupported", path, "an archive without ZIP64 records", "ZIP64");
  if (at + centralSize > end) return fail("parse_error", path, "a central directory before the end record", `offset ${at} + ${centralSize} bytes`);
  const decoder = new TextDecoder();
  const out: { name: string; bytes: Uint8Array }[] = [];
  for (let k = 0; k < count; k++) {
    if (at + 46 > end || dv.getUint32(at, true) !== CENTRAL) return fail("parse_error", path, `central directory entry ${k}`, "damaged bytes");
    const flags = dv.getUint16(at + 8, true);
    const method = dv.getUint16(at + 10, true);
    const crc = dv.getUint32(at + 16, true);
    const compressed = dv.getUint32(at + 20, true);
    const size = dv.getUint32(at + 24, true);
    const nameLength = dv.getUint16(at + 28, true);
    const extra = dv.getUint16(at + 30, true);
    const comment = dv.getUint16(at + 32, true);
    const local = dv.getUint32(at + 42, true);
    const name = decoder.decode(bytes.subarray(at + 46, at + 46 + nameLength));
    at += 46 + nameLength + extra + comment;
    const where = `${path}:${name}`;
    if (flags & 1) return fail("unsupported", where, "an unencrypted entry", "an encrypted entry");
    if (method !== 0) return fail("unsupported", where, "a stored (uncompressed) entry, as numpy.savez writes (not savez_compressed)", `compression method ${method}`);
    if (compressed === LIMIT || size === LIMIT) return fail("unsupported", where, "an entry without ZIP64 sizes", "ZIP64");
    if (compressed !== size) return fail("parse_error", where, "equal stored and original sizes", `${compressed} and ${size}`);
    if (local + 30 > bytes.length || dv.getUint32(local, true) !== LOCAL) return fail("parse_error", where, "a local file header", `damaged bytes at ${local}`);
    const start = local + 30 + dv.getUint16(local + 26, true) + dv.getUint16(local + 28, true);
    if (start + size > bytes.length) return fail("parse_error", where, `${size} bytes of data`, `${bytes.length - start} bytes left`);
    const data = bytes.subarray(start, start + size);
    const actual = crc32(data);
    if (actual !== crc) return fail("parse_error", where, `CRC-32 ${crc.toString(16).padStart(8, "0")}`, actual.toString(16).padStart(8, "0"));
    out.push({ name, bytes: data });
  }
  return out;
}
