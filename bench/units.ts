/**
 * Unit functions: elements per second of each unit's fill (float64 and
 * float32), of the generic `liftUnit` template, and of a naive
 * `Array.prototype.map` over a plain array, all measured in the same run.
 * Figures to read are the ratios: float32 / float64, and fill / map.
 */
import {
  createUnit,
  hardSigmoid,
  linear,
  liftUnit,
  logistic,
  relu,
  saturating,
  softplus,
  tanh,
  type UnitFunction,
  type UnitSpec,
} from "../src/units/index.js";
import { consume } from "./machine.js";

interface Subject {
  readonly name: string;
  readonly spec: UnitSpec;
  /** The scalar the naive baseline and the generic lift call (default: the unit's own `value`). */
  readonly scalar?: (x: number) => number;
}

const subjects: readonly Subject[] = [
  { name: "logistic", spec: { kind: "logistic", gain: 2 }, scalar: (x) => logistic(x, 2, 0) },
  { name: "tanh", spec: { kind: "tanh" }, scalar: tanh },
  { name: "linear", spec: { kind: "linear" }, scalar: linear },
  { name: "relu", spec: { kind: "relu" }, scalar: relu },
  { name: "hard-sigmoid", spec: { kind: "hard-sigmoid" }, scalar: hardSigmoid },
  { name: "softplus", spec: { kind: "softplus", gain: 2 }, scalar: (x) => softplus(x, 2) },
  { name: "saturating", spec: { kind: "saturating", gain: 2, threshold: 0.1 }, scalar: (x) => saturating(x, 2, 0.1) },
  // the noisy unit's scalar is its own table read, so map and lift call unit.value
  { name: "noisy(logistic)", spec: { kind: "noisy", base: { kind: "logistic", gain: 2 }, sigma: 0.5 } },
];

/** Median over `batches` of the elements per second of `work` (which processes `n` elements per call). */
function rate(n: number, work: () => void, budgetMs = 60, batches = 5): number {
  for (let i = 0; i < 3; i++) work(); // warm-up and JIT
  const samples: number[] = [];
  for (let b = 0; b < batches; b++) {
    let reps = 0;
    const start = performance.now();
    let elapsed = 0;
    do {
      work();
      reps++;
      elapsed = performance.now() - start;
    } while (elapsed < budgetMs / batches);
    samples.push((reps * n) / (elapsed / 1000));
  }
  samples.sort((a, b) => a - b);
  return samples[Math.floor(samples.length / 2)] as number;
}

function inputs(n: number): Float64Array {
  // deterministic net inputs spread over [-6, 6] (a low-discrepancy sequence, no RNG needed)
  const x = new Float64Array(n);
  const phi = (Math.sqrt(5) - 1) / 2;
  for (let i = 0; i < n; i++) x[i] = 12 * ((i * phi) % 1) - 6;
  return x;
}

const fmt = (v: number): string => (v / 1e6).toFixed(1);
const ratio = (v: number): string => v.toFixed(2);

export async function run(): Promise<void> {
  const rows: string[][] = [];
  for (const n of [100_000, 1_000_000]) {
    const x64 = inputs(n);
    const x32 = Float32Array.from(x64);
    const out64 = new Float64Array(n);
    const out32 = new Float32Array(n);
    const plain = Array.from(x64);
    for (const s of subjects) {
      const unit: UnitFunction = createUnit(s.spec);
      const scalar = s.scalar ?? ((x: number) => unit.value(x));
      const lifted = liftUnit(scalar);
      const fill64 = rate(n, () => consume(unit.fill(out64, x64)));
      const fill32 = rate(n, () => consume(unit.fill(out32, x32)));
      const slope64 = rate(n, () => consume(unit.fillSlope(out64, x64)));
      const lift64 = rate(n, () => consume(lifted(out64, x64)));
      const mapped = rate(n, () => consume(plain.map(scalar)[0] ?? 0));
      rows.push([s.name, String(n), fmt(fill64), fmt(fill32), ratio(fill32 / fill64), fmt(slope64), fmt(lift64), fmt(mapped), ratio(fill64 / mapped)]);
    }
    await Promise.resolve();
  }
  const header = ["unit", "n", "fill f64 M/s", "fill f32 M/s", "f32/f64", "fillSlope f64 M/s", "liftUnit f64 M/s", "Array.map M/s", "fill f64 / map"];
  const widths = header.map((h, j) => Math.max(h.length, ...rows.map((r) => (r[j] as string).length)));
  const line = (cells: readonly string[]): string => "| " + cells.map((c, j) => (j < 1 ? c.padEnd(widths[j] as number) : c.padStart(widths[j] as number))).join(" | ") + " |";
  console.log("elements per second (millions); Array.map allocates its result each call, the fills write into a preallocated array");
  console.log(line(header));
  console.log("|" + widths.map((w, j) => (j < 1 ? "-".repeat(w + 1) + "-" : "-".repeat(w + 1) + ":")).join("|") + "|");
  for (const r of rows) console.log(line(r));
}
