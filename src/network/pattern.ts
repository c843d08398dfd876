/**
 * Layer geometry and connection patterns: which weights of a connection exist, which positions share
 * one parameter, and whether a lateral matrix is tied symmetric. A declaration's `pattern` is compiled
 * once per connection into a {@link CompiledPattern}; every path that changes weights (rules through
 * `applyDelta`, the optimizer, initialisation, explicit weights, model files and checkpoints) goes
 * through {@link projectArray}, so a weight outside the pattern is exactly zero, the positions of a
 * shared parameter hold one value, and a symmetric matrix stays equal to its transpose.
 * @module
 */
import { z } from "zod";
import { EbbflowError, issueText, type Issue } from "../errors/index.js";
import { finiteField, integerField, positiveField } from "../errors/fields.js";
import type { RandomStream } from "../random/index.js";
import type { FloatArray } from "../types/index.js";

/** An integer >= min, or a pair of them ([rows, columns]). */
const pairField = (what: string, min: number) => z.union([integerField(what, min), z.tuple([integerField(what, min), integerField(what, min)])], { error: `${what}, or a pair [rows, columns] of them` });

const lateralFields = {
  /** Lateral connections only: whether a unit connects to itself (default true). */
  selfConnections: z.boolean({ error: "true or false" }).optional(),
  /** Lateral connections only: tie the matrix symmetric, W = Wᵀ (default false). */
  symmetric: z.boolean({ error: "true or false" }).optional(),
};

/** Schema of a local pattern's initial weight profile over the distance d from the receptive field's centre. @category Network */
export const profileSchema = z.discriminatedUnion(
  "kind",
  [
    z.object({ kind: z.literal("gaussian"), sigma: positiveField("a width sigma > 0"), amplitude: finiteField().default(1) }).strict(),
    z
      .object({
        kind: z.literal("difference-of-gaussians"),
        centerSigma: positiveField("a width > 0"),
        surroundSigma: positiveField("a width > 0"),
        centerAmplitude: finiteField().default(1),
        surroundAmplitude: finiteField().default(0.5),
      })
      .strict(),
  ],
  { error: "a profile kind: gaussian or difference-of-gaussians" },
);

/** Schema of a connection's pattern (which weights exist and which share one value). @category Network */
export const patternSchema = z.discriminatedUnion(
  "kind",
  [
    z.object({ kind: z.literal("full"), ...lateralFields }).strict(),
    z.object({ kind: z.literal("one-to-one") }).strict(),
    z
      .object({
        kind: z.literal("random"),
        fanIn: integerField("a number of sending units per receiving unit >= 1").optional(),
        probability: z.number({ error: "a probability in (0, 1]" }).refine((v) => v > 0 && v <= 1, { error: "a probability in (0, 1]" }).optional(),
        ...lateralFields,
      })
      .strict(),
    z
      .object({
        kind: z.literal("local"),
        radius: positiveField("a radius > 0 (in units of the sending sheet's grid)").optional(),
        kernel: pairField("a kernel size >= 1", 1).optional(),
        stride: pairField("a stride >= 1", 1).default(1),
        padding: pairField("a padding >= 0", 0).default(0),
        wrap: z.boolean({ error: "true or false" }).default(false),
        profile: profileSchema.optional(),
        ...lateralFields,
      })
      .strict(),
    z
      .object({
        kind: z.literal("convolution"),
        kernel: pairField("a kernel size >= 1", 1),
        stride: pairField("a stride >= 1", 1).default(1),
        padding: pairField("a padding >= 0", 0).default(0),
        wrap: z.boolean({ error: "true or false" }).default(false),
      })
      .strict(),
  ],
  { error: "a pattern kind: full, one-to-one, random, local or convolution" },
);

/** A connection pattern as declared (defaults filled in). @category Network */
export type PatternSpec = z.output<typeof patternSchema>;
/** A pattern's kind. @category Network */
export type PatternKind = PatternSpec["kind"];
/** A local pattern's initial weight profile. @category Network */
export type ProfileSpec = z.output<typeof profileSchema>;

/** A layer's geometry, `[rows, columns, channels]`: `[1, n, 1]` for a 1-D layer, channels 1 for a 2-D layer. @category Network */
export type Geometry = readonly [number, number, number];

