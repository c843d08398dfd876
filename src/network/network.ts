/**
 * A network: layers, connections and their parameters, built from a
 * validated declaration. Weights live in flat typed arrays of the network's
 * dtype; a connection's matrix is |to|×|from| row-major (row = receiving unit).
 * @module
 */
import { refuseUnknownOptions } from "../errors/options.js";
import { builtinUnits } from "../units/builtins.js";
import type { UnitRegistry } from "../units/registry.js";
import type { UnitFunction } from "../units/spec.js";
import { createRandom, initialize, type InitSpec } from "../random/index.js";
import { type Dtype, type FloatArray } from "../types/index.js";
import type { KernelBackend } from "../kernels/backend.js";
import { typescriptBackend } from "../kernels/typescript-backend.js";
import type { RowCompressed } from "../kernels/sparse.js";
import { convolutionFormFor, sparseFormFor, type ConvolutionForm } from "./storage.js";
import { requireParameterMemory } from "./checks.js";
import { compilePattern, layerGeometry, maskTransposed, patternViolation, projectArray, type CompiledPattern, type Geometry } from "./pattern.js";
import { EbbflowError, fail, issueText, type Issue } from "../errors/index.js";
import { parseNetwork, type ConnectionSpec, type InhibitionSpec, type LayerSpec, type NetworkSpec, type NetworkSpecInput } from "./spec.js";

/** Role of a layer in the phases. @category Network */
export type LayerRole = "input" | "hidden" | "output";

/** A layer of rate units. @category Network */
export interface Layer {
  readonly index: number;
  readonly name: string;
  readonly size: number;
  /** Rows, columns and channels (`[1, size, 1]` for a 1-D layer); unit index `(row · columns + column) · channels + channel`. */
  readonly geometry: Geometry;
  readonly role: LayerRole;
  /** The unit (activation) function; input layers take their clamped values as activity. */
  readonly unit: UnitFunction;
  /** Bias per unit (learned by the rules unless every incoming connection is frozen). */
  readonly bias: FloatArray;
  readonly inhibition: InhibitionSpec;
  readonly spec: LayerSpec;
}

/** Feedback path of a built connection. @category Network */
export type Feedback =
  | { readonly kind: "none" }
  | { readonly kind: "tied"; readonly gain: number }
  | { readonly kind: "separate"; readonly learned: boolean; readonly weights: FloatArray };

/** A built connection from layer `from` to layer `to`. @category Network */
export interface Connection {
  readonly index: number;
  /** Index of the sending layer. */
  readonly from: number;
  /** Index of the receiving layer. */
  readonly to: number;
  /** |to|×|from| row-major weights: `weights[i * |from| + j]` is the weight from unit j to unit i. */
  readonly weights: FloatArray;
  /** Feedback path; a separate matrix is |from|×|to| row-major. */
  readonly feedback: Feedback;
  readonly spec: ConnectionSpec;
  /** `"layerA->layerB"`, used in reports and file formats. */
  readonly label: string;
  /** Which weights exist, which positions share a parameter, whether the matrix is tied symmetric (compiled from `spec.pattern`). */
  readonly pattern: CompiledPattern;
  /**
   * The row-compressed form the settler's products use when the connection's storage is sparse (see
   * `sparseFormFor`), else null or absent. `weights` stays the parameters of record; the settler gathers
   * these values from it at the start of every settling.
   */
  readonly sparse?: RowCompressed | null | undefined;
  /**
   * A weight-shared convolution connection's kernel in the convolution kernels' layout (see
   * `convolutionFormFor`), else null or absent: the settler's drives then run as im2col products. Gathered
   * from `weights` at the start of every settling, like `sparse`.
   */
  readonly convolution?: ConvolutionForm | null | undefined;
}

/**
 * Every weight array of `net` that breaks its connection's pattern (see {@link patternViolation}), as
 * issues at `<prefix>["from->to"]` (a model file's or checkpoint's parameters). Separate feedback
 * matrices must be zero where their forward weight does not exist.
 * @category Network
 */
export function patternProblems(net: Network, prefix: string, code: Issue["code"] = "invalid_config"): Issue[] {
  const out: Issue[] = [];
  for (const c of net.connections) {
    const v = patternViolation(c.pattern, c.weights);
    if (v !== null) out.push(issueText(code, `${prefix}.weights["${c.label}"][${v.index}]`, `weights that respect the connection's ${c.pattern.kind} pattern`, v.reason));
    if (c.feedback.kind === "separate" && c.pattern.stored < c.pattern.rows * c.pattern.cols) {
      const { rows, cols, mask } = c.pattern;
      for (let k = 0; k < rows * cols; k++) {
        const i = Math.floor(k / cols);
        const j = k % cols;
        if (mask[k] === 0 && c.feedback.weights[j * rows + i] !== 0) {
          out.push(issueText(code, `${prefix}.feedback["${c.label}"][${j * rows + i}]`, "0 where the forward weight is outside the pattern", String(c.feedback.weights[j * rows + i])));
          break;
        }
      }
    }
  }
  return out;
}

