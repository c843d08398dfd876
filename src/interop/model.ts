/**
 * A model's parameters as named arrays, for NumPy and other tools: `.npz`
 * archives of a whole model (declaration and parameters) and the array list
 * the `ebbflow export` command writes as `.npy` or CSV files.
 *
 * Names (the same for files and archive entries): `weights.FROM.TO` (shape
 * `[post, pre]` = `[|TO|, |FROM|]`), `feedback.FROM.TO` (a separate feedback
 * matrix, `[pre, post]`), `bias.LAYER` (`[units]`, layers other than inputs),
 * and in archives `network`: the declaration as JSON text (a 0-d NumPy string
 * array). Layer names are written with every character other than ASCII
 * letters, digits, `_` and `-` percent-encoded (UTF-8), so names split on `.`
 * and suit every file system.
 * @module
 */
import { EbbflowError, fail, issueText, type Issue } from "../errors/index.js";
import type { FloatArray } from "../types/index.js";
import type { BuildOptions, Network } from "../network/network.js";
import { safeParseNetwork } from "../network/spec.js";
import { encodeFloats } from "../config/encoding.js";
import { contentChecksum, MODEL_FORMAT, MODEL_VERSION, modelFromData, modelToData } from "../config/modelFile.js";
import { biasView, feedbackView, isRowMajor, rowMajorValues, weightView, type NdArrayLike, type NdView } from "./ndarray.js";
import { decodeNpy, decodeNpyText, encodeNpy, encodeNpyText, rowMajorBytes, type NpyArray } from "./npy.js";
import { readZip, writeZip } from "./zip.js";

/** One parameter array of a model. @category Interop */
export interface ModelArray {
  /** File and entry name without extension, e.g. `weights.touch.hidden`. */
  readonly key: string;
  /** The array, a view on the network's own storage. */
  readonly view: NdView;
}