/** The geometry of a layer declared with `shape` (`[n]`, `[h, w]` or `[h, w, c]`) or `size` alone. @category Network */
export function layerGeometry(layer: { readonly size: number; readonly shape?: readonly number[] | undefined }): Geometry {
  const s = layer.shape;
  if (s === undefined || s.length === 1) return [1, s?.[0] ?? layer.size, 1];
  return [s[0] as number, s[1] as number, s.length === 3 ? (s[2] as number) : 1];
}

/**
 * A connection's pattern compiled against its layers: the stored weights of the |to|×|from| matrix
 * (row = receiving unit, as the weights), in row-compressed order, with the parameter each stored
 * weight belongs to when positions share one (convolution). The interface other storage builds on
 * (see docs/architecture.md, "Connection patterns"); it never changes after the network is built.
 * @category Network
 */
export interface CompiledPattern {
  readonly kind: PatternKind;
  /** Receiving units (|to|). */
  readonly rows: number;
  /** Sending units (|from|). */
  readonly cols: number;
  /** rows×cols row-major: 1 where a weight exists, 0 where it is always exactly zero. */
  readonly mask: Uint8Array;
  /** rows + 1 offsets: the stored weights of row i are `rowStart[i] .. rowStart[i+1]-1`. */
  readonly rowStart: Int32Array;
  /** The sending unit of each stored weight (ascending within a row). */
  readonly colIndex: Int32Array;
  /** Number of stored weights (entries of the mask that are 1). */
  readonly stored: number;
  /** Positions sharing parameters (convolution): the parameter index of each stored weight, and their count. Null: every stored weight is its own parameter. */
  readonly shared: { readonly parameterOf: Int32Array; readonly count: number } | null;
  /** Lateral only: the matrix is tied symmetric (W = Wᵀ; the mask is symmetric too). */
  readonly symmetric: boolean;
  /** Lateral only: units connect to themselves (false: the diagonal is outside the pattern). */
  readonly selfConnections: boolean;
  /** Every entry is stored, none shared, no symmetry: nothing to project (today's dense connection). */
  readonly plain: boolean;
  /** Number of free parameters (stored weights, shared parameters, or symmetric pairs and diagonal entries). */
  readonly parameters: number;
  /** Initial weight of each stored weight from a local pattern's profile, else null. */
  readonly profile: Float64Array | null;
}

/** The kernel, stride and padding of a pattern as [rows, columns] for layers of dimensionality `dims` (1: a number k means [1, k]). */
function pair(v: number | readonly [number, number], oneD: boolean, fill: number): [number, number] {
  if (typeof v !== "number") return [v[0], v[1]];
  return oneD ? [fill, v] : [v, v];
}

/** The sizes of a local-kernel or convolution window, stride and padding, and the receiving sheet's expected size. */
function windowGeometry(p: { kernel?: number | readonly [number, number] | undefined; stride: number | readonly [number, number]; padding: number | readonly [number, number] }, pre: Geometry, oneD: boolean) {
  const k = pair(p.kernel ?? 1, oneD, 1);
  const s = pair(p.stride, oneD, 1);
  const pad = pair(p.padding, oneD, 0);
  const out: [number, number] = [Math.floor((pre[0] + 2 * pad[0] - k[0]) / s[0]) + 1, Math.floor((pre[1] + 2 * pad[1] - k[1]) / s[1]) + 1];
  return { k, s, pad, out };
}

/** What a connection's layers look like to the pattern checks. */
export interface PatternLayers {
  readonly from: { readonly size: number; readonly shape?: readonly number[] | undefined };
  readonly to: { readonly size: number; readonly shape?: readonly number[] | undefined };
  readonly lateral: boolean;
}

/**
 * Problems of a pattern against its connection's layers that need no random draws (shapes, sizes,
 * lateral-only fields), each at `path` (e.g. `connections[2].pattern`).
 * @category Network
 */