/** Throws {@link patternProblems} (nothing when every weight respects its pattern). @category Network */
export function requirePatterns(net: Network, prefix: string, code: Issue["code"] = "invalid_config"): void {
  const problems = patternProblems(net, prefix, code);
  if (problems.length > 0) throw new EbbflowError(problems);
}

/** Applies a connection's sign and bound constraints to its weights in place. @category Network */
export function constrainWeights(w: FloatArray, spec: Pick<ConnectionSpec, "sign" | "bounds">): void {
  if (spec.sign === "excitatory") for (let i = 0; i < w.length; i++) w[i] = Math.abs(w[i] as number);
  else if (spec.sign === "inhibitory") for (let i = 0; i < w.length; i++) w[i] = -Math.abs(w[i] as number);
  if (spec.bounds === "soft") {
    // soft bounds hold each magnitude in [0, 1]; sign (if any) is kept
    for (let i = 0; i < w.length; i++) {
      const v = w[i] as number;
      const m = Math.min(1, Math.abs(v));
      w[i] = spec.sign === "inhibitory" ? -m : m;
    }
  }
}

/**
 * A bidirectional network of rate units: layers plus connections with their
 * parameters. Build one with {@link buildNetwork}.
 * @category Network
 */
export class Network {
  readonly spec: NetworkSpec;
  readonly dtype: Dtype;
  readonly layers: readonly Layer[];
  readonly connections: readonly Connection[];
  /** Connections arriving at each layer. */
  readonly incoming: readonly (readonly Connection[])[];
  /** Connections leaving each layer that carry a feedback path back to it. */
  readonly feedbackInto: readonly (readonly Connection[])[];
  /** The kernels that settle and train this network; its arrays live where these kernels read them. */
  readonly kernels: KernelBackend;
  /** The unit kinds its declaration was validated with (a copy or a rebuild of the network uses the same). */
  readonly units: UnitRegistry;

  /** @internal Use {@link buildNetwork}. */
  constructor(spec: NetworkSpec, layers: Layer[], connections: Connection[], kernels: KernelBackend = typescriptBackend, units: UnitRegistry = builtinUnits) {
    this.spec = spec;
    this.kernels = kernels;
    this.units = units;
    this.dtype = spec.dtype;
    this.layers = layers;
    this.connections = connections;
    this.incoming = layers.map((l) => connections.filter((c) => c.to === l.index));
    this.feedbackInto = layers.map((l) => connections.filter((c) => c.from === l.index && c.from !== c.to && c.feedback.kind !== "none"));
  }

  /** A zeroed array of the network's dtype in the kernels' memory (for state and scratch buffers). */
  allocate(length: number): FloatArray {
    return this.kernels.allocate(this.dtype, length);
  }

  /** Index of the layer named `name`. @throws EbbflowError `unknown_name`. */
  layerIndex(name: string): number {
    const i = this.layers.findIndex((l) => l.name === name);
    if (i < 0) fail("unknown_name", "layer", `a layer name (${this.layers.map((l) => l.name).join(", ")})`, name);
    return i;
  }

  /** The layer named `name`. */
  layer(name: string): Layer {
    return this.layers[this.layerIndex(name)] as Layer;
  }

  /** The connection from `from` to `to`. @throws EbbflowError `unknown_name`. */
  connection(from: string, to: string): Connection {
    const c = this.connections.find((x) => this.layers[x.from]?.name === from && this.layers[x.to]?.name === to);
    if (c === undefined) fail("unknown_name", "connection", `an existing connection (${this.connections.map((x) => x.label).join(", ")})`, `${from}->${to}`);
    return c;
  }

  /** Layers with role `input`. */
  get inputLayers(): Layer[] {
    return this.layers.filter((l) => l.role === "input");
  }

  /** Layers with role `output`. */
  get outputLayers(): Layer[] {
    return this.layers.filter((l) => l.role === "output");
  }

  /** Total number of parameters (weights, learned feedback matrices and biases). */
  get parameterCount(): number {
    let n = 0;
    // a pattern's free parameters (stored weights, shared parameters, symmetric pairs); a separate feedback matrix has the pattern's stored entries
    for (const c of this.connections) n += c.pattern.parameters + (c.feedback.kind === "separate" ? c.pattern.stored : 0);
    for (const l of this.layers) if (l.role !== "input") n += l.size;
    return n;
  }

  /** A deep copy whose settling dynamics are changed by `patch` (same parameters, bit for bit). */
  withDynamics(patch: Partial<NetworkSpec["dynamics"]>): Network {
    const copy = this.clone();
    return new Network(parseNetwork({ ...this.spec, dynamics: { ...this.spec.dynamics, ...patch } }, this.units), copy.layers as Layer[], copy.connections as Connection[], this.kernels, this.units);
  }