/** A layer name as a name component: characters other than [A-Za-z0-9_-] percent-encoded (UTF-8). */
export function namePart(name: string): string {
  return encodeURIComponent(name).replace(/[.!'()*~]/g, (c) => `%${c.charCodeAt(0).toString(16).toUpperCase()}`);
}

/**
 * The parameter arrays of a network, in declaration order: each connection's
 * weights (then its separate feedback matrix, if any), then each non-input
 * layer's biases. Views on the network's arrays (no copies).
 * @category Interop
 */
export function modelArrays(net: Network): ModelArray[] {
  const out: ModelArray[] = [];
  for (const c of net.connections) {
    const pair = `${namePart(net.layers[c.from]!.name)}.${namePart(net.layers[c.to]!.name)}`;
    out.push({ key: `weights.${pair}`, view: weightView(net, c.label) });
    if (c.feedback.kind === "separate") out.push({ key: `feedback.${pair}`, view: feedbackView(net, c.label) });
  }
  for (const l of net.layers) if (l.role !== "input") out.push({ key: `bias.${namePart(l.name)}`, view: biasView(net, l.name) });
  return out;
}

/**
 * A whole model as a NumPy `.npz` archive (a zip of `.npy` files, as
 * `numpy.savez` writes): the declaration as JSON text under `network` and
 * every parameter array (see the module notes for the names), bit for bit.
 * @param net - The network.
 * @returns The archive's bytes.
 * @category Interop
 * @example
 * ```ts
 * const bytes = modelToNpz(net); // Python: f = numpy.load("model.npz"); f["weights.touch.hidden"].shape == (3, 2)
 * const copy = modelFromNpz(bytes); // the same parameters, bit for bit
 * ```
 */
export function modelToNpz(net: Network): Uint8Array {
  const declaration = modelToData(net).network;
  const entries = [{ name: "network.npy", bytes: encodeNpyText(JSON.stringify(declaration)) }];
  for (const a of modelArrays(net)) entries.push({ name: `${a.key}.npy`, bytes: encodeNpy(a.view) });
  return writeZip(entries);
}

/**
 * Rebuilds a network from an archive written by {@link modelToNpz} (or by
 * NumPy with the same names, element type and shapes), restoring every
 * parameter bit for bit.
 * @param bytes - The archive's bytes.
 * @param options - Build options (kernel backend, ...), as for `buildNetwork`.
 * @returns The network.
 * @throws {@link EbbflowError} `parse_error` naming the entry (`npz:weights.a.b`) for a missing entry, an entry
 *   that is not a `.npy` file, or a damaged archive; `shape_mismatch` for an array of the wrong shape or element
 *   type; `unknown_name` for an entry that names no parameter; the declaration's `invalid_config` errors.
 * @category Interop
 */
export function modelFromNpz(bytes: Uint8Array, options: BuildOptions = {}): Network {
  const entries = new Map<string, Uint8Array>();
  for (const e of readZip(bytes, "npz")) {
    if (!e.name.endsWith(".npy")) fail("parse_error", `npz:${e.name}`, "an entry named NAME.npy", e.name);
    entries.set(e.name.slice(0, -4), e.bytes);
  }
  const text = entries.get("network");
  if (text === undefined) return fail("parse_error", "npz:network", "an entry network.npy holding the declaration", "none");
  let declaration: unknown;
  try {
    declaration = JSON.parse(decodeNpyText(text, "npz:network"));
  } catch (e) {
    if (e instanceof EbbflowError) throw e;
    return fail("parse_error", "npz:network", "JSON text", (e as Error).message);
  }
  const parsed = safeParseNetwork(declaration);
  if (!parsed.ok) throw new EbbflowError(parsed.issues.map((i) => ({ ...i, path: i.path === "" ? "npz:network" : `npz:network.${i.path}` })));
  const spec = parsed.value;
  const size = new Map(spec.layers.map((l) => [l.name, l.size] as const));
  const parameters = { encoding: "base64-le" as const, dtype: spec.dtype, weights: {} as Record<string, string>, feedback: {} as Record<string, string>, biases: {} as Record<string, string> };
  const problems: Issue[] = [];
  const used = new Set(["network"]);
  /** Reads one parameter entry, checking its element type and shape; its base64 goes into `table[name]`. */
  const take = (key: string, shape: number[], table: Record<string, string>, name: string): void => {
    used.add(key);
    const b = entries.get(key);
    if (b === undefined) {
      problems.push(issueText("parse_error", `npz:${key}`, `an entry ${key}.npy of shape [${shape.join(", ")}]`, "none"));
      return;
    }
    const a = decodeNpy(b, `npz:${key}`);
    if (a.dtype !== spec.dtype) problems.push(issueText("shape_mismatch", `npz:${key}`, `${spec.dtype} values (the declaration's dtype)`, a.dtype));
    else if (a.shape.length !== shape.length || a.shape.some((n, d) => n !== shape[d])) {
      problems.push(issueText("shape_mismatch", `npz:${key}`, `shape [${shape.join(", ")}]`, `[${a.shape.join(", ")}]`));
    } else table[name] = encodeFloats(rowMajorCopy(a));
  };
  for (const c of spec.connections) {
    const pair = `${namePart(c.from)}.${namePart(c.to)}`;
    const post = size.get(c.to)!;
    const pre = size.get(c.from)!;
    take(`weights.${pair}`, [post, pre], parameters.weights, `${c.from}->${c.to}`);
    if (c.feedback.kind === "separate") take(`feedback.${pair}`, [pre, post], parameters.feedback, `${c.from}->${c.to}`);
  }
  for (const l of spec.layers) if (l.role !== "input") take(`bias.${namePart(l.name)}`, [l.size], parameters.biases, l.name);
  for (const key of entries.keys()) if (!used.has(key)) problems.push(issueText("unknown_name", `npz:${key}`, "an entry naming a parameter of the declared network", key));
  if (problems.length > 0) throw new EbbflowError(problems);
  // the archive's entries are checked by their CRC-32; the rebuilt model file carries its own checksum
  const body = { format: MODEL_FORMAT, version: MODEL_VERSION, network: declaration, parameters };
  return modelFromData({ ...body, checksum: contentChecksum(body) }, options);
}

/** The values of a decoded float array in row-major order (Fortran-order files are reordered, by bytes). */
function rowMajorCopy(a: NpyArray): FloatArray {
  if (isRowMajor(a)) return a.data as FloatArray;
  const bytes = rowMajorBytes(a);
  return a.data instanceof Float32Array ? new Float32Array(bytes.buffer) : new Float64Array(bytes.buffer);
}

/**
 * An array as CSV text: a matrix one row per line, a vector one value per
 * line (as `numpy.savetxt` lays them out), values comma-separated in the
 * shortest decimal form that reads back to the same double — so a float64
 * array reads back bit for bit, and a float32 array after rounding to float32.
 * @param view - A 1-D or 2-D array.
 * @throws {@link EbbflowError} `unsupported` (path `view.shape`) for other ranks; the layout errors of `rowMajorValues`.
 * @category Interop
 */
export function arrayToCsv(view: NdArrayLike): string {
  if (view.shape.length !== 1 && view.shape.length !== 2) return fail("unsupported", "view.shape", "a vector or a matrix", `[${view.shape.join(", ")}]`);
  const values = rowMajorValues(view, "view");
  const cols = view.shape.length === 2 ? view.shape[1]! : 1;
  const lines: string[] = [];
  for (let r = 0; r * cols < values.length; r++) {
    const row: string[] = [];
    for (let c = 0; c < cols; c++) row.push(String(values[r * cols + c]));
    lines.push(row.join(","));
  }
  return lines.join("\n") + (lines.length > 0 ? "\n" : "");
}