export function patternIssues(p: PatternSpec | undefined, layers: PatternLayers, path: string): Issue[] {
  const out: Issue[] = [];
  if (p === undefined) return out;
  const pre = layerGeometry(layers.from);
  const post = layerGeometry(layers.to);
  const oneD = (layers.from.shape?.length ?? 1) === 1;
  const postOneD = (layers.to.shape?.length ?? 1) === 1;
  if ("selfConnections" in p || "symmetric" in p) {
    const lat = p as { selfConnections?: boolean; symmetric?: boolean };
    if (!layers.lateral && lat.selfConnections !== undefined) out.push(issueText("invalid_config", `${path}.selfConnections`, "selfConnections only on a lateral (within-layer) connection", String(lat.selfConnections)));
    if (!layers.lateral && lat.symmetric !== undefined) out.push(issueText("invalid_config", `${path}.symmetric`, "symmetric only on a lateral (within-layer) connection", String(lat.symmetric)));
  }
  switch (p.kind) {
    case "full":
      break;
    case "one-to-one":
      if (layers.from.size !== layers.to.size) out.push(issueText("invalid_config", `${path}.kind`, `layers of equal size for one-to-one (${layers.from.size} -> ${layers.to.size})`, "one-to-one"));
      break;
    case "random":
      if ((p.fanIn === undefined) === (p.probability === undefined)) out.push(issueText("invalid_config", path, "exactly one of fanIn or probability", p.fanIn === undefined ? "neither" : "both"));
      if (p.fanIn !== undefined) {
        const avail = layers.from.size - (layers.lateral && p.selfConnections === false ? 1 : 0);
        if (p.fanIn > avail) out.push(issueText("invalid_config", `${path}.fanIn`, `at most ${avail} (the sending units available)`, String(p.fanIn)));
        if (p.symmetric === true) out.push(issueText("invalid_config", `${path}.symmetric`, "probability (not fanIn) for a symmetric random pattern", "fanIn"));
      }
      break;
    case "local":
    case "convolution": {
      if (oneD !== postOneD) out.push(issueText("invalid_config", path, "sending and receiving layers of the same dimensionality (both 1-D, or both 2-D/3-D shapes)", `${layers.from.shape?.length ?? 1}-D -> ${layers.to.shape?.length ?? 1}-D`));
      if (p.kind === "local" && (p.radius === undefined) === (p.kernel === undefined)) {
        out.push(issueText("invalid_config", path, "exactly one of radius or kernel", p.radius === undefined ? "neither" : "both"));
        break;
      }
      if (p.kind === "convolution" && layers.lateral) out.push(issueText("invalid_config", `${path}.kind`, "a connection between two layers (convolution is not lateral)", "convolution"));
      if (p.kind === "convolution" || p.kernel !== undefined) {
        const g = windowGeometry(p, pre, oneD);
        if (post[0] !== g.out[0] || post[1] !== g.out[1]) {
          const want = oneD ? `${g.out[1]}` : `[${g.out[0]}, ${g.out[1]}${post[2] > 1 ? `, ${post[2]}` : ""}]`;
          out.push(issueText("invalid_config", path, `a receiving layer of shape ${want} (from ${oneD ? pre[1] : `[${pre[0]}, ${pre[1]}]`}, kernel [${g.k.join(", ")}], stride [${g.s.join(", ")}], padding [${g.pad.join(", ")}])`, oneD ? String(post[1]) : `[${post[0]}, ${post[1]}]`));
        }
        if (p.wrap && (g.k[0] > pre[0] || g.k[1] > pre[1])) out.push(issueText("invalid_config", `${path}.kernel`, `a kernel no larger than the sending sheet [${pre[0]}, ${pre[1]}] when wrapping`, `[${g.k.join(", ")}]`));
        if (layers.lateral && post[2] !== pre[2]) out.push(issueText("invalid_config", path, "equal channels", `${pre[2]} -> ${post[2]}`));
      } else if (layers.lateral && p.stride !== 1) out.push(issueText("invalid_config", `${path}.stride`, "no stride with a radius (the receiving sheet's size sets the spacing)", JSON.stringify(p.stride)));
      break;
    }
  }
  return out;
}

/** Where a compiled pattern draws its random choices and which layers it connects. */
export interface PatternContext extends PatternLayers {
  /** The random stream of this connection's pattern (`pattern/<from>-><to>` of the network's seed). */
  readonly random: RandomStream;
  /** For error paths, e.g. `connections[2].pattern`. */
  readonly path: string;
}

/** One stored weight during compilation: (row, col), its parameter (or -1), its distance from the field centre. */
interface Entry {
  row: number;
  col: number;
  param: number;
  distance: number;
}

