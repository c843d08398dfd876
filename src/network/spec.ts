/**
 * The declaration of a network as data: one zod schema from which the
 * TypeScript types, the runtime validation and the JSON Schema export all
 * derive. Cross-field checks (unknown layers, reachability, k <= size, ...)
 * are collected together with the schema's own problems and reported at once.
 * @module
 */
import { z } from "zod";
import { EbbflowError, capIssues, describeValue, inputShapeIssues, issueText, type Issue } from "../errors/index.js";
import { valueIssues } from "./checks.js";

const finite = (what = "a finite number") => z.number({ error: what }).refine(Number.isFinite, { error: what });
const positive = (what = "a finite number > 0") => z.number({ error: what }).refine((v) => Number.isFinite(v) && v > 0, { error: what });
const nonNegative = (what = "a finite number >= 0") => z.number({ error: what }).refine((v) => Number.isFinite(v) && v >= 0, { error: what });
const positiveInt = (what = "an integer >= 1") => z.number({ error: what }).int({ error: what }).min(1, { error: what });

/** Schema of a unit (activation) function. */
export const unitSchema: z.ZodType<UnitSpecData, UnitSpecData> = z.lazy(() =>
  z.discriminatedUnion(
    "kind",
    [
      z.object({ kind: z.literal("logistic"), gain: positive().optional(), offset: finite().optional() }).strict(),
      z.object({ kind: z.literal("tanh") }).strict(),
      z.object({ kind: z.literal("linear") }).strict(),
      z.object({ kind: z.literal("relu") }).strict(),
      z.object({ kind: z.literal("hard-sigmoid") }).strict(),
      z.object({ kind: z.literal("softplus"), gain: positive().optional() }).strict(),
      z.object({ kind: z.literal("saturating"), gain: positive().optional(), threshold: finite().optional() }).strict(),
      z
        .object({
          kind: z.literal("noisy"),
          base: unitSchema,
          sigma: positive(),
          resolution: z.number().int().min(2, { error: "an integer >= 2" }).optional(),
          range: z.tuple([finite(), finite()]).optional(),
        })
        .strict(),
    ],
    { error: "a unit kind: logistic, tanh, linear, relu, hard-sigmoid, softplus, saturating or noisy" },
  ),
);

/** A unit function as data (mirrors `UnitSpec` of the units module). @category Network */
export type UnitSpecData =
  | { kind: "logistic"; gain?: number | undefined; offset?: number | undefined }
  | { kind: "tanh" }
  | { kind: "linear" }
  | { kind: "relu" }
  | { kind: "hard-sigmoid" }
  | { kind: "softplus"; gain?: number | undefined }
  | { kind: "saturating"; gain?: number | undefined; threshold?: number | undefined }
  | { kind: "noisy"; base: UnitSpecData; sigma: number; resolution?: number | undefined; range?: [number, number] | undefined };

/** Schema of a weight initialiser. @category Network */
export const initSchema = z.discriminatedUnion(
  "kind",
  [
    z.object({ kind: z.literal("uniform"), low: finite(), high: finite() }).strict(),
    z.object({ kind: z.literal("normal"), mean: finite().optional(), std: nonNegative() }).strict(),
    z.object({ kind: z.literal("glorot-uniform") }).strict(),
    z.object({ kind: z.literal("glorot-normal") }).strict(),
    z.object({ kind: z.literal("constant"), value: finite() }).strict(),
  ],
  { error: "an initialiser kind: uniform, normal, glorot-uniform, glorot-normal or constant" },
);

const inhibitionSchema = z.discriminatedUnion(
  "kind",
  [
    z.object({ kind: z.literal("none") }).strict(),
    z.object({ kind: z.literal("pooled"), gain: nonNegative() }).strict(),
    z.object({ kind: z.literal("kwta"), k: positiveInt() }).strict(),
  ],
  { error: "an inhibition kind: none, pooled or kwta" },
);

const layerSchema = z
  .object({
    name: z.string({ error: "a non-empty name" }).min(1, { error: "a non-empty name" }),
    size: positiveInt("a positive integer"),
    role: z.enum(["input", "hidden", "output"], { error: "one of input, hidden, output" }),
    unit: unitSchema.default({ kind: "logistic" }),
    bias: z.union([finite(), z.array(finite())], { error: "a finite number or an array of finite numbers" }).default(0),
    inhibition: inhibitionSchema.default({ kind: "none" }),
  })
  .strict();

const feedbackSchema = z.discriminatedUnion(
  "kind",
  [
    z.object({ kind: z.literal("none") }).strict(),
    z.object({ kind: z.literal("tied"), gain: nonNegative("a feedback gain >= 0") }).strict(),
    z.object({ kind: z.literal("separate"), learned: z.boolean().default(true), init: initSchema.optional() }).strict(),
  ],
  { error: "a feedback kind: none, tied or separate" },
);

