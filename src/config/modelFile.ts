/**
 * The ebbflow model file: a network declaration plus its current parameters,
 * as one JSON document. Parameters are little-endian IEEE 754 bytes in base64,
 * so a save/load round trip is bit-exact.
 *
 * ```json
 * { "format": "ebbflow-model", "version": 2, "checksum": "...64 hex digits...",
 *   "network": { ...declaration... },
 *   "parameters": { "encoding": "base64-le", "dtype": "float64",
 *     "weights": { "in->hidden": "..." }, "feedback": { "hidden->out": "..." },
 *     "biases": { "hidden": "..." } } }
 * ```
 *
 * `checksum` (version 2) is the SHA-256 of the canonical JSON (sorted keys) of everything else in the file:
 * a flipped bit anywhere in the declaration or the parameters is a typed error, never different weights or
 * dynamics. Version 1 files (written before checksums) still load, unchecked; to edit a saved model by
 * hand, edit it, then remove `checksum` and set `version` to 1.
 * @module
 */
import { EbbflowError, fail, inputShapeIssues, issueText, describeValue, type Issue } from "../errors/index.js";
import { canonicalJson, sha256Hex } from "../sweep/hash.js";
import { buildNetwork, requirePatterns, type BuildOptions, type Network } from "../network/network.js";
import { safeParseNetwork, type NetworkSpec } from "../network/spec.js";
import { decodeFloatsInto, encodeFloats } from "./encoding.js";

/** Identifier in every model file's `format` field. @category Files */
export const MODEL_FORMAT = "ebbflow-model";
/** Current model-file version. @category Files */
export const MODEL_VERSION = 2;
/** Versions {@link modelFromData} reads: 1 (no checksum) and 2. @category Files */
export const MODEL_VERSIONS_READ: readonly number[] = [1, 2];

/** A model file as data. @category Files */
export interface ModelFile {
  readonly format: typeof MODEL_FORMAT;
  readonly version: number;
  /** SHA-256 (hexadecimal) of the canonical JSON of the other fields (version 2). */
  readonly checksum?: string;
  readonly network: NetworkSpec;
  readonly parameters: {
    readonly encoding: "base64-le";
    readonly dtype: NetworkSpec["dtype"];
    readonly weights: Record<string, string>;
    readonly feedback: Record<string, string>;
    readonly biases: Record<string, string>;
  };
}

/** Captures a network and its current parameters as a model file object. @category Files */
export function modelToData(net: Network): ModelFile {
  const weights: Record<string, string> = {};
  const feedback: Record<string, string> = {};
  const biases: Record<string, string> = {};
  for (const c of net.connections) {
    weights[c.label] = encodeFloats(c.weights);
    if (c.feedback.kind === "separate") feedback[c.label] = encodeFloats(c.feedback.weights);
  }
  for (const l of net.layers) if (l.role !== "input") biases[l.name] = encodeFloats(l.bias);
  // the declaration is stored without explicit weight arrays: the parameters block is authoritative
  const network = { ...net.spec, connections: net.spec.connections.map(({ weights: _w, ...rest }) => rest) } as NetworkSpec;
  const body = { format: MODEL_FORMAT as typeof MODEL_FORMAT, version: MODEL_VERSION, network, parameters: { encoding: "base64-le" as const, dtype: net.dtype, weights, feedback, biases } };
  return { format: body.format, version: body.version, checksum: contentChecksum(body), network: body.network, parameters: body.parameters };
}

/**
 * The checksum of a file's content: SHA-256 (NIST FIPS 180-4) of the canonical JSON of the object without
 * its `checksum` field, in hexadecimal. Used by model files and checkpoints.
 * @param content - The file's object (a `checksum` field in it is left out).
 * @returns 64 hexadecimal digits.
 * @category Files
 */
export function contentChecksum(content: object): string {
  const { checksum: _c, ...rest } = content as Record<string, unknown>;
  return sha256Hex(canonicalJson(rest));
}

/**
 * Checks a file's `checksum` field against its content.
 * @param content - The parsed file.
 * @param path - The checksum field's path for the error (e.g. `checksum`).
 * @returns The problem, or null when the checksum matches.
 * @category Files
 */
export function checksumIssue(content: Record<string, unknown>, path: string): Issue | null {
  const given = content.checksum;
  if (typeof given !== "string" || !/^[0-9a-f]{64}$/.test(given)) return issueText("parse_error", path, "a SHA-256 checksum (64 lowercase hexadecimal digits)", describeValue(given));
  let actual: string;
  try {
    actual = contentChecksum(content);
  } catch (e) {
    return issueText("parse_error", path, "content that can be checksummed (plain JSON)", (e as Error).message);
  }
  return actual === given ? null : issueText("parse_error", path, `the SHA-256 of the content (${actual.slice(0, 12)}...)`, `${given.slice(0, 12)}... (the file was damaged or edited after it was written)`);
}

const TOP_KEYS = new Set(["format", "version", "checksum", "network", "parameters"]);
const PARAMETER_KEYS = new Set(["encoding", "dtype", "weights", "feedback", "biases"]);

/** Serialises a network and its parameters as model-file JSON text. @category Files */
export function modelToJson(net: Network): string {
  return JSON.stringify(modelToData(net), null, 1) + "\n";
}