/** The receptive-field entries of a local-kernel or convolution pattern. */
function windowEntries(p: Extract<PatternSpec, { kind: "local" | "convolution" }>, pre: Geometry, post: Geometry, oneD: boolean, shared: boolean, push: (e: Entry) => void): void {
  const g = windowGeometry(p, pre, oneD);
  const [kh, kw] = g.k;
  const [ph, pw] = pre;
  const cin = pre[2];
  const cout = post[2];
  const ch = (kh - 1) / 2;
  const cw = (kw - 1) / 2;
  for (let r = 0; r < post[0]; r++)
    for (let c = 0; c < post[1]; c++)
      for (let a = 0; a < kh; a++)
        for (let b = 0; b < kw; b++) {
          let ri = r * g.s[0] - g.pad[0] + a;
          let ci = c * g.s[1] - g.pad[1] + b;
          if (p.wrap) {
            ri = ((ri % ph) + ph) % ph;
            ci = ((ci % pw) + pw) % pw;
          } else if (ri < 0 || ri >= ph || ci < 0 || ci >= pw) continue;
          const d = Math.hypot(a - ch, b - cw);
          for (let oc = 0; oc < cout; oc++)
            for (let ic = 0; ic < cin; ic++) {
              const param = shared ? ((oc * kh + a) * kw + b) * cin + ic : -1;
              push({ row: (r * post[1] + c) * cout + oc, col: (ri * pw + ci) * cin + ic, param, distance: d });
            }
        }
}

/** The entries of a local pattern given by a radius: the receiving sheet laid over the sending sheet, centre to centre. */
function radiusEntries(radius: number, wrap: boolean, pre: Geometry, post: Geometry, push: (e: Entry) => void): void {
  const [ph, pw, cin] = pre;
  const cout = post[2];
  const reach = Math.ceil(radius) + 1;
  for (let r = 0; r < post[0]; r++)
    for (let c = 0; c < post[1]; c++) {
      const cy = ((r + 0.5) * ph) / post[0] - 0.5;
      const cx = ((c + 0.5) * pw) / post[1] - 0.5;
      const cols: { col: number; d: number }[] = [];
      const seen = new Set<number>();
      for (let i = Math.floor(cy) - reach; i <= Math.ceil(cy) + reach; i++)
        for (let j = Math.floor(cx) - reach; j <= Math.ceil(cx) + reach; j++) {
          let ri = i;
          let ci = j;
          if (wrap) {
            ri = ((ri % ph) + ph) % ph;
            ci = ((ci % pw) + pw) % pw;
          } else if (ri < 0 || ri >= ph || ci < 0 || ci >= pw) continue;
          const d = Math.hypot(i - cy, j - cx);
          if (d > radius + 1e-9) continue;
          const key = ri * pw + ci;
          // wrapping a small sheet can reach one unit along two paths: keep the nearer
          if (seen.has(key)) {
            const prev = cols.find((x) => x.col === key)!;
            prev.d = Math.min(prev.d, d);
            continue;
          }
          seen.add(key);
          cols.push({ col: key, d });
        }
      for (const { col, d } of cols) for (let oc = 0; oc < cout; oc++) for (let ic = 0; ic < cin; ic++) push({ row: (r * post[1] + c) * cout + oc, col: col * cin + ic, param: -1, distance: d });
    }
}

/** The initial weight at distance d from a profile (Gaussian, or difference of Gaussians: centre minus surround). */
function profileValue(p: ProfileSpec, d: number): number {
  if (p.kind === "gaussian") return p.amplitude * Math.exp((-d * d) / (2 * p.sigma * p.sigma));
  return p.centerAmplitude * Math.exp((-d * d) / (2 * p.centerSigma * p.centerSigma)) - p.surroundAmplitude * Math.exp((-d * d) / (2 * p.surroundSigma * p.surroundSigma));
}

/**
 * Compiles a connection's pattern (undefined: full) against its layers, drawing random patterns from
 * `ctx.random`.
 * @throws {@link EbbflowError} `invalid_config` for a pattern its layers cannot take (see {@link patternIssues})
 *   or a symmetric pattern whose mask is not symmetric.
 * @category Network
 */
