/**
 * A recorder of settling over time: chosen layers' activity, the stateful units' state and any other
 * per-unit quantity (a rule's traces), at every settling step of every pattern, kept in typed arrays
 * allocated once, and exported as JSON Lines, CSV or NumPy `.npy` arrays.
 * @module
 */
import { fail, requireInteger } from "../errors/index.js";
import { refuseUnknownOptions } from "../errors/options.js";
import type { Network } from "../network/network.js";
import type { Snapshot } from "../network/settle.js";
import { encodeNpy } from "../interop/npy.js";

/**
 * One recorded quantity: `size` values per pattern of the batch, read from the snapshot being settled
 * (or from anywhere else, such as a rule's traces) after every step. `read` returns B×size values
 * (row = pattern of the batch) and should return an existing array (no allocation per step).
 * @category Recording
 */
export interface RecordChannel {
  readonly name: string;
  readonly size: number;
  read(snapshot: Snapshot): ArrayLike<number>;
}

/** Options of a {@link Recorder}. @category Recording */
export interface RecorderOptions {
  /** Patterns settled at once (the settler's batch). */
  readonly batch: number;
  /** Most settling steps recorded per pattern (a longer settling is refused, `resource_limit`). */
  readonly steps: number;
  /** Most patterns (settlings) recorded (one more is refused, `resource_limit`). */
  readonly patterns: number;
  /** Layers whose activity is recorded (channel name: the layer's name). */
  readonly layers?: readonly string[] | undefined;
  /** Layers whose adaptation variable is recorded (channel `<layer>.adaptation`). */
  readonly adaptation?: readonly string[] | undefined;
  /** Connections (`from->to`) whose synaptic resources are recorded (channel `<from->to>.resources`). */
  readonly resources?: readonly string[] | undefined;
  /** Further channels, such as a rule's traces. */
  readonly channels?: readonly RecordChannel[] | undefined;
}

/** Where a recorded pattern sits: its sequence, its position in it and the phase settled. @category Recording */
export interface PatternLabel {
  readonly sequence?: number | undefined;
  readonly position?: number | undefined;
  readonly phase?: string | undefined;
}

/** A channel's recorded values: `data` is patterns × steps × batch × size, row-major, NaN after a pattern's last step. @category Recording */
export interface RecordedChannel {
  readonly name: string;
  readonly size: number;
  readonly data: Float64Array;
}

/**
 * Records settling step by step. Pass {@link Recorder.onStep} as a phase's `onStep`, then
 * {@link Recorder.endPattern} after each settling; every value
 * goes into arrays allocated when the recorder is made (patterns × steps × batch × size per channel).
 * @category Recording
 * @example
 * ```ts
 * const rec = new Recorder(net, { batch: 1, steps: 50, patterns: 10, layers: ["hidden"] });
 * settler.settle({ phase: "free", inputs, maxSteps: 50, onStep: rec.onStep });
 * rec.endPattern({ sequence: 0, position: 0, phase: "free" });
 * rec.toCsv();
 * ```
 */
export class Recorder {
  readonly batch: number;
  /** Capacity in steps per pattern. */
  readonly steps: number;
  /** Capacity in patterns. */
  readonly capacity: number;
  private readonly sources: RecordChannel[];
  private readonly store: Float64Array[];
  /** Steps recorded per pattern. */
  readonly stepCounts: Int32Array;
  /** Sequence of each pattern (−1 when not given). */
  readonly sequences: Int32Array;
  /** Position of each pattern in its sequence (−1 when not given). */
  readonly positions: Int32Array;
  /** Phase of each pattern ("" when not given). */
  readonly phases: string[];
  /** Patterns recorded so far (complete ones). */
  count = 0;
  /** The step callback: records every channel at the current pattern's step (bound; pass it as `onStep`). */
  readonly onStep: (snapshot: Snapshot, step: number) => void;

