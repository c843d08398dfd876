/**
 * The declaration of a network as data: one zod schema from which the
 * TypeScript types, the runtime validation and the JSON Schema export all
 * derive. Cross-field checks (unknown layers, reachability, k <= size, ...)
 * are collected together with the schema's own problems and reported at once.
 * @module
 */
import { z } from "zod";
import { EbbflowError, capIssues, describeValue, formatPath, inputShapeIssues, issueText, joinPath, valueAt, type Issue } from "../errors/index.js";
import { finiteField, integerField, nonNegativeField, positiveField } from "../errors/fields.js";
import { builtinUnits } from "../units/builtins.js";
import { carriedIssue, reportIssues, type UnitRegistry, type UnitSpecInput } from "../units/registry.js";
import { valueIssues } from "./checks.js";
import { patternIssues, patternSchema } from "./pattern.js";

/** Copies plain data (objects, arrays, numbers, strings): a unit spec kept as written. */
function copyData<T>(v: T): T {
  if (Array.isArray(v)) return v.map(copyData) as T;
  if (v !== null && typeof v === "object") return Object.fromEntries(Object.entries(v).map(([k, x]) => [k, copyData(x)])) as T;
  return v;
}

/**
 * A layer's `unit` field validated through `units`: problems are reported at their place (an
 * unregistered kind as `unknown_name` at `layers[i].unit.kind`, naming it); the declaration keeps
 * the spec as written (defaults are filled in by the unit, so the declaration's text, and the
 * ids derived from it, do not change when a kind gains a parameter).
 */
function unitField(units: UnitRegistry): z.ZodType<UnitSpecInput, UnitSpecInput> {
  return z.custom<UnitSpecInput>(() => true).transform((raw, ctx) => {
    const issues: Issue[] = [];
    units.collect(raw, "", issues);
    reportIssues(ctx, issues);
    return issues.length > 0 ? z.NEVER : copyData(raw);
  });
}

/** Schema of a weight initialiser. @category Network */
export const initSchema = z.discriminatedUnion(
  "kind",
  [
    z.object({ kind: z.literal("uniform"), low: finiteField(), high: finiteField() }).strict(),
    z.object({ kind: z.literal("normal"), mean: finiteField().optional(), std: nonNegativeField() }).strict(),
    z.object({ kind: z.literal("glorot-uniform") }).strict(),
    z.object({ kind: z.literal("glorot-normal") }).strict(),
    z.object({ kind: z.literal("constant"), value: finiteField() }).strict(),
  ],
  { error: "an initialiser kind: uniform, normal, glorot-uniform, glorot-normal or constant" },
);

const inhibitionSchema = z.discriminatedUnion(
  "kind",
  [
    z.object({ kind: z.literal("none") }).strict(),
    z.object({ kind: z.literal("pooled"), gain: nonNegativeField() }).strict(),
    z.object({ kind: z.literal("kwta"), k: integerField() }).strict(),
  ],
  { error: "an inhibition kind: none, pooled or kwta" },
);

/**
 * Schema of a layer's spike-frequency adaptation, rate form of Benda & Herz (2003), Neural Computation 15:2523:
 * `τ_a da/dt = g·r − a`, with `a` subtracted from the net input. `tau` in the time units of `dynamics.dt`.
 * @category Network
 */
export const adaptationSchema = z
  .object({
    tau: positiveField("an adaptation time constant > 0 (in the time units of dynamics.dt)"),
    gain: nonNegativeField("an adaptation gain >= 0"),
  })
  .strict();

/**
 * Schema of a connection's short-term depression, rate form of Tsodyks & Markram (1997), PNAS 94:719:
 * `dR/dt = (1 − R)/τ_rec − U·R·r_pre`, effective weight `W·R` per sending unit; `recovery` is τ_rec.
 * @category Network
 */
export const depressionSchema = z
  .object({
    recovery: positiveField("a recovery time constant > 0 (in the time units of dynamics.dt)"),
    use: z.number({ error: "a utilisation fraction in (0, 1]" }).refine((v) => Number.isFinite(v) && v > 0 && v <= 1, { error: "a utilisation fraction in (0, 1]" }),
  })
  .strict();

