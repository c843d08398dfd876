/**
 * NumPy's `.npy` array files, written and read without Node built-ins.
 *
 * Format (NEP 1, "A simple file format for NumPy arrays"; numpy.lib.format
 * documentation): the magic string `\x93NUMPY`, a major and a minor version
 * byte, the header length (2 bytes little-endian in version 1.0, 4 bytes in
 * 2.0), then the header — the text of a Python dict literal with the keys
 * `descr` (the element type, e.g. `'<f8'`), `fortran_order` and `shape` (a
 * tuple), padded with spaces and ended by a newline so that the data starts at
 * a multiple of 64 bytes — then the raw element bytes, in C (row-major) order
 * unless `fortran_order` is true.
 *
 * The writer produces what `numpy.save` writes for the same array (version 1.0
 * unless the header needs 2.0) and copies element bytes as they are in memory,
 * so values, NaN payloads included, round-trip bit for bit.
 * @module
 */
import { fail } from "../errors/index.js";
import { checkLayout, dtypeName, elementCount, forEachRowMajor, isNdArrayLike, isRowMajor, rowMajorStrides, type NdArrayLike, type NdView } from "./ndarray.js";

/** Element types of `.npy` files read and written here: the typed arrays of JavaScript. */
export type NumericArray = Float64Array | Float32Array | Int32Array | Uint32Array | Int16Array | Uint16Array | Int8Array | Uint8Array;

/** One element type: NumPy's type character and size, and the typed array holding it. */
interface Kind {
  readonly char: "f" | "i" | "u" | "b";
  readonly size: number;
  readonly make: (buffer: ArrayBuffer, length: number) => NumericArray;
  readonly dtype: string;
}

const KINDS: readonly Kind[] = [
  { char: "f", size: 8, make: (b, n) => new Float64Array(b, 0, n), dtype: "float64" },
  { char: "f", size: 4, make: (b, n) => new Float32Array(b, 0, n), dtype: "float32" },
  { char: "i", size: 4, make: (b, n) => new Int32Array(b, 0, n), dtype: "int32" },
  { char: "u", size: 4, make: (b, n) => new Uint32Array(b, 0, n), dtype: "uint32" },
  { char: "i", size: 2, make: (b, n) => new Int16Array(b, 0, n), dtype: "int16" },
  { char: "u", size: 2, make: (b, n) => new Uint16Array(b, 0, n), dtype: "uint16" },
  { char: "i", size: 1, make: (b, n) => new Int8Array(b, 0, n), dtype: "int8" },
  { char: "u", size: 1, make: (b, n) => new Uint8Array(b, 0, n), dtype: "uint8" },
  { char: "b", size: 1, make: (b, n) => new Uint8Array(b, 0, n), dtype: "uint8" },
];

const MAGIC = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]; // \x93 N U M P Y
/** Data start alignment of numpy.lib.format (ARRAY_ALIGN). */
const ALIGN = 64;

/** Whether this engine stores typed-array elements little-endian (every current engine does). */
const LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

function kindOf(data: ArrayLike<number>): Kind | undefined {
  const name = dtypeName(data);
  return KINDS.find((k) => k.dtype === name && k.char !== "b");
}

/** NumPy's `descr` of a kind: byte order (`|` for single bytes), type character, size. */
function descrOf(k: Kind): string {
  return `${k.size === 1 ? "|" : "<"}${k.char}${k.size}`;
}