  constructor(net: Network, options: RecorderOptions) {
    if (options === null || typeof options !== "object") fail("invalid_parameter", "recorder", "recorder options { batch, steps, patterns, layers?, ... }", options);
    refuseUnknownOptions(options, ["batch", "steps", "patterns", "layers", "adaptation", "resources", "channels"], "recorder");
    this.batch = requireInteger("recorder.batch", options.batch, 1);
    this.steps = requireInteger("recorder.steps", options.steps, 1);
    this.capacity = requireInteger("recorder.patterns", options.patterns, 1);
    const sources: RecordChannel[] = [];
    const names = (v: unknown, path: string): string[] => {
      if (v === undefined) return [];
      if (!Array.isArray(v) || v.some((x) => typeof x !== "string")) return fail("invalid_parameter", path, "a list of names", v);
      return v as string[];
    };
    names(options.layers, "recorder.layers").forEach((name, k) => {
      const l = layerNamed(net, name, `recorder.layers[${k}]`);
      sources.push({ name, size: l.size, read: (s) => s.activity[l.index] as ArrayLike<number> });
    });
    names(options.adaptation, "recorder.adaptation").forEach((name, k) => {
      const l = layerNamed(net, name, `recorder.adaptation[${k}]`);
      if (l.spec.adaptation === undefined) fail("invalid_parameter", `recorder.adaptation[${k}]`, "a layer with adaptation", name);
      sources.push({ name: `${name}.adaptation`, size: l.size, read: (s) => s.adaptation[l.index] as ArrayLike<number> });
    });
    names(options.resources, "recorder.resources").forEach((label, k) => {
      const c = net.connections.find((x) => x.label === label);
      if (c === undefined || c.spec.depression === undefined) return fail("invalid_parameter", `recorder.resources[${k}]`, `a connection with depression (${net.connections.filter((x) => x.spec.depression !== undefined).map((x) => x.label).join(", ") || "none"})`, label);
      sources.push({ name: `${label}.resources`, size: net.layers[c.from]!.size, read: (s) => s.resources[c.index] as ArrayLike<number> });
    });
    if (options.channels !== undefined && !Array.isArray(options.channels)) fail("invalid_parameter", "recorder.channels", "a list of channels { name, size, read }", options.channels);
    (options.channels ?? []).forEach((ch, k) => {
      if (ch === null || typeof ch !== "object" || typeof ch.name !== "string" || typeof ch.read !== "function") fail("invalid_parameter", `recorder.channels[${k}]`, "a channel { name, size, read }", ch);
      requireInteger(`recorder.channels[${k}].size`, ch.size, 1);
      sources.push(ch);
    });
    if (sources.length === 0) fail("invalid_parameter", "recorder", "at least one channel (layers, adaptation, resources or channels)", "none");
    const seen = new Set<string>();
    sources.forEach((c, k) => {
      if (seen.has(c.name)) fail("invalid_parameter", `recorder.channels[${k}].name`, "a channel name not used before", c.name);
      seen.add(c.name);
    });
    this.sources = sources;
    this.store = sources.map((c) => new Float64Array(this.capacity * this.steps * this.batch * c.size).fill(Number.NaN));
    this.stepCounts = new Int32Array(this.capacity);
    this.sequences = new Int32Array(this.capacity).fill(-1);
    this.positions = new Int32Array(this.capacity).fill(-1);
    this.phases = new Array<string>(this.capacity).fill("");
    this.onStep = (snapshot, step) => this.record(snapshot, step);
  }

  /** The channels' names, in recording order. */
  get channelNames(): string[] {
    return this.sources.map((c) => c.name);
  }

  /** Records every channel at step `step` (1-based) of the current pattern. */
  record(snapshot: Snapshot, step: number): void {
    const p = this.count;
    if (p >= this.capacity) fail("resource_limit", "recorder.patterns", `at most ${this.capacity} patterns (the recorder's capacity)`, `pattern ${p + 1}`);
    if (step < 1 || step > this.steps) fail("resource_limit", "recorder.steps", `at most ${this.steps} steps per pattern (the recorder's capacity; settle with maxSteps <= ${this.steps})`, `step ${step}`);
    if (snapshot.batch !== this.batch) fail("shape_mismatch", "snapshot", `a batch of ${this.batch}`, `batch ${snapshot.batch}`);
    for (let k = 0; k < this.sources.length; k++) {
      const c = this.sources[k]!;
      const width = this.batch * c.size;
      const v = c.read(snapshot);
      if (v.length !== width) fail("shape_mismatch", `recorder.channels.${c.name}`, `${width} values (batch × size)`, `${v.length} values`);
      const base = (p * this.steps + (step - 1)) * width;
      const d = this.store[k]!;
      for (let q = 0; q < width; q++) d[base + q] = v[q] as number;
    }
    if (step > (this.stepCounts[p] as number)) this.stepCounts[p] = step;
  }

  /** Closes the current pattern (its steps recorded so far), labelled; the next step starts a new pattern. */
  endPattern(label: PatternLabel = {}): void {
    const p = this.count;
    if (p >= this.capacity) fail("resource_limit", "recorder.patterns", `at most ${this.capacity} patterns (the recorder's capacity)`, `pattern ${p + 1}`);
    this.sequences[p] = label.sequence ?? -1;
    this.positions[p] = label.position ?? -1;
    this.phases[p] = label.phase ?? "";
    this.count = p + 1;
  }