  /** A deep copy (same spec, copied parameter arrays). */
  clone(): Network {
    const dup = (a: FloatArray): FloatArray => {
      const b = this.allocate(a.length);
      b.set(a);
      return b;
    };
    const layers = this.layers.map((l) => ({ ...l, bias: dup(l.bias) }));
    const connections = this.connections.map((c) => ({
      ...c,
      weights: dup(c.weights),
      sparse: c.sparse ? { ...c.sparse, values: dup(c.sparse.values) } : c.sparse,
      convolution: c.convolution ? { ...c.convolution, kernel: dup(c.convolution.kernel) } : c.convolution,
      feedback: c.feedback.kind === "separate" ? { ...c.feedback, weights: dup(c.feedback.weights) } : c.feedback,
    }));
    return new Network(this.spec, layers, connections, this.kernels, this.units);
  }
}

/** Options of {@link buildNetwork}. @category Network */
export interface BuildOptions {
  /**
   * Allocates every parameter array, in this order: each layer's biases (layer order), then each
   * connection's weights followed by its separate feedback matrix if any (connection order). Use it to
   * place parameters in shared memory (worker threads) or in a kernel backend's memory.
   */
  readonly allocate?: ((dtype: Dtype, length: number) => FloatArray) | undefined;
  /** The allocator's arrays already hold the parameters: do not initialize them. */
  readonly keepValues?: boolean | undefined;
  /**
   * The kernels that settle and train the network (default: the TypeScript kernels). Parameters, states
   * and scratch arrays are allocated in its memory (unless `allocate` is given), so a WebAssembly backend
   * computes on them in place with no copy per settling step.
   */
  readonly backend?: KernelBackend | undefined;
  /**
   * The unit kinds layers may name (default: the built-in kinds, `builtinUnits`). A layer naming
   * a kind the registry does not know is refused (`unknown_name` at `layers[i].unit.kind`);
   * add a kind with `builtinUnits.with(descriptor)`. Model files and checkpoints that name a
   * user's kind load only with a registry that has it.
   */
  readonly units?: UnitRegistry | undefined;
}

/**
 * One parameter array of a network: a layer's biases, a connection's weights, or a connection's separate
 * feedback matrix. `index` is the layer's or the connection's index.
 * @category Network
 */
export interface ParameterSlot {
  readonly kind: "bias" | "weights" | "feedback";
  readonly index: number;
  /** `layer bias`, `from->to`, or `from->to feedback`. */
  readonly name: string;
}

/**
 * Every parameter array of a network, in the one order the library uses everywhere: the allocation order
 * of {@link buildNetwork} (every layer's biases, then each connection's weights and, for a separate
 * feedback path, its matrix). Shared parameters, worker threads, gradients and reports all follow it.
 * @category Network
 */
export function parameterSlots(net: Network): ParameterSlot[] {
  const out: ParameterSlot[] = net.layers.map((l) => ({ kind: "bias", index: l.index, name: `${l.name} bias` }));
  for (const c of net.connections) {
    out.push({ kind: "weights", index: c.index, name: c.label });
    if (c.feedback.kind === "separate") out.push({ kind: "feedback", index: c.index, name: `${c.label} feedback` });
  }
  return out;
}

/** The array of `slot` in a set of parameter-shaped arrays (the network's own, a change, a gradient); null where it has none. @category Network */
export function slotArray(arrays: { readonly weights: readonly (FloatArray | null | undefined)[]; readonly feedback: readonly (FloatArray | null | undefined)[]; readonly biases: readonly (FloatArray | null | undefined)[] }, slot: ParameterSlot): FloatArray | null {
  const a = slot.kind === "bias" ? arrays.biases[slot.index] : slot.kind === "weights" ? arrays.weights[slot.index] : arrays.feedback[slot.index];
  return a ?? null;
}

/** The network's own parameter arrays by kind (for {@link slotArray}). @category Network */
export function parameterArraysOf(net: Network): { weights: FloatArray[]; feedback: (FloatArray | null)[]; biases: FloatArray[] } {
  return { weights: net.connections.map((c) => c.weights), feedback: net.connections.map((c) => (c.feedback.kind === "separate" ? c.feedback.weights : null)), biases: net.layers.map((l) => l.bias) };
}

/** Every parameter array of a network in allocation order (see {@link parameterSlots}). @category Network */
export function parameterBuffers(net: Network): FloatArray[] {
  const own = parameterArraysOf(net);
  return parameterSlots(net).map((s) => slotArray(own, s) as FloatArray);
}