export function compilePattern(p: PatternSpec | undefined, ctx: PatternContext): CompiledPattern {
  const issues = patternIssues(p, ctx, ctx.path);
  if (issues.length > 0) throw new EbbflowError(issues);
  const rows = ctx.to.size;
  const cols = ctx.from.size;
  const lateral = ctx.lateral;
  const spec = p ?? { kind: "full" as const };
  const self = lateral ? ((spec as { selfConnections?: boolean }).selfConnections ?? true) : true;
  const symmetric = lateral && ((spec as { symmetric?: boolean }).symmetric ?? false);
  const mask = new Uint8Array(rows * cols);
  const param = new Int32Array(rows * cols).fill(-1);
  const dist = new Float64Array(rows * cols);
  const push = (e: Entry) => {
    if (lateral && !self && e.row === e.col) return;
    const k = e.row * cols + e.col;
    if (mask[k] === 1) {
      dist[k] = Math.min(dist[k] as number, e.distance);
      return;
    }
    mask[k] = 1;
    param[k] = e.param;
    dist[k] = e.distance;
  };
  const pre = layerGeometry(ctx.from);
  const post = layerGeometry(ctx.to);
  const oneD = (ctx.from.shape?.length ?? 1) === 1;
  switch (spec.kind) {
    case "full":
      for (let i = 0; i < rows; i++) for (let j = 0; j < cols; j++) push({ row: i, col: j, param: -1, distance: 0 });
      break;
    case "one-to-one":
      for (let i = 0; i < rows; i++) push({ row: i, col: i, param: -1, distance: 0 });
      break;
    case "random":
      if (spec.probability !== undefined) {
        const q = spec.probability;
        for (let i = 0; i < rows; i++)
          for (let j = symmetric ? i : 0; j < cols; j++) {
            if (ctx.random.uniform() >= q) continue;
            push({ row: i, col: j, param: -1, distance: 0 });
            if (symmetric) push({ row: j, col: i, param: -1, distance: 0 });
          }
      } else {
        const k = spec.fanIn as number;
        const pool = new Int32Array(cols);
        for (let i = 0; i < rows; i++) {
          // a partial Fisher–Yates shuffle draws k distinct sending units (Knuth, TAOCP vol. 2, Algorithm P)
          let n = 0;
          for (let j = 0; j < cols; j++) if (!(lateral && !self && j === i)) pool[n++] = j;
          for (let t = 0; t < k; t++) {
            const u = t + ctx.random.int(n - t);
            const tmp = pool[t] as number;
            pool[t] = pool[u] as number;
            pool[u] = tmp;
            push({ row: i, col: pool[t] as number, param: -1, distance: 0 });
          }
        }
      }
      break;
    case "local":
      if (spec.radius !== undefined) radiusEntries(spec.radius, spec.wrap, pre, post, push);
      else windowEntries(spec, pre, post, oneD, false, push);
      break;
    case "convolution":
      windowEntries(spec, pre, post, oneD, true, push);
      break;
  }
  if (symmetric) {
    for (let i = 0; i < rows; i++)
      for (let j = i + 1; j < cols; j++)
        if (mask[i * cols + j] !== mask[j * cols + i]) throw new EbbflowError(issueText("invalid_config", ctx.path, "a pattern whose connections are mutual (symmetric: true needs W = Wᵀ)", `unit ${i} reaches ${j} but not back`));
  }
  const rowStart = new Int32Array(rows + 1);
  let stored = 0;
  for (let i = 0; i < rows; i++) {
    rowStart[i] = stored;
    for (let j = 0; j < cols; j++) stored += mask[i * cols + j] as number;
  }
  rowStart[rows] = stored;
  const colIndex = new Int32Array(stored);
  const parameterOf = spec.kind === "convolution" ? new Int32Array(stored) : null;
  const profileSpec = spec.kind === "local" ? spec.profile : undefined;
  const profile = profileSpec !== undefined ? new Float64Array(stored) : null;
  let s = 0;
  for (let i = 0; i < rows; i++)
    for (let j = 0; j < cols; j++) {
      const k = i * cols + j;
      if (mask[k] !== 1) continue;
      colIndex[s] = j;
      if (parameterOf !== null) parameterOf[s] = param[k] as number;
      if (profile !== null) profile[s] = profileValue(profileSpec as ProfileSpec, dist[k] as number);
      s++;
    }
  const count = spec.kind === "convolution" ? (() => {
    const g = windowGeometry(spec, pre, oneD);
    return post[2] * g.k[0] * g.k[1] * pre[2];
  })() : 0;
  let diagonal = 0;
  if (symmetric) for (let i = 0; i < rows; i++) diagonal += mask[i * cols + i] as number;
  const plain = stored === rows * cols && parameterOf === null && !symmetric;
  return {
    kind: spec.kind,
    rows,
    cols,
    mask,
    rowStart,
    colIndex,
    stored,
    shared: parameterOf === null ? null : { parameterOf, count },
    symmetric,
    selfConnections: self,
    plain,
    parameters: parameterOf !== null ? count : symmetric ? (stored + diagonal) / 2 : stored,
    profile,
  };
}