  /** Forgets every recorded pattern (keeps the arrays). */
  clear(): void {
    for (const d of this.store) d.fill(Number.NaN);
    this.stepCounts.fill(0);
    this.sequences.fill(-1);
    this.positions.fill(-1);
    this.phases.fill("");
    this.count = 0;
  }

  /** A channel's recorded values (a view of the patterns recorded so far). @throws EbbflowError `unknown_name`. */
  channel(name: string): RecordedChannel {
    const k = this.sources.findIndex((c) => c.name === name);
    if (k < 0) fail("unknown_name", "channel", `a recorded channel (${this.channelNames.join(", ")})`, name);
    const c = this.sources[k]!;
    return { name, size: c.size, data: this.store[k]!.subarray(0, this.count * this.steps * this.batch * c.size) };
  }

  /** One value: channel `name`, pattern p, step s (1-based), batch row b, unit j. */
  value(name: string, p: number, s: number, b: number, j: number): number {
    const c = this.channel(name);
    return c.data[((p * this.steps + (s - 1)) * this.batch + b) * c.size + j] as number;
  }

  /** The rows of the exports: one per (pattern, step taken, batch row). */
  private *rows(): Generator<{ p: number; s: number; b: number }> {
    for (let p = 0; p < this.count; p++) for (let s = 1; s <= (this.stepCounts[p] as number); s++) for (let b = 0; b < this.batch; b++) yield { p, s, b };
  }

  /**
   * JSON Lines: one object per pattern, step and batch row, `{"pattern", "sequence", "position", "phase", "step", "row", "<channel>": [...]}`
   * (sequence and position −1, phase "" when not given); steps after a pattern's last are left out.
   */
  toJsonLines(): string {
    const lines: string[] = [];
    for (const { p, s, b } of this.rows()) {
      const o: Record<string, unknown> = { pattern: p, sequence: this.sequences[p], position: this.positions[p], phase: this.phases[p], step: s, row: b };
      this.sources.forEach((c, k) => {
        const base = ((p * this.steps + (s - 1)) * this.batch + b) * c.size;
        o[c.name] = Array.from(this.store[k]!.subarray(base, base + c.size));
      });
      lines.push(JSON.stringify(o));
    }
    return lines.length === 0 ? "" : lines.join("\n") + "\n";
  }

  /** CSV with a header: `pattern,sequence,position,phase,step,row,<channel>[0],<channel>[1],...`; numbers in shortest round-trip form. */
  toCsv(): string {
    const quote = (t: string) => (/[",\n\r]/.test(t) ? `"${t.replace(/"/g, '""')}"` : t);
    const head = ["pattern", "sequence", "position", "phase", "step", "row"];
    for (const c of this.sources) for (let j = 0; j < c.size; j++) head.push(quote(`${c.name}[${j}]`));
    const lines = [head.join(",")];
    for (const { p, s, b } of this.rows()) {
      const cells: string[] = [String(p), String(this.sequences[p]), String(this.positions[p]), quote(this.phases[p] ?? ""), String(s), String(b)];
      this.sources.forEach((c, k) => {
        const base = ((p * this.steps + (s - 1)) * this.batch + b) * c.size;
        for (let j = 0; j < c.size; j++) cells.push(String(this.store[k]![base + j]));
      });
      lines.push(cells.join(","));
    }
    return lines.join("\n") + "\n";
  }

  /** A channel as a NumPy `.npy` file: float64, shape (patterns, steps, batch, size), NaN after a pattern's last step. */
  toNpy(name: string): Uint8Array {
    const c = this.channel(name);
    return encodeNpy({ data: c.data, shape: [this.count, this.steps, this.batch, c.size], stride: [this.steps * this.batch * c.size, this.batch * c.size, c.size, 1], offset: 0 });
  }

  /** The steps recorded per pattern as a `.npy` file (int32, shape (patterns,)). */
  stepsNpy(): Uint8Array {
    return encodeNpy(this.stepCounts.slice(0, this.count));
  }
}

function layerNamed(net: Network, name: string, path: string) {
  const l = net.layers.find((x) => x.name === name);
  if (l === undefined) return fail("unknown_name", path, `a layer name (${net.layers.map((x) => x.name).join(", ")})`, name);
  return l;
}
