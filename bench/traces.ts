/**
 * Vector trace update throughput (elements/s) for n = 1e3 and 1e5, float32 and
 * float64, against peers measured in the same run: a plain `for` loop over JS
 * number arrays computing the same step (the baseline) and an allocating
 * `Array.map` step. All cases are warmed up first, then timed in interleaved
 * rounds (so JIT and machine drift hit every case alike); each figure is the
 * median over rounds. Speeds are reported as ratios, never asserted.
 */
import { consume } from "./machine.js";
import { createRandom } from "../src/random/index.js";
import { vectorTrace, smoothingCoefficient } from "../src/traces/index.js";

interface Case {
  readonly label: string;
  readonly step: () => void;
  reps: number;
  readonly rates: number[];
}

const ROUNDS = 9;
const ROUND_MS = 25;

function timeReps(step: () => void, reps: number): number {
  const t0 = performance.now();
  for (let r = 0; r < reps; r++) step();
  return performance.now() - t0;
}

/** Warms every case, sizes its batch to about ROUND_MS, then times interleaved rounds. */
function runInterleaved(cases: Case[], n: number): void {
  for (const c of cases) {
    timeReps(c.step, 200);
    let reps = 1;
    while (timeReps(c.step, reps) < ROUND_MS / 4) reps *= 2;
    c.reps = reps * 4;
  }
  for (let round = 0; round < ROUNDS; round++) {
    for (const c of cases) {
      const ms = timeReps(c.step, c.reps);
      c.rates.push((c.reps * n) / (ms / 1000));
    }
  }
}

function median(values: readonly number[]): number {
  const s = [...values].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)] as number;
}

function formatRate(r: number): string {
  return `${(r / 1e6).toFixed(0)} M/s`;
}

export async function run(): Promise<void> {
  const tau = 20;
  const a = smoothingCoefficient(tau, 1);
  const rng = createRandom("bench-traces");
  const rows: Record<string, string>[] = [];
  for (const n of [1_000, 100_000]) {
    // Inputs and states are allocated here, outside every timed loop.
    const values = Array.from({ length: n }, () => rng.uniform());
    const plainState = new Array<number>(n).fill(0);
    const plainInput = values.slice();
    let mapState = new Array<number>(n).fill(0);
    const t64 = vectorTrace({ tau, n, dtype: "float64" });
    const x64 = Float64Array.from(values);
    const t32 = vectorTrace({ tau, n, dtype: "float32" });
    const x32 = Float32Array.from(values);

    const cases: Case[] = [
      {
        label: "plain Array for-loop (baseline)",
        step: () => {
          for (let i = 0; i < n; i++) {
            const y = plainState[i] as number;
            plainState[i] = y + a * ((plainInput[i] as number) - y);
          }
          consume(plainState[0] as number);
        },
        reps: 1,
        rates: [],
      },
      {
        label: "Array.map (allocates per step)",
        step: () => {
          mapState = mapState.map((y, i) => y + a * ((plainInput[i] as number) - y));
          consume(mapState[0] as number);
        },
        reps: 1,
        rates: [],
      },
      { label: "vectorTrace float64", step: () => consume(t64.update(x64)), reps: 1, rates: [] },
      { label: "vectorTrace float32", step: () => consume(t32.update(x32)), reps: 1, rates: [] },
    ];
    runInterleaved(cases, n);
    const base = median(cases[0]!.rates);
    for (const c of cases) {
      const m = median(c.rates);
      rows.push({ n: String(n), implementation: c.label, "elements/s (median)": formatRate(m), "ratio vs baseline": (m / base).toFixed(2) });
    }
    rows.push({
      n: String(n),
      implementation: "float32 / float64",
      "elements/s (median)": "",
      "ratio vs baseline": (median(cases[3]!.rates) / median(cases[2]!.rates)).toFixed(2),
    });
  }
  console.log(`vector trace update y += a (x - y), tau = ${tau}, dt = 1; ${ROUNDS} interleaved rounds of ~${ROUND_MS} ms per case`);
  console.table(rows);
}