/** The full pattern of a |to|×|from| connection (every weight stored; no random draws). @category Network */
export function fullPattern(rows: number, cols: number): CompiledPattern {
  const mask = new Uint8Array(rows * cols).fill(1);
  const rowStart = new Int32Array(rows + 1);
  const colIndex = new Int32Array(rows * cols);
  for (let i = 0; i <= rows; i++) rowStart[i] = i * cols;
  for (let k = 0; k < rows * cols; k++) colIndex[k] = k % cols;
  return { kind: "full", rows, cols, mask, rowStart, colIndex, stored: rows * cols, shared: null, symmetric: false, selfConnections: true, plain: true, parameters: rows * cols, profile: null };
}

/**
 * How {@link projectArray} ties the positions of one shared parameter: `sum` (a change per position
 * from a rule: the parameter receives the sum of its positions' changes, the gradient of a shared
 * weight), `mean` (values already tied, or to be tied: their mean; idempotent), `first` (the value at
 * the parameter's first position: initialisation keeps the initialiser's distribution).
 * @category Network
 */
export type TieMode = "sum" | "mean" | "first";

/**
 * Projects a |to|×|from| array (weights or a change of them) onto the pattern, in place: entries outside
 * the mask become exactly 0; the positions of each shared parameter take one value (see {@link TieMode});
 * a symmetric matrix becomes `(A + Aᵀ)/2` (`first`: the lower triangle is copied to the upper). A plain
 * pattern leaves the array as it is. `scratch` (at least `shared.count` long) avoids an allocation.
 * @category Network
 */
export function projectArray(p: CompiledPattern, a: FloatArray, mode: TieMode, scratch?: Float64Array): void {
  if (p.plain) return;
  const { rows, cols, mask } = p;
  if (p.stored < rows * cols) for (let k = 0; k < a.length; k++) if (mask[k] === 0) a[k] = 0;
  if (p.shared !== null) {
    const { parameterOf, count } = p.shared;
    const acc = scratch !== undefined && scratch.length >= 2 * count ? scratch : new Float64Array(2 * count);
    acc.fill(0, 0, 2 * count);
    const { rowStart, colIndex } = p;
    for (let i = 0; i < rows; i++)
      for (let s = rowStart[i] as number; s < (rowStart[i + 1] as number); s++) {
        const q = parameterOf[s] as number;
        const v = a[i * cols + (colIndex[s] as number)] as number;
        if (mode === "first") {
          if (acc[count + q] === 0) {
            acc[q] = v;
            acc[count + q] = 1;
          }
        } else {
          acc[q] = (acc[q] as number) + v;
          acc[count + q] = (acc[count + q] as number) + 1;
        }
      }
    if (mode === "mean") for (let q = 0; q < count; q++) if ((acc[count + q] as number) > 0) acc[q] = (acc[q] as number) / (acc[count + q] as number);
    for (let i = 0; i < rows; i++) for (let s = rowStart[i] as number; s < (rowStart[i + 1] as number); s++) a[i * cols + (colIndex[s] as number)] = acc[parameterOf[s] as number] as number;
  }
  if (p.symmetric) {
    for (let i = 0; i < rows; i++)
      for (let j = 0; j < i; j++) {
        const v = mode === "first" ? (a[i * cols + j] as number) : 0.5 * ((a[i * cols + j] as number) + (a[j * cols + i] as number));
        a[i * cols + j] = v;
        a[j * cols + i] = v;
      }
  }
}