/**
 * Builds a network from a declaration (validated; defaults filled in).
 * Weights come from the declaration's `weights` array when given, otherwise
 * from its initialiser drawing on the sub-stream `weights/<from>-><to>` of
 * the seed, so adding a connection never changes another's weights.
 * @throws {@link EbbflowError} `invalid_config` listing every problem; `unknown_name` for a
 *   unit kind that `options.units` does not know.
 * @category Network
 * @example
 * ```ts
 * const net = buildNetwork({
 *   layers: [ { name: "in", size: 2, role: "input" }, { name: "out", size: 1, role: "output" } ],
 *   connections: [ { from: "in", to: "out" } ],
 * });
 * net.connection("in", "out").weights.length; // 2
 * ```
 */
export function buildNetwork(input: NetworkSpecInput | NetworkSpec, options: BuildOptions = {}): Network {
  refuseUnknownOptions(options, ["allocate", "keepValues", "backend", "units"]);
  const units = options.units ?? builtinUnits;
  const spec = parseNetwork(input, units);
  requireParameterMemory(spec);
  const root = createRandom(spec.seed);
  const kernels = options.backend ?? typescriptBackend;
  const alloc = options.allocate ?? ((dtype: Dtype, n: number) => kernels.allocate(dtype, n));
  const layers: Layer[] = spec.layers.map((ls, index) => {
    const bias = alloc(spec.dtype, ls.size);
    if (options.keepValues) {
      // values come with the allocator's arrays
    } else if (Array.isArray(ls.bias)) bias.set(ls.bias);
    else bias.fill(ls.bias);
    const unit: UnitFunction = units.create(ls.unit, `layers[${index}].unit`);
    return { index, name: ls.name, size: ls.size, geometry: layerGeometry(ls), role: ls.role, unit, bias, inhibition: ls.inhibition, spec: ls };
  });
  const byName = new Map(layers.map((l) => [l.name, l]));
  const connections: Connection[] = spec.connections.map((cs, index) => {
    const from = byName.get(cs.from) as Layer;
    const to = byName.get(cs.to) as Layer;
    const label = `${cs.from}->${cs.to}`;
    const lateral = from.index === to.index;
    const pattern = compilePattern(cs.pattern, { from: from.spec, to: to.spec, lateral, random: root.child(`pattern/${label}`), path: `connections[${index}].pattern` });
    // fan-in and fan-out of the initialisers: the pattern's stored weights per receiving and per sending unit, rounded (the sizes for a full pattern)
    const fanIn = Math.max(1, Math.round(pattern.stored / to.size));
    const fanOut = Math.max(1, Math.round(pattern.stored / from.size));
    const weights = alloc(spec.dtype, to.size * from.size);
    if (options.keepValues) {
      // the allocator supplied arrays that already hold the parameters
    } else if (cs.weights !== undefined) {
      weights.set(cs.weights);
      const v = patternViolation(pattern, weights);
      if (v !== null) throw new EbbflowError(issueText("invalid_config", `connections[${index}].weights[${v.index}]`, `weights that respect the connection's ${pattern.kind} pattern`, v.reason));
    } else {
      initialize(weights, cs.init as InitSpec, root.child(`weights/${label}`), fanIn, fanOut);
      projectArray(pattern, weights, "first");
      if (pattern.profile !== null) {
        // a local pattern's profile sets the initial weights (the initialiser's draws are replaced)
        for (let i = 0; i < pattern.rows; i++) for (let s = pattern.rowStart[i] as number; s < (pattern.rowStart[i + 1] as number); s++) weights[i * pattern.cols + (pattern.colIndex[s] as number)] = pattern.profile[s] as number;
      }
      constrainWeights(weights, cs);
    }
    let feedback: Feedback;
    if (cs.feedback.kind === "separate") {
      const fw = alloc(spec.dtype, from.size * to.size);
      if (!options.keepValues) {
        initialize(fw, (cs.feedback.init ?? cs.init) as InitSpec, root.child(`feedback/${label}`), fanOut, fanIn);
        maskTransposed(pattern, fw);
      }
      feedback = { kind: "separate", learned: cs.feedback.learned, weights: fw };
    } else feedback = cs.feedback;
    // storage: the pattern's density decides under "auto" (a plain pattern is full: dense)
    // a convolution pattern under "auto" runs as im2col products (measured faster than either storage); else the storage
    const oneD = (from.spec.shape?.length ?? 1) === 1;
    const convolution = convolutionFormFor(cs, pattern, from.geometry, to.geometry, oneD, (n) => kernels.allocate(spec.dtype, n));
    const sparse = convolution ? null : sparseFormFor(cs, pattern.plain ? null : pattern.mask, to.size, from.size, spec.dtype, weights, kernels, `connections[${index}].storage`);
    return { index, from: from.index, to: to.index, weights, feedback, spec: cs, label, pattern, sparse, convolution };
  });
  return new Network(spec, layers, connections, kernels, units);
}