const connectionSchema = z
  .object({
    from: z.string({ error: "a layer name" }),
    to: z.string({ error: "a layer name" }),
    init: initSchema.default({ kind: "glorot-uniform" }),
    weights: z.array(finite()).optional(),
    feedback: feedbackSchema.default({ kind: "none" }),
    sign: z.enum(["any", "excitatory", "inhibitory"], { error: "one of any, excitatory, inhibitory" }).default("any"),
    bounds: z.enum(["none", "soft"], { error: "one of none, soft" }).default("none"),
    frozen: z.boolean().default(false),
    rate: positive("a learning-rate multiplier > 0").optional(),
  })
  .strict();

const dynamicsSchema = z
  .object({
    kind: z.enum(["rate", "energy"], { error: "one of rate, energy" }).default("rate"),
    dt: positive("a step dt > 0").default(0.2),
    maxSteps: positiveInt().default(500),
    tolerance: positive("a tolerance > 0").default(1e-6),
    bound: positive("a divergence bound > 0").default(1e6),
    clip: z.boolean().default(false),
  })
  .strict();

/** Schema of a whole network declaration (a model file's `network` part). @category Network */
export const networkSchema = z
  .object({
    name: z.string().optional(),
    dtype: z.enum(["float32", "float64"], { error: "one of float32, float64" }).default("float64"),
    seed: z.union([finite(), z.string()], { error: "a number or a string" }).default(0),
    layers: z.array(layerSchema, { error: "an array of layers" }).min(1, { error: "at least one layer" }),
    connections: z.array(connectionSchema, { error: "an array of connections" }),
    dynamics: dynamicsSchema.default({ kind: "rate", dt: 0.2, maxSteps: 500, tolerance: 1e-6, bound: 1e6, clip: false }),
  })
  .strict();

/** A network declaration as written (defaults may be omitted). @category Network */
export type NetworkSpecInput = z.input<typeof networkSchema>;
/** A network declaration with every default filled in. @category Network */
export type NetworkSpec = z.output<typeof networkSchema>;
/** One layer of a {@link NetworkSpec}. @category Network */
export type LayerSpec = NetworkSpec["layers"][number];
/** One connection of a {@link NetworkSpec}. @category Network */
export type ConnectionSpec = NetworkSpec["connections"][number];
/** Settling dynamics of a {@link NetworkSpec}. @category Network */
export type DynamicsSpec = NetworkSpec["dynamics"];
/** Weight initialiser of a connection. @category Network */
export type InitSpecData = z.output<typeof initSchema>;
/** Inhibition of a layer. @category Network */
export type InhibitionSpec = LayerSpec["inhibition"];
/** Feedback path of a connection. @category Network */
export type FeedbackSpec = ConnectionSpec["feedback"];

/** Renders a zod path as `layers[2].size`. @category Errors */
export function formatPath(path: readonly PropertyKey[]): string {
  let out = "";
  for (const key of path) {
    if (typeof key === "number") out += `[${key}]`;
    else out += out === "" ? String(key) : `.${String(key)}`;
  }
  return out;
}

function valueAt(root: unknown, path: readonly PropertyKey[]): unknown {
  let v: unknown = root;
  for (const key of path) {
    if (v === null || typeof v !== "object") return undefined;
    v = (v as Record<PropertyKey, unknown>)[key];
  }
  return v;
}

/** Converts zod issues to ebbflow issues, with the value found at each path. @category Errors */
export function issuesFromZod(error: z.ZodError, input: unknown, prefix: readonly PropertyKey[] = []): Issue[] {
  const out: Issue[] = [];
  for (const zi of error.issues) {
    const path = [...prefix, ...zi.path];
    if (zi.code === "unrecognized_keys") {
      for (const key of zi.keys) out.push(issueText("invalid_config", formatPath([...path, key]), "no such field (unknown key)", describeValue(valueAt(input, [...zi.path, key]))));
      continue;
    }
    let expected = zi.message.replace(/^Invalid input: expected /, "").replace(/, received \w+$/, "");
    if (zi.code === "invalid_union" && "options" in zi) expected = `one of ${(zi.options as unknown[]).map(String).join(", ")}`;
    out.push(issueText("invalid_config", formatPath(path), expected, describeValue(valueAt(input, zi.path))));
  }
  return capIssues(out);
}

