/**
 * The ebbflow model file: a network declaration plus its current parameters,
 * as one JSON document. Parameters are little-endian IEEE 754 bytes in base64,
 * so a save/load round trip is bit-exact.
 *
 * ```json
 * { "format": "ebbflow-model", "version": 1,
 *   "network": { ...declaration... },
 *   "parameters": { "encoding": "base64-le", "dtype": "float64",
 *     "weights": { "in->hidden": "..." }, "feedback": { "hidden->out": "..." },
 *     "biases": { "hidden": "..." } } }
 * ```
 * @module
 */
import { EbbflowError, fail, issueText, describeValue } from "../errors/index.js";
import { buildNetwork, type BuildOptions, type Network } from "../network/network.js";
import { safeParseNetwork, type NetworkSpec } from "../network/spec.js";
import { decodeFloatsInto, encodeFloats } from "./encoding.js";

/** Identifier in every model file's `format` field. @category Files */
export const MODEL_FORMAT = "ebbflow-model";
/** Current model-file version. @category Files */
export const MODEL_VERSION = 1;

/** A model file as data. @category Files */
export interface ModelFile {
  readonly format: typeof MODEL_FORMAT;
  readonly version: number;
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
  return { format: MODEL_FORMAT, version: MODEL_VERSION, network, parameters: { encoding: "base64-le", dtype: net.dtype, weights, feedback, biases } };
}

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
  if (obj === null || typeof obj !== "object") fail("parse_error", "", "a model file object", obj);
  const o = obj as Record<string, unknown>;
  const problems = [];
  if (o.format !== MODEL_FORMAT) problems.push(issueText("parse_error", "format", JSON.stringify(MODEL_FORMAT), describeValue(o.format)));
  if (o.version !== MODEL_VERSION) problems.push(issueText("parse_error", "version", String(MODEL_VERSION), describeValue(o.version)));
  const parsed = safeParseNetwork(o.network, options.units);
  if (!parsed.ok) problems.push(...parsed.issues.map((i) => ({ ...i, path: i.path === "" ? "network" : `network.${i.path}` })));
  const p = o.parameters as Record<string, unknown> | undefined;
  if (p === undefined || p === null || typeof p !== "object") problems.push(issueText("parse_error", "parameters", "an object with weights, feedback and biases", describeValue(p)));
  else if (p.encoding !== "base64-le") problems.push(issueText("parse_error", "parameters.encoding", '"base64-le"', describeValue(p.encoding)));
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
  return net;
}