/** The network declaration's schema with the given schema of a layer's `unit`. */
function networkSchemaWith(unit: z.ZodType<UnitSpecInput, UnitSpecInput>) {
  const layerSchema = z
    .object({
      name: z.string({ error: "a non-empty name" }).min(1, { error: "a non-empty name" }),
      // size or shape (or both, agreeing): a layer built from `shape` alone gets size = the product of its dimensions
      size: integerField("a positive integer").optional(),
      shape: z.array(integerField("a positive integer"), { error: "an array [n], [rows, columns] or [rows, columns, channels]" }).min(1, { error: "1 to 3 dimensions" }).max(3, { error: "1 to 3 dimensions" }).optional(),
      role: z.enum(["input", "hidden", "output"], { error: "one of input, hidden, output" }),
      unit: unit.default({ kind: "logistic" }),
      bias: z.union([finiteField(), z.array(finiteField())], { error: "a finite number or an array of finite numbers" }).default(0),
      inhibition: inhibitionSchema.default({ kind: "none" }),
      // time constant of the layer's rate dynamics: its step is dynamics.dt / tau (default 1; the fixed point does not depend on it)
      tau: positiveField("a time constant > 0 (in the time units of dynamics.dt)").optional(),
      // spike-frequency adaptation: a variable with its own time constant subtracted from the net input
      adaptation: adaptationSchema.optional(),
    })
    .strict()
    .transform((l, ctx) => {
      const fromShape = l.shape?.reduce((a, b) => a * b, 1);
      if (l.size === undefined && fromShape === undefined) {
        ctx.addIssue({ code: "custom", path: ["size"], message: "a positive integer (or a shape)", input: undefined });
        return z.NEVER;
      }
      if (l.size !== undefined && fromShape !== undefined && l.size !== fromShape) {
        ctx.addIssue({ code: "custom", path: ["size"], message: `the product of the shape's dimensions (${fromShape})`, input: l.size });
        return z.NEVER;
      }
      return { ...l, size: (l.size ?? fromShape) as number };
    });

  const feedbackSchema = z.discriminatedUnion(
    "kind",
    [
      z.object({ kind: z.literal("none") }).strict(),
      z.object({ kind: z.literal("tied"), gain: nonNegativeField("a feedback gain >= 0") }).strict(),
      z.object({ kind: z.literal("separate"), learned: z.boolean().default(true), init: initSchema.optional() }).strict(),
    ],
    { error: "a feedback kind: none, tied or separate" },
  );

  const connectionSchema = z
    .object({
      from: z.string({ error: "a layer name" }),
      to: z.string({ error: "a layer name" }),
      init: initSchema.default({ kind: "glorot-uniform" }),
      weights: z.array(finiteField()).optional(),
      feedback: feedbackSchema.default({ kind: "none" }),
      sign: z.enum(["any", "excitatory", "inhibitory"], { error: "one of any, excitatory, inhibitory" }).default("any"),
      bounds: z.enum(["none", "soft"], { error: "one of none, soft" }).default("none"),
      frozen: z.boolean().default(false),
      rate: positiveField("a learning-rate multiplier > 0").optional(),
      // which weights exist and which share one value (absent: full)
      pattern: patternSchema.optional(),
      // weight storage: "dense" (full matrix, zeros outside the pattern), "sparse" (row-compressed products), "auto" (by density)
      storage: z.enum(["dense", "sparse", "auto"], { error: "one of dense, sparse, auto" }).optional(),
      // short-term synaptic depression of the forward path's effective weight (per sending unit)
      depression: depressionSchema.optional(),
    })
    .strict();

  const dynamicsSchema = z
    .object({
      kind: z.enum(["rate", "energy"], { error: "one of rate, energy" }).default("rate"),
      dt: positiveField("a step dt > 0").default(0.2),
      maxSteps: integerField().default(500),
      tolerance: positiveField("a tolerance > 0").default(1e-6),
      bound: positiveField("a divergence bound > 0").default(1e6),
      // clip energy-dynamics states to the unit's range: "auto" where that changes no fixed point (see clippedLayers)
      clip: z.union([z.boolean(), z.literal("auto")], { error: 'true, false or "auto"' }).default("auto"),
    })
    .strict();

  return z
    .object({
      name: z.string().optional(),
      dtype: z.enum(["float32", "float64"], { error: "one of float32, float64" }).default("float64"),
      seed: z.union([finiteField(), z.string()], { error: "a number or a string" }).default(0),
      layers: z.array(layerSchema, { error: "an array of layers" }).min(1, { error: "at least one layer" }),
      connections: z.array(connectionSchema, { error: "an array of connections" }),
      dynamics: dynamicsSchema.default({ kind: "rate", dt: 0.2, maxSteps: 500, tolerance: 1e-6, bound: 1e6, clip: "auto" }),
    })
    .strict();
}