/** Cross-field checks that a schema alone cannot express. Returns every problem found. */
function crossCheck(spec: NetworkSpec): Issue[] {
  const problems: Issue[] = [];
  const index = new Map<string, number>();
  spec.layers.forEach((layer, i) => {
    if (index.has(layer.name)) problems.push(issueText("invalid_config", `layers[${i}].name`, "a unique layer name", describeValue(layer.name), `also used by layers[${index.get(layer.name)}]`));
    else index.set(layer.name, i);
    if (layer.inhibition.kind === "kwta" && layer.inhibition.k > layer.size) {
      problems.push(issueText("invalid_config", `layers[${i}].inhibition.k`, `k <= size (${layer.size})`, String(layer.inhibition.k)));
    }
    if (Array.isArray(layer.bias) && layer.bias.length !== layer.size) {
      problems.push(issueText("invalid_config", `layers[${i}].bias`, `a number or an array of length ${layer.size}`, `array of length ${layer.bias.length}`));
    }
  });
  if (!spec.layers.some((l) => l.role === "input")) problems.push(issueText("invalid_config", "layers", "at least one layer with role input", "none"));
  const seenPairs = new Map<string, number>();
  spec.connections.forEach((c, i) => {
    const from = index.get(c.from);
    const to = index.get(c.to);
    if (from === undefined) problems.push(issueText("invalid_config", `connections[${i}].from`, `a layer name (${[...index.keys()].join(", ")})`, describeValue(c.from)));
    if (to === undefined) problems.push(issueText("invalid_config", `connections[${i}].to`, `a layer name (${[...index.keys()].join(", ")})`, describeValue(c.to)));
    if (to !== undefined && spec.layers[to]?.role === "input") problems.push(issueText("invalid_config", `connections[${i}].to`, "a hidden or output layer (input layers are always clamped)", describeValue(c.to)));
    const key = `${c.from}->${c.to}`;
    if (seenPairs.has(key)) problems.push(issueText("invalid_config", `connections[${i}]`, "at most one connection per (from, to) pair", key, `also connections[${seenPairs.get(key)}]`));
    else seenPairs.set(key, i);
    if (from !== undefined && to !== undefined && c.weights !== undefined) {
      const n = (spec.layers[from]?.size ?? 0) * (spec.layers[to]?.size ?? 0);
      if (c.weights.length !== n) problems.push(issueText("invalid_config", `connections[${i}].weights`, `an array of |to|*|from| = ${n} numbers (row-major, rows = receiving units)`, `array of length ${c.weights.length}`));
    }
    if (from !== undefined && from === to && c.feedback.kind !== "none") {
      problems.push(issueText("invalid_config", `connections[${i}].feedback`, "kind none for a lateral (within-layer) connection", c.feedback.kind));
    }
  });
  if (problems.length === 0) {
    // reachability: every non-input layer must be reachable from an input along connections or feedback paths
    const n = spec.layers.length;
    const reach = new Array<boolean>(n).fill(false);
    const queue: number[] = [];
    spec.layers.forEach((l, i) => {
      if (l.role === "input") {
        reach[i] = true;
        queue.push(i);
      }
    });
    while (queue.length > 0) {
      const cur = queue.shift() as number;
      for (const c of spec.connections) {
        const from = index.get(c.from) as number;
        const to = index.get(c.to) as number;
        const next = from === cur ? to : c.feedback.kind !== "none" && to === cur ? from : -1;
        if (next >= 0 && !reach[next]) {
          reach[next] = true;
          queue.push(next);
        }
      }
    }
    spec.layers.forEach((l, i) => {
      if (!reach[i]) problems.push(issueText("invalid_config", `layers[${i}]`, "a layer reachable from an input layer through connections", `layer ${JSON.stringify(l.name)} is unreachable`));
    });
  }
  problems.push(...valueIssues(spec));
  return problems;
}

/** Result of {@link safeParseNetwork}. @category Network */
export type ParseResult<T> = { readonly ok: true; readonly value: T } | { readonly ok: false; readonly issues: readonly Issue[] };

/**
 * Validates a network declaration without throwing; collects every problem,
 * each with its path, what was expected and what was found.
 * @category Network
 */
export function safeParseNetwork(input: unknown): ParseResult<NetworkSpec> {
  const shape = inputShapeIssues(input);
  if (shape.length > 0) return { ok: false, issues: shape };
  const result = networkSchema.safeParse(input);
  if (!result.success) return { ok: false, issues: issuesFromZod(result.error, input) };
  const problems = crossCheck(result.data);
  return problems.length > 0 ? { ok: false, issues: problems } : { ok: true, value: result.data };
}

/**
 * Validates a network declaration and fills in defaults.
 * @throws {@link EbbflowError} `invalid_config` listing every problem found.
 * @category Network
 */
export function parseNetwork(input: unknown): NetworkSpec {
  const r = safeParseNetwork(input);
  if (!r.ok) throw new EbbflowError(r.issues);
  return r.value;
}

/** The JSON Schema (draft 2020-12) of a network declaration, for editors. @category Network */
export function networkJsonSchema(): Record<string, unknown> {
  return z.toJSONSchema(networkSchema, { io: "input", unrepresentable: "any" }) as Record<string, unknown>;
}
