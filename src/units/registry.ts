/**
 * Unit kinds as descriptors, and the registry that knows them by name.
 *
 * A unit kind is one {@link UnitDescriptor}: its config name, the zod schema of its spec (defaults
 * filled in), a one-line formula and a factory that makes the unit function. The eight built-in
 * kinds are descriptors like any other (`builtinUnits`); a user's kind is added with
 * `builtinUnits.with(myUnit)` and the registry passed where units are named (`buildNetwork(spec,
 * { units })`, `modelFromData(text, { units })`). A kind that is not registered is refused with a
 * typed error naming it; nothing is replaced by another kind.
 * @module
 */
import { z } from "zod";
import { EbbflowError, describeValue, formatPath, issue, issueText, joinPath, valueAt, type Issue } from "../errors/index.js";
import type { UnitFunction, UnitKernelKind } from "./spec.js";

/** A unit spec of any kind: an object naming its kind. @category Units */
export interface AnyUnitSpec {
  readonly kind: string;
}

/** A unit spec as written in a declaration: its kind and the kind's fields. @category Units */
export type UnitSpecInput = AnyUnitSpec & { readonly [field: string]: unknown };

/**
 * Marks a field of a descriptor's schema that holds another unit spec (as `base` of the noisy
 * unit): the registry validates and normalises it as a unit of its own kinds (so a noisy unit
 * over a user's kind works), reports its problems under the field's path (`base.gain`), and
 * hands `create` the normalised spec. Use it as the field's schema as it is (not wrapped in
 * `.optional()` or `.default()`).
 * @category Units
 */
export const unitSpecField = z.looseObject({ kind: z.string({ error: "a unit kind (a string)" }) });

/**
 * One unit kind: everything ebbflow knows about it, in one place.
 * @typeParam S The normalised spec (the schema's output: defaults filled in).
 * @typeParam I The spec as written (the schema's input).
 * @category Units
 */
export interface UnitDescriptor<S extends AnyUnitSpec = AnyUnitSpec, I = unknown> {
  /** The config name (`unit: { kind: "..." }`); the schema's `kind` literal. */
  readonly kind: S["kind"];
  /**
   * Strict zod object schema of the spec: `kind` as a literal, every parameter with its range
   * (the message of each check says what a valid value is) and its default. Fields whose schema
   * is {@link unitSpecField} hold nested unit specs.
   */
  readonly schema: z.ZodType<S, I>;
  /** One line with the formula, for documentation and error messages. */
  readonly summary: string;
  /**
   * The WebAssembly SIMD kernel that evaluates this kind's units (built-in kinds only): the
   * units it makes carry `kernel` with this kind. A kind without one runs its own `fill` on
   * every backend.
   */
  readonly kernel?: UnitKernelKind | undefined;
  /**
   * Makes the unit function of a normalised spec (validated by the schema; nested unit specs
   * normalised by `units`, through which they are also created). Scalar `value`/`slope` can
   * be lifted to fills with `unitFromScalars`.
   * @throws {@link EbbflowError} with paths relative to the spec (`range`, `base.gain`).
   */
  create(spec: S, units: UnitRegistry): UnitFunction<S>;
}

/**
 * Types a unit descriptor (the spec types are inferred from its schema) and returns it unchanged.
 * @param descriptor The descriptor.
 * @returns The same descriptor.
 * @category Units
 * @example
 * ```ts
 * const arctan = defineUnit({
 *   kind: "arctan",
 *   schema: z.object({ kind: z.literal("arctan"), gain: positiveField().default(1) }).strict(),
 *   summary: "0.5 + atan(gain x) / pi",
 *   create: (spec) => unitFromScalars(spec, { lower: 0, upper: 1,
 *     value: (x) => 0.5 + Math.atan(spec.gain * x) / Math.PI,
 *     slope: (x) => spec.gain / (Math.PI * (1 + (spec.gain * x) ** 2)) }),
 * });
 * const units = builtinUnits.with(arctan);
 * units.create({ kind: "arctan", gain: 2 }).value(0); // 0.5
 * ```
 */
export function defineUnit<S extends AnyUnitSpec, I>(descriptor: UnitDescriptor<S, I>): UnitDescriptor<S, I> {
  return descriptor;
}

/** The normalised spec of a descriptor. @category Units */
export type SpecOfDescriptor<D> = D extends UnitDescriptor<infer S, unknown> ? S : never;
/** The spec of a descriptor as written (defaults may be omitted), read-only. @category Units */
export type InputOfDescriptor<D> = D extends UnitDescriptor<AnyUnitSpec, infer I> ? Readonly<I> : never;