/**
 * Rebuilds a network from a model file object (or its JSON text), restoring
 * every parameter bit for bit. Reports every problem at once with its path.
 * A model whose layers name a user's unit kind loads only when `options.units` has it;
 * without, it is refused (`unknown_name` at `network.layers[i].unit.kind`, naming the kind),
 * never rebuilt with another kind.
 * @param data The model file object or its JSON text.
 * @param options Where to build it (`backend`, `allocate`) and the unit kinds it may name (`units`).
 * @throws {@link EbbflowError} `parse_error`, `invalid_config`, `unknown_name` or `shape_mismatch`.
 * @category Files
 */
export function modelFromData(data: unknown, options: BuildOptions = {}): Network {
  let obj = data;
  if (typeof data === "string") {
    try {
      obj = JSON.parse(data) as unknown;
    } catch (e) {
      fail("parse_error", "", "JSON text", (e as Error).message);
    }
  }
  if (obj === null || typeof obj !== "object" || Array.isArray(obj)) fail("parse_error", "", "a model file object", obj);
  const o = obj as Record<string, unknown>;
  const shape = inputShapeIssues(o);
  if (shape.length > 0) throw new EbbflowError(shape.map((i) => ({ ...i, code: "parse_error" as const })));
  const problems: Issue[] = [];
  if (o.format !== MODEL_FORMAT) problems.push(issueText("parse_error", "format", JSON.stringify(MODEL_FORMAT), describeValue(o.format)));
  if (typeof o.version !== "number" || !MODEL_VERSIONS_READ.includes(o.version)) problems.push(issueText("parse_error", "version", `one of ${MODEL_VERSIONS_READ.join(", ")}`, describeValue(o.version)));
  for (const k of Object.keys(o)) if (!TOP_KEYS.has(k) || (k === "checksum" && o.version === 1)) problems.push(issueText("parse_error", k, "no such field (unknown key)", describeValue(o[k])));
  if (problems.length > 0) throw new EbbflowError(problems);
  const parsed = safeParseNetwork(o.network, options.units);
  if (!parsed.ok) problems.push(...parsed.issues.map((i) => ({ ...i, path: i.path === "" ? "network" : `network.${i.path}` })));
  const p = o.parameters as Record<string, unknown> | undefined;
  if (p === undefined || p === null || typeof p !== "object") problems.push(issueText("parse_error", "parameters", "an object with weights, feedback and biases", describeValue(p)));
  else {
    if (p.encoding !== "base64-le") problems.push(issueText("parse_error", "parameters.encoding", '"base64-le"', describeValue(p.encoding)));
    for (const k of Object.keys(p)) if (!PARAMETER_KEYS.has(k)) problems.push(issueText("parse_error", `parameters.${k}`, "no such field (unknown key)", describeValue(p[k])));
  }
  if (problems.length > 0) throw new EbbflowError(problems);

  if (!parsed.ok || p === undefined) throw new EbbflowError(issueText("parse_error", "", "a model file", "an invalid one"));
  if (p.dtype !== parsed.value.dtype) fail("parse_error", "parameters.dtype", JSON.stringify(parsed.value.dtype), p.dtype);
  const net = buildNetwork(parsed.value, options);
  const table = (key: string): Record<string, unknown> => {
    const t = p[key];
    if (t === null || typeof t !== "object") fail("parse_error", `parameters.${key}`, "an object", t);
    return t as Record<string, unknown>;
  };
  const w = table("weights");
  const f = table("feedback");
  const b = table("biases");
  // entries that name no connection or layer: a damaged label, or a file of another network
  const labels = new Set(net.connections.map((c) => c.label));
  const separate = new Set(net.connections.filter((c) => c.feedback.kind === "separate").map((c) => c.label));
  const biased = new Set(net.layers.filter((l) => l.role !== "input").map((l) => l.name));
  for (const [key, known] of [["weights", labels], ["feedback", separate], ["biases", biased]] as const) {
    const t = key === "weights" ? w : key === "feedback" ? f : b;
    for (const k of Object.keys(t)) if (!known.has(k)) fail("parse_error", `parameters.${key}["${k}"]`, `no such entry (${key === "biases" ? "layers with biases" : key === "feedback" ? "connections with separate feedback" : "connections"}: ${[...known].join(", ") || "none"})`, t[k]);
  }
  for (const c of net.connections) {
    const text = w[c.label];
    if (typeof text !== "string") fail("parse_error", `parameters.weights["${c.label}"]`, "base64 weights", text);
    decodeFloatsInto(c.weights, text, `parameters.weights["${c.label}"]`);
    if (c.feedback.kind === "separate") {
      const ft = f[c.label];
      if (typeof ft !== "string") fail("parse_error", `parameters.feedback["${c.label}"]`, "base64 feedback weights", ft);
      decodeFloatsInto(c.feedback.weights, ft, `parameters.feedback["${c.label}"]`);
    }
  }
  for (const l of net.layers) {
    if (l.role === "input") continue;
    const text = b[l.name];
    if (typeof text !== "string") fail("parse_error", `parameters.biases["${l.name}"]`, "base64 biases", text);
    decodeFloatsInto(l.bias, text, `parameters.biases["${l.name}"]`);
  }
  // last, so that a damaged field that can be named is reported by name
  if (o.version !== 1) {
    const bad = checksumIssue(o, "checksum");
    if (bad !== null) throw new EbbflowError(bad);
  }
  // weights outside a connection's pattern, untied shared positions or an asymmetric tied matrix: not a model this declaration trains
  requirePatterns(net, "parameters", "parse_error");
  return net;
}