/**
 * Projects a separate feedback matrix (|from|×|to|, the transposed layout) onto the pattern's mask:
 * entries whose forward weight does not exist become 0 (feedback paths are neither shared nor tied).
 * @category Network
 */
export function maskTransposed(p: CompiledPattern, f: FloatArray): void {
  if (p.stored === p.rows * p.cols) return;
  const { rows, cols, mask } = p;
  for (let i = 0; i < rows; i++) for (let j = 0; j < cols; j++) if (mask[i * cols + j] === 0) f[j * rows + i] = 0;
}

/**
 * The first entry of `a` (|to|×|from|) that breaks the pattern: non-zero outside the mask, a shared
 * position whose value differs from its parameter's first position, or an asymmetric pair of a
 * symmetric pattern. Null when the array respects the pattern exactly.
 * @category Network
 */
export function patternViolation(p: CompiledPattern, a: ArrayLike<number>): { index: number; reason: string } | null {
  if (p.plain) return null;
  const { rows, cols, mask } = p;
  for (let k = 0; k < rows * cols; k++) if (mask[k] === 0 && a[k] !== 0) return { index: k, reason: `${a[k]} outside the pattern (must be 0)` };
  if (p.shared !== null) {
    const first = new Float64Array(p.shared.count).fill(Number.NaN);
    for (let i = 0; i < rows; i++)
      for (let s = p.rowStart[i] as number; s < (p.rowStart[i + 1] as number); s++) {
        const q = p.shared.parameterOf[s] as number;
        const v = a[i * cols + (p.colIndex[s] as number)] as number;
        if (Number.isNaN(first[q] as number)) first[q] = v;
        else if (first[q] !== v) return { index: i * cols + (p.colIndex[s] as number), reason: `${v} where its shared parameter ${q} holds ${first[q]}` };
      }
  }
  if (p.symmetric) for (let i = 0; i < rows; i++) for (let j = 0; j < i; j++) if (a[i * cols + j] !== a[j * cols + i]) return { index: i * cols + j, reason: `${a[i * cols + j]} where the transposed entry holds ${a[j * cols + i]} (symmetric)` };
  return null;
}

/**
 * The gradient with respect to a pattern's free parameters, written back at their positions, from a
 * gradient `g` (|to|×|from|) with respect to every entry: 0 outside the mask; for shared positions the
 * sum over the parameter's positions; for a symmetric matrix `g_ij + g_ji` off the diagonal (the tied
 * pair's gradient) and `g_ii` on it. Finite differences that move a parameter's positions together
 * measure exactly this. In place.
 * @category Network
 */
export function parameterGradient(p: CompiledPattern, g: FloatArray): void {
  if (p.plain) return;
  if (p.symmetric) {
    const { rows, cols } = p;
    for (let i = 0; i < rows; i++)
      for (let j = 0; j < i; j++) {
        const v = (g[i * cols + j] as number) + (g[j * cols + i] as number);
        g[i * cols + j] = v;
        g[j * cols + i] = v;
      }
  }
  projectArray({ ...p, symmetric: false }, g, "sum");
}

/**
 * The positions of each free parameter of a pattern, as lists of flat indices into the |to|×|from|
 * array (for finite differences and reports): one list per stored weight, per shared parameter, or per
 * symmetric pair (two positions) and diagonal entry.
 * @category Network
 */
export function parameterPositions(p: CompiledPattern): Int32Array[] {
  const { rows, cols } = p;
  if (p.shared !== null) {
    const lists: number[][] = Array.from({ length: p.shared.count }, () => []);
    for (let i = 0; i < rows; i++) for (let s = p.rowStart[i] as number; s < (p.rowStart[i + 1] as number); s++) lists[p.shared.parameterOf[s] as number]!.push(i * cols + (p.colIndex[s] as number));
    return lists.filter((l) => l.length > 0).map((l) => Int32Array.from(l));
  }
  const out: Int32Array[] = [];
  for (let i = 0; i < rows; i++)
    for (let s = p.rowStart[i] as number; s < (p.rowStart[i + 1] as number); s++) {
      const j = p.colIndex[s] as number;
      if (p.symmetric && j > i) continue;
      out.push(p.symmetric && j < i ? Int32Array.of(i * cols + j, j * cols + i) : Int32Array.of(i * cols + j));
    }
  return out;
}