/** A shape as a Python tuple: `()`, `(3,)`, `(2, 3)`. */
function shapeTuple(shape: readonly number[]): string {
  return shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(", ")})`;
}

/** Reverses the bytes of each `size`-byte element in place (endianness swap). */
function swapBytes(bytes: Uint8Array, size: number): void {
  if (size === 1) return;
  for (let i = 0; i + size <= bytes.length; i += size) {
    for (let a = i, b = i + size - 1; a < b; a++, b--) {
      const t = bytes[a]!;
      bytes[a] = bytes[b]!;
      bytes[b] = t;
    }
  }
}

/**
 * Encodes an array as the bytes of a `.npy` file.
 * @param array - A typed array (1-D), or an `ndarray`-like value over a typed array
 *   (any strides: contiguous C- or Fortran-order data are written as they lie, other
 *   layouts in row-major order).
 * @returns The file's bytes.
 * @throws {@link EbbflowError} `unsupported` (path `array.data`) for storage that is not a
 *   typed array of numbers (plain arrays, BigInt64Array); the layout errors of {@link rowMajorValues}.
 * @category Interop
 * @example
 * ```ts
 * const bytes = encodeNpy(weightView(net, "touch->hidden")); // numpy.load reads a (3, 2) float64 array
 * ```
 */
export function encodeNpy(array: NdArrayLike | NumericArray): Uint8Array {
  const view: NdArrayLike = isNdArrayLike(array) ? array : { data: array, shape: [array.length], stride: [1], offset: 0 };
  const kind = kindOf(view.data);
  if (kind === undefined) return fail("unsupported", "array.data", "a typed array of numbers (Float64Array, Float32Array, Int32Array, ...)", dtypeName(view.data));
  const n = elementCount(view.shape);
  checkLayout(view, "array");
  const data = view.data as NumericArray;
  const size = kind.size;
  const reversed: NdArrayLike = { data, shape: view.shape.slice().reverse(), stride: view.stride.slice().reverse(), offset: view.offset };
  // contiguous C-order data are written as they lie; contiguous column-major data too, flagged fortran_order
  const fortran = view.shape.length > 1 && !isRowMajor(view) && isRowMajor(reversed);
  const header = headerBytes(`{'descr': '${descrOf(kind)}', 'fortran_order': ${fortran ? "True" : "False"}, 'shape': ${shapeTuple(view.shape)}, }`);
  const out = new Uint8Array(header.length + n * size);
  out.set(header, 0);
  if (fortran || isRowMajor(view)) {
    out.set(new Uint8Array(data.buffer, data.byteOffset + view.offset * size, n * size), header.length);
  } else out.set(rowMajorBytes(view as NdArrayLike & { data: NumericArray }), header.length);
  if (!LITTLE_ENDIAN) swapBytes(out.subarray(header.length), kind.size);
  return out;
}

/**
 * The element bytes of a view over a typed array, in row-major order: bytes,
 * not values, are moved, so every bit (NaN payloads too) survives.
 */
export function rowMajorBytes(view: NdArrayLike & { readonly data: NumericArray }): Uint8Array {
  const size = view.data.BYTES_PER_ELEMENT;
  const src = new Uint8Array(view.data.buffer, view.data.byteOffset, view.data.byteLength);
  const out = new Uint8Array(elementCount(view.shape) * size);
  forEachRowMajor(view, (at, k) => out.set(src.subarray(at * size, (at + 1) * size), k * size));
  return out;
}

/** Magic, version, length and padded header text (version 1.0, or 2.0 when the header is over 65535 bytes). */
function headerBytes(dict: string): Uint8Array {
  for (const [major, lengthBytes] of [[1, 2], [2, 4]] as const) {
    const fixed = MAGIC.length + 2 + lengthBytes;
    const total = Math.ceil((fixed + dict.length + 1) / ALIGN) * ALIGN;
    const len = total - fixed;
    if (lengthBytes === 2 && len > 0xffff) continue;
    const out = new Uint8Array(total);
    out.set(MAGIC, 0);
    out[6] = major;
    out[7] = 0;
    const dv = new DataView(out.buffer);
    if (lengthBytes === 2) dv.setUint16(8, len, true);
    else dv.setUint32(8, len, true);
    const text = dict.padEnd(len - 1, " ") + "\n";
    for (let i = 0; i < text.length; i++) out[fixed + i] = text.charCodeAt(i);
    return out;
  }
  return fail("unsupported", "array.shape", "a header under 4 GiB", "a larger header");
}

/** A decoded `.npy` array: a view in the `ndarray` layout on a new typed array. @category Interop */
export type NpyArray = NdView<NumericArray>;

/**
 * Decodes the bytes of a `.npy` file (versions 1.0, 2.0 and 3.0) into a view:
 * C-order data with row-major strides, Fortran-order data with column-major
 * strides (no reordering). Element types: `f8`, `f4`, `i4`, `u4`, `i2`, `u2`,
 * `i1`, `u1` and `b1` (as `uint8`), little- or big-endian (big-endian is
 * converted). The data are copied into a new, aligned typed array.
 * @param bytes - The file's bytes.
 * @param path - Name of the file in error messages (default `npy`).
 * @returns The array as a view (`data`, `shape`, `stride`, `offset` 0, `dtype`).
 * @throws {@link EbbflowError} `parse_error` (path = `path`) for a missing magic string, an unknown version,
 *   a malformed header or too few data bytes; `unsupported` for other element types (objects, strings,
 *   complex numbers, records).
 * @category Interop
 */
export function decodeNpy(bytes: Uint8Array, path = "npy"): NpyArray {
  if (!(bytes instanceof Uint8Array)) return fail("invalid_parameter", path, "the bytes of a .npy file (a Uint8Array)", bytes);
  const { descr, fortran, shape, dataStart } = readHeader(bytes, path);
  const m = /^([<>|=])([fiub])(\d+)$/.exec(descr);
  const kind = m === null ? undefined : KINDS.find((k) => k.char === m[2] && k.size === Number(m[3]));
  if (m === null || kind === undefined) return fail("unsupported", `${path}:descr`, "a numeric element type (f8, f4, i4, u4, i2, u2, i1, u1, b1)", descr);
  const n = elementCount(shape);
  const byteLength = n * kind.size;
  if (bytes.length - dataStart < byteLength) return fail("parse_error", path, `${byteLength} data bytes (shape ${shapeTuple(shape)}, ${descr})`, `${bytes.length - dataStart} bytes`);
  // a real copy (a Node Buffer's own slice is a view into its shared pool, whose .buffer starts elsewhere)
  const copy = Uint8Array.prototype.slice.call(bytes, dataStart, dataStart + byteLength);
  const bigEndian = m[1] === ">" || (m[1] === "=" && !LITTLE_ENDIAN);
  if (bigEndian === LITTLE_ENDIAN) swapBytes(copy, kind.size);
  const data = kind.make(copy.buffer, n);
  const stride = fortran ? rowMajorStrides(shape.slice().reverse()).reverse() : rowMajorStrides(shape);
  return { data, shape, stride, offset: 0, dtype: kind.dtype };
}

/** Reads and checks the magic string, version and header dict. */
function readHeader(bytes: Uint8Array, path: string): { descr: string; fortran: boolean; shape: number[]; dataStart: number } {
  if (bytes.length < 10 || MAGIC.some((b, i) => bytes[i] !== b)) return fail("parse_error", path, "a .npy file (starting with \\x93NUMPY)", `${bytes.length} bytes without that magic string`);
  const major = bytes[6]!;
  if (major < 1 || major > 3) return fail("parse_error", `${path}:version`, "format version 1, 2 or 3", `${major}.${bytes[7]}`);
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const fixed = major === 1 ? 10 : 12;
  if (bytes.length < fixed) return fail("parse_error", path, "a complete header", "a truncated file");
  const len = major === 1 ? dv.getUint16(8, true) : dv.getUint32(8, true);
  if (bytes.length < fixed + len) return fail("parse_error", path, `a header of ${len} bytes`, `${bytes.length - fixed} bytes`);
  let text = "";
  for (let i = fixed; i < fixed + len; i++) text += String.fromCharCode(bytes[i]!);
  const descr = /['"]descr['"]\s*:\s*['"]([^'"]*)['"]/.exec(text)?.[1];
  const order = /['"]fortran_order['"]\s*:\s*(True|False)/.exec(text)?.[1];
  const shapeText = /['"]shape['"]\s*:\s*\(([^)]*)\)/.exec(text)?.[1];
  if (descr === undefined || order === undefined || shapeText === undefined) {
    return fail("parse_error", `${path}:header`, "a dict with 'descr', 'fortran_order' and 'shape'", text.trim().slice(0, 80));
  }
  const parts = shapeText.split(",").map((x) => x.trim()).filter((x) => x !== "");
  const shape = parts.map((x) => (/^\d+L?$/.test(x) ? Number.parseInt(x, 10) : Number.NaN));
  if (shape.some((x) => !Number.isSafeInteger(x))) return fail("parse_error", `${path}:shape`, "a tuple of integers", `(${shapeText})`);
  return { descr, fortran: order === "True", shape, dataStart: fixed + len };
}

/**
 * Text as a `.npy` file holding a 0-d NumPy string array (`<U` element type:
 * UTF-32 little-endian code points), readable in Python as `str(numpy.load(f))`.
 * @category Interop
 */
export function encodeNpyText(text: string): Uint8Array {
  const points = Array.from(text, (c) => c.codePointAt(0)!);
  const n = Math.max(1, points.length); // NumPy has no <U0 scalar; an empty string is one NUL
  const header = headerBytes(`{'descr': '<U${n}', 'fortran_order': False, 'shape': (), }`);
  const out = new Uint8Array(header.length + 4 * n);
  out.set(header, 0);
  const dv = new DataView(out.buffer, header.length);
  points.forEach((p, i) => dv.setUint32(4 * i, p, true));
  return out;
}

/**
 * Reads a `.npy` file holding a 0-d NumPy string array (`<U` or `>U`), as
 * {@link encodeNpyText} writes and `numpy.save(f, numpy.array("..."))` does.
 * @throws {@link EbbflowError} `parse_error` (path = `path`) for another element type or shape, or a damaged file.
 * @category Interop
 */
export function decodeNpyText(bytes: Uint8Array, path = "npy"): string {
  const { descr, shape, dataStart } = readHeader(bytes, path);
  const m = /^([<>=|])U(\d+)$/.exec(descr);
  if (m === null || shape.length !== 0) return fail("parse_error", path, "a 0-d NumPy string array ('<U' element type, shape ())", `${descr}, shape ${shapeTuple(shape)}`);
  const n = Number(m[2]);
  if (bytes.length - dataStart < 4 * n) return fail("parse_error", path, `${4 * n} bytes of text`, `${bytes.length - dataStart} bytes`);
  const dv = new DataView(bytes.buffer, bytes.byteOffset + dataStart, 4 * n);
  const little = m[1] !== ">";
  let text = "";
  for (let i = 0; i < n; i++) {
    const cp = dv.getUint32(4 * i, little);
    if (cp === 0) break; // NumPy pads strings with NUL
    if (cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff)) return fail("parse_error", `${path}[${i}]`, "a Unicode scalar value", cp);
    text += String.fromCodePoint(cp);
  }
  return text;
}