/**
 * Schema of a whole network declaration (a model file's `network` part), with the built-in unit
 * kinds; `safeParseNetwork(input, units)` validates with another unit registry.
 * @category Network
 */
export const networkSchema = networkSchemaWith(unitField(builtinUnits));

const schemaByRegistry = new WeakMap<UnitRegistry, typeof networkSchema>([[builtinUnits, networkSchema]]);

/** The declaration's schema whose units are validated through `units` (built once per registry). */
function networkSchemaFor(units: UnitRegistry): typeof networkSchema {
  let s = schemaByRegistry.get(units);
  if (s === undefined) {
    s = networkSchemaWith(unitField(units));
    schemaByRegistry.set(units, s);
  }
  return s;
}

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

/** Converts zod issues to ebbflow issues, with the value found at each path. @category Errors */
export function issuesFromZod(error: z.ZodError, input: unknown, prefix: readonly PropertyKey[] = []): Issue[] {
  const out: Issue[] = [];
  for (const zi of error.issues) {
    const path = [...prefix, ...zi.path];
    const carried = carriedIssue(zi);
    if (carried !== undefined) {
      // a unit problem found by the unit registry: a bad value is a config problem here; an unknown kind or field keeps unknown_name
      out.push({ ...carried, code: carried.code === "invalid_parameter" ? "invalid_config" : carried.code, path: joinPath(formatPath(path), carried.path) });
      continue;
    }
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
    if (layer.role === "input" && layer.tau !== undefined) problems.push(issueText("invalid_config", `layers[${i}].tau`, "no time constant on an input layer (its values are clamped)", String(layer.tau)));
    if (layer.role === "input" && layer.adaptation !== undefined) problems.push(issueText("invalid_config", `layers[${i}].adaptation`, "no adaptation on an input layer (its values are clamped)", "an adaptation"));
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
    if (from !== undefined && to !== undefined && c.pattern !== undefined) {
      problems.push(...patternIssues(c.pattern, { from: spec.layers[from] as LayerSpec, to: spec.layers[to] as LayerSpec, lateral: from === to }, `connections[${i}].pattern`));
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
 * @param input The declaration.
 * @param units The unit kinds layers may name (default: the built-in kinds); an unregistered
 *   kind is reported as `unknown_name` at `layers[i].unit.kind`.
 * @category Network
 */
export function safeParseNetwork(input: unknown, units: UnitRegistry = builtinUnits): ParseResult<NetworkSpec> {
  const shape = inputShapeIssues(input);
  if (shape.length > 0) return { ok: false, issues: shape };
  const result = networkSchemaFor(units).safeParse(input);
  if (!result.success) return { ok: false, issues: issuesFromZod(result.error, input) };
  const problems = crossCheck(result.data);
  return problems.length > 0 ? { ok: false, issues: problems } : { ok: true, value: result.data };
}

/**
 * Validates a network declaration and fills in defaults.
 * @param input The declaration.
 * @param units The unit kinds layers may name (default: the built-in kinds).
 * @throws {@link EbbflowError} `invalid_config` listing every problem found (`unknown_name`
 *   for a unit kind `units` does not know).
 * @category Network
 */
export function parseNetwork(input: unknown, units: UnitRegistry = builtinUnits): NetworkSpec {
  const r = safeParseNetwork(input, units);
  if (!r.ok) throw new EbbflowError(r.issues);
  return r.value;
}

/** The JSON Schema (draft 2020-12) of a network declaration, for editors. @category Network */
export function networkJsonSchema(): Record<string, unknown> {
  // the editors' schema lists the built-in kinds (a union on `kind`); validation goes through the registry
  return z.toJSONSchema(networkSchemaWith(builtinUnits.schema), { io: "input", unrepresentable: "any" }) as Record<string, unknown>;
}

/** A layer's spike-frequency adaptation (see {@link adaptationSchema}). @category Network */
export type AdaptationSpec = z.output<typeof adaptationSchema>;
/** A connection's short-term depression (see {@link depressionSchema}). @category Network */
export type DepressionSpec = z.output<typeof depressionSchema>;
