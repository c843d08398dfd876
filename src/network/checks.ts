/**
 * Checks of a network declaration's values against its storage and its constraints, and of the memory a
 * network will need, made before anything is allocated: initialisers and explicit values that would not
 * fit the dtype (they would become infinite weights), explicit weights that break the connection's sign or
 * bound constraint, and parameter or state blocks over the resource limit.
 * @module
 */
import { describeValue, issueText, type Issue } from "../errors/index.js";
import { requireBytes } from "../limits/index.js";
import type { NetworkSpec } from "./spec.js";

/** Largest finite value of a dtype. */
function largest(dtype: NetworkSpec["dtype"]): number {
  return dtype === "float32" ? 3.4028234663852886e38 : Number.MAX_VALUE;
}

/** Whether `x` is stored finite in `dtype` (float32 rounds values just above its largest to infinity). */
function fits(x: number, dtype: NetworkSpec["dtype"]): boolean {
  return Number.isFinite(dtype === "float32" ? Math.fround(x) : x);
}

/**
 * Standard normal draws of the Box–Muller transform are bounded by sqrt(-2 ln u) with u >= 2^-53
 * (a double in (0, 1)), that is |z| < 8.6 (Box & Muller 1958, Ann. Math. Stat. 29:610; the bound follows from
 * the smallest uniform value): a normal initialiser stays finite when |mean| + 9 std fits.
 */
const NORMAL_REACH = 9;

type Init = NetworkSpec["connections"][number]["init"];

function initProblem(init: Init, dtype: NetworkSpec["dtype"]): string | null {
  const max = largest(dtype);
  switch (init.kind) {
    case "uniform":
      return fits(init.low, dtype) && fits(init.high, dtype) && Number.isFinite(init.high - init.low) && Math.abs(init.low) <= max && Math.abs(init.high) <= max ? null : `low ${init.low}, high ${init.high}`;
    case "normal": {
      const reach = Math.abs(init.mean ?? 0) + NORMAL_REACH * init.std;
      return Number.isFinite(reach) && reach <= max ? null : `mean ${init.mean ?? 0}, std ${init.std}`;
    }
    case "constant":
      return fits(init.value, dtype) && Math.abs(init.value) <= max ? null : `value ${init.value}`;
    default:
      return null;
  }
}

/**
 * Problems of a declaration's values that its schema cannot see: initialisers whose values would overflow
 * the dtype (uniform bounds, |mean| + 9 std of a normal, a constant), explicit weights and biases outside
 * the dtype's range, and explicit weights that break the connection's sign (excitatory >= 0, inhibitory
 * <= 0) or soft bound (|w| <= 1) constraint. Only the first offending value of an array is reported.
 * @param spec - A declaration that passed the schema.
 * @returns The problems, each with its path.
 * @category Network
 */
export function valueIssues(spec: NetworkSpec): Issue[] {
  const out: Issue[] = [];
  const dtype = spec.dtype;
  spec.layers.forEach((l, i) => {
    const values = Array.isArray(l.bias) ? l.bias : [l.bias];
    const k = values.findIndex((v) => !fits(v, dtype));
    if (k >= 0) out.push(issueText("invalid_config", Array.isArray(l.bias) ? `layers[${i}].bias[${k}]` : `layers[${i}].bias`, `a value within the range of ${dtype}`, describeValue(values[k])));
  });
  spec.connections.forEach((c, i) => {
    const bad = initProblem(c.init, dtype);
    if (bad !== null && c.weights === undefined) out.push(issueText("invalid_config", `connections[${i}].init`, `an initialiser whose values fit in ${dtype} (largest ${largest(dtype)})`, bad));
    if (c.feedback.kind === "separate") {
      const fb = initProblem(c.feedback.init ?? c.init, dtype);
      if (fb !== null) out.push(issueText("invalid_config", c.feedback.init !== undefined ? `connections[${i}].feedback.init` : `connections[${i}].init`, `an initialiser whose values fit in ${dtype} (it also initialises the feedback matrix)`, fb));
    }
    const w = c.weights;
    if (w === undefined) return;
    for (let k = 0; k < w.length; k++) {
      const v = w[k] as number;
      let expected: string | null = null;
      if (!fits(v, dtype)) expected = `a weight within the range of ${dtype}`;
      else if (c.sign === "excitatory" && v < 0) expected = "a weight >= 0 (the connection is excitatory)";
      else if (c.sign === "inhibitory" && v > 0) expected = "a weight <= 0 (the connection is inhibitory)";
      else if (c.bounds === "soft" && Math.abs(v) > 1) expected = "a weight in [-1, 1] (the connection has soft bounds)";
      if (expected !== null) {
        out.push(issueText("invalid_config", `connections[${i}].weights[${k}]`, expected, describeValue(v)));
        break;
      }
    }
  });
  return out;
}

/**
 * Bytes of a declaration's parameters (biases, weights, separate feedback matrices) in its dtype.
 * @param spec - A validated declaration.
 * @returns The bytes (may exceed 2^53 for absurd declarations; never throws).
 * @category Network
 */
export function parameterBytes(spec: NetworkSpec): number {
  const size = new Map(spec.layers.map((l) => [l.name, l.size]));
  let values = 0;
  for (const l of spec.layers) if (l.role !== "input") values += l.size;
  for (const c of spec.connections) {
    const n = (size.get(c.from) ?? 0) * (size.get(c.to) ?? 0);
    values += c.feedback.kind === "separate" ? 2 * n : n;
  }
  return values * (spec.dtype === "float32" ? 4 : 8);
}

/**
 * Requires that a declaration's parameters fit the byte limit (called by `buildNetwork` before allocating).
 * @param spec - A validated declaration.
 * @throws {@link EbbflowError} `resource_limit` (path `layers`).
 * @category Network
 */
export function requireParameterMemory(spec: NetworkSpec): void {
  requireBytes("layers", "the network's parameters", parameterBytes(spec));
}

/** Arrays of B×units a settler and its snapshots hold per layer, about (drive, next, net input, targets, two snapshots' activity and state). */
const STATE_ARRAYS = 6;

/**
 * Requires that the settling states of `batch` patterns fit the byte limit (about six B×units arrays).
 * @param spec - The declaration.
 * @param batch - Patterns per batch.
 * @param path - What sets the batch size, for the error (e.g. `training.batchSize`).
 * @throws {@link EbbflowError} `resource_limit`.
 * @category Network
 */
export function requireStateMemory(spec: NetworkSpec, batch: number, path = "batch"): void {
  let units = 0;
  for (const l of spec.layers) units += l.size;
  requireBytes(path, `the settling states of a batch of ${batch} (${units} units)`, STATE_ARRAYS * batch * units * (spec.dtype === "float32" ? 4 : 8));
}