// eslint-disable-next-line @typescript-eslint/no-explicit-any
/** A descriptor of any spec type (a registry stores them side by side). @category Units */
export type SomeDescriptor = UnitDescriptor<any, any>;

/** Key of the zod `custom` issues that carry an ebbflow issue found by a nested validation. */
const ISSUE = "ebbflowIssue";

/**
 * Reports `issues` (paths relative to the value being checked) as zod issues of a transform, so
 * that a zod schema embedding a unit field reports them at their place. @internal
 */
export function reportIssues(ctx: z.RefinementCtx, issues: readonly Issue[]): void {
  for (const i of issues) ctx.addIssue({ code: "custom", message: i.expected, params: { [ISSUE]: i } });
}

/** The ebbflow issue a zod issue carries (see {@link reportIssues}), if any. @internal */
export function carriedIssue(zi: z.core.$ZodIssue): Issue | undefined {
  if (zi.code !== "custom") return undefined;
  const i = (zi.params as Record<string, unknown> | undefined)?.[ISSUE];
  return i !== null && typeof i === "object" ? (i as Issue) : undefined;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

/** Freezes an object and everything it holds. @internal */
export function deepFreeze<T>(o: T): T {
  if (typeof o === "object" && o !== null && !Object.isFrozen(o)) {
    for (const v of Object.values(o)) deepFreeze(v);
    Object.freeze(o);
  }
  return o;
}

/** The shape of a zod object schema, or undefined. */
function shapeOf(schema: unknown): Record<string, unknown> | undefined {
  const shape = (schema as { shape?: unknown } | null | undefined)?.shape;
  return isRecord(shape) ? shape : undefined;
}

/** The value of a zod literal schema with exactly one value, or undefined. */
function literalOf(schema: unknown): unknown {
  const values = (schema as { _zod?: { def?: { type?: string; values?: unknown[] } } } | undefined)?._zod?.def;
  return values?.type === "literal" && values.values?.length === 1 ? values.values[0] : undefined;
}

/**
 * An immutable set of unit kinds, each a {@link UnitDescriptor}: validates unit specs (every
 * problem at once, each with its path) and makes unit functions by kind name.
 * `builtinUnits` holds the eight built-in kinds; `with` adds more.
 * @category Units
 * @example
 * ```ts
 * builtinUnits.kinds; // ["logistic", "tanh", "linear", "relu", "hard-sigmoid", "softplus", "saturating", "noisy"]
 * builtinUnits.parse({ kind: "softplus" }); // { kind: "softplus", gain: 1 }
 * builtinUnits.create({ kind: "relu" }).value(-1); // 0
 * ```
 */
export class UnitRegistry {
  /** A registry with no kinds (start of a registry that replaces the built-in kinds). */
  static readonly empty: UnitRegistry = new UnitRegistry([]);

  /** The registered kinds, in registration order. */
  readonly kinds: readonly string[];
  private readonly byKind: ReadonlyMap<string, SomeDescriptor>;
  /** Per kind: the descriptor's schema with its nested unit fields validated through this registry (built on first use). */
  private readonly bound = new Map<string, z.ZodType>();
  private nestedField: z.ZodType | undefined;
  private union: z.ZodType | undefined;

  private constructor(descriptors: readonly SomeDescriptor[]) {
    this.byKind = new Map(descriptors.map((d) => [d.kind as string, d]));
    this.kinds = Object.freeze(descriptors.map((d) => d.kind as string));
  }

  /** Whether `kind` is registered. */
  has(kind: string): boolean {
    return this.byKind.has(kind);
  }

  /**
   * The descriptor of `kind`.
   * @param kind A kind name.
   * @param path Where the kind was named, for the error (default `kind`).
   * @throws {@link EbbflowError} `unknown_name` at `path`, naming the kind and the registered kinds.
   */
  get(kind: string, path = "kind"): SomeDescriptor {
    const d = this.byKind.get(kind);
    if (d === undefined) throw new EbbflowError(this.unknownKind(path, kind));
    return d;
  }

  private unknownKind(path: string, kind: unknown): Issue {
    const known = this.kinds.length === 0 ? "none are registered" : `registered: ${this.kinds.join(", ")}`;
    return issue("unknown_name", path, `a registered unit kind (${known}); register a new kind with units.with(defineUnit({ kind, schema, summary, create })) and pass the registry as { units }`, kind);
  }

  /**
   * A new registry with `descriptors` added after this one's kinds.
   * @throws {@link EbbflowError} `invalid_parameter` at `descriptors[i].kind` for a kind already
   *   registered (or given twice), and at `descriptors[i].schema` / `.create` / `.summary` for a
   *   descriptor that is not well formed (every problem at once).
   */
  with(...descriptors: readonly SomeDescriptor[]): UnitRegistry {
    const problems: Issue[] = [];
    const seen = new Set(this.kinds);
    descriptors.forEach((d, i) => {
      const at = `descriptors[${i}]`;
      if (!isRecord(d)) {
        problems.push(issue("invalid_parameter", at, "a unit descriptor { kind, schema, summary, create }", d));
        return;
      }
      if (typeof d.kind !== "string" || d.kind === "") problems.push(issue("invalid_parameter", `${at}.kind`, "a non-empty kind name", d.kind));
      else if (seen.has(d.kind)) problems.push(issue("invalid_parameter", `${at}.kind`, `a kind not registered yet (registered: ${[...seen].join(", ")})`, d.kind));
      else seen.add(d.kind);
      const shape = shapeOf(d.schema);
      if (shape === undefined || typeof (d.schema as { safeParse?: unknown }).safeParse !== "function") {
        problems.push(issue("invalid_parameter", `${at}.schema`, "a zod object schema of the spec", d.schema));
      } else if (literalOf(shape.kind) !== d.kind) {
        problems.push(issue("invalid_parameter", `${at}.schema`, `a schema whose kind is z.literal(${JSON.stringify(d.kind)})`, literalOf(shape.kind)));
      }
      if (typeof d.create !== "function") problems.push(issue("invalid_parameter", `${at}.create`, "a function (spec, units) => unit function", d.create));
      if (typeof d.summary !== "string") problems.push(issue("invalid_parameter", `${at}.summary`, "a one-line formula (string)", d.summary));
    });
    if (problems.length > 0) throw new EbbflowError(problems);
    return new UnitRegistry([...this.byKind.values(), ...descriptors]);
  }

  /**
   * Checks a raw spec and returns its normalised copy (defaults filled in), adding every problem
   * to `issues` with its path under `path`: `unknown_name` for an unregistered kind or a field
   * the kind does not have, `invalid_parameter` for a bad value. @internal
   */
  collect(raw: unknown, path: string, issues: Issue[]): AnyUnitSpec | undefined {
    if (!isRecord(raw)) {
      issues.push(issue("invalid_parameter", path, "a unit spec object with a `kind`", raw));
      return undefined;
    }
    const kind = raw.kind;
    const d = typeof kind === "string" ? this.byKind.get(kind) : undefined;
    if (d === undefined) {
      issues.push(this.unknownKind(joinPath(path, "kind"), kind));
      return undefined;
    }
    const r = this.boundSchema(d).safeParse(raw);
    if (r.success) return r.data as AnyUnitSpec;
    const fields = Object.keys(shapeOf(d.schema) ?? {});
    for (const zi of r.error.issues) {
      const at = joinPath(path, formatPath(zi.path));
      const carried = carriedIssue(zi);
      if (carried !== undefined) issues.push({ ...carried, path: joinPath(at, carried.path) });
      else if (zi.code === "unrecognized_keys") {
        for (const key of zi.keys) {
          issues.push(issue("unknown_name", joinPath(at, key), `no such field for a ${d.kind} unit (unknown key; fields: ${fields.join(", ")})`, valueAt(raw, [...zi.path, key])));
        }
      } else {
        const expected = zi.message.replace(/^Invalid input: expected /, "").replace(/, received \w+$/, "");
        issues.push(issueText("invalid_parameter", at, expected, describeValue(valueAt(raw, zi.path))));
      }
    }
    return undefined;
  }

  /**
   * Validates a unit spec and returns a normalised copy (defaults filled in), or every problem.
   * @param raw The spec, typically from a config file.
   * @param path Where the spec sits, prefixed to the issues' paths (default: none).
   */
  safeParse(raw: unknown, path = ""): { readonly ok: true; readonly value: AnyUnitSpec } | { readonly ok: false; readonly issues: readonly Issue[] } {
    const issues: Issue[] = [];
    const value = this.collect(raw, path, issues);
    return issues.length > 0 || value === undefined ? { ok: false, issues } : { ok: true, value };
  }

  /**
   * Validates a unit spec and returns a normalised copy (defaults filled in).
   * @param raw The spec.
   * @param path Where the spec sits, prefixed to the issues' paths (default: none).
   * @throws {@link EbbflowError} listing every problem: `unknown_name` at `kind` for an
   *   unregistered kind (naming it and the registered kinds) or at a field the kind does not
   *   have, `invalid_parameter` at a bad value (`gain`, `base.gain`, `range[0]`).
   */
  parse(raw: unknown, path = ""): AnyUnitSpec {
    const r = this.safeParse(raw, path);
    if (!r.ok) throw new EbbflowError(r.issues);
    return r.value;
  }

  /**
   * Validates a spec once and makes its unit function (rate, slope, bounds, allocation-free
   * fills); the unit's `spec` is a frozen normalised copy.
   * @param raw The spec.
   * @param path Where the spec sits, prefixed to the issues' paths (default: none).
   * @throws {@link EbbflowError} as {@link UnitRegistry.parse}, and the descriptor's own errors
   *   (paths prefixed); `unsupported` when a descriptor without a `kernel` returns a unit that names one.
   */
  create(raw: unknown, path = ""): UnitFunction {
    const spec = deepFreeze(this.parse(raw, path));
    const d = this.get(spec.kind, joinPath(path, "kind"));
    let unit: UnitFunction;
    try {
      unit = d.create(spec, this);
    } catch (e) {
      if (!(e instanceof EbbflowError) || path === "") throw e;
      throw new EbbflowError(e.issues.map((i) => ({ ...i, path: joinPath(path, i.path) })));
    }
    if (unit.kernel !== undefined && unit.kernel.kind !== d.kernel) {
      throw new EbbflowError(issueText("unsupported", joinPath(path, "kind"), `a unit whose kernel is its descriptor's (${d.kernel ?? "none"})`, `a ${d.kind} unit naming the ${unit.kernel.kind} kernel`));
    }
    return unit;
  }

  /**
   * A zod field that validates a unit spec through this registry (problems reported at their
   * place, with this registry's codes) and outputs the normalised spec. @internal
   */
  get field(): z.ZodType<AnyUnitSpec, UnitSpecInput> {
    this.nestedField ??= z.custom<UnitSpecInput>(() => true).transform((raw, ctx) => {
      const issues: Issue[] = [];
      const spec = this.collect(raw, "", issues);
      reportIssues(ctx, issues);
      return spec === undefined || issues.length > 0 ? z.NEVER : spec;
    });
    return this.nestedField as z.ZodType<AnyUnitSpec, UnitSpecInput>;
  }

  /**
   * The zod schema of a spec of any registered kind, for JSON Schema export and editors: a
   * union of the descriptors' schemas on `kind`, nested unit fields recursive. Validate with
   * {@link UnitRegistry.parse}, which names unknown kinds and fields.
   * @throws {@link EbbflowError} `unsupported` for a registry with no kinds.
   */
  get schema(): z.ZodType<UnitSpecInput, UnitSpecInput> {
    if (this.union === undefined) {
      const descriptors = [...this.byKind.values()];
      if (descriptors.length === 0) throw new EbbflowError(issueText("unsupported", "units", "a registry with at least one kind", "an empty registry"));
      const self: z.ZodType = z.lazy(() => union);
      const options = descriptors.map((d) => this.withNested(d, self));
      const union = z.discriminatedUnion("kind", options as unknown as [z.ZodObject, ...z.ZodObject[]], { error: `a unit kind: ${this.kinds.join(", ")}` });
      this.union = self;
    }
    return this.union as z.ZodType<UnitSpecInput, UnitSpecInput>;
  }

  private boundSchema(d: SomeDescriptor): z.ZodType {
    let s = this.bound.get(d.kind);
    if (s === undefined) {
      s = this.withNested(d, this.field);
      this.bound.set(d.kind, s);
    }
    return s;
  }

  /** The descriptor's schema with its {@link unitSpecField} fields replaced by `field`. */
  private withNested(d: SomeDescriptor, field: z.ZodType): z.ZodType {
    const shape = shapeOf(d.schema) ?? {};
    const nested = Object.keys(shape).filter((k) => shape[k] === unitSpecField);
    if (nested.length === 0) return d.schema;
    return (d.schema as unknown as z.ZodObject).extend(Object.fromEntries(nested.map((k) => [k, field])));
  }
}
