/**
 * Kernel benchmark: gemm at the settling shapes (NN: feedback drive, NT:
 * forward drive, TN: weight update), gemv and ger, in float32 and float64.
 * Every figure is compared with a textbook loop nest (no unrolling, no
 * blocking) measured in the same run, and float32 with float64.
 *
 * Each precision runs in its own worker thread: V8 specialises a function for
 * the array types it has seen, and a kernel that has seen both Float32Array
 * and Float64Array runs slower for both. A process normally computes in one
 * precision, so each is measured on a fresh engine. The main thread asks the
 * two workers for one case at a time, in turn, so both precisions of a case
 * are measured under similar machine load.
 */
import { PrecisionWorker } from "./precision-worker.js";
import { isMainThread, parentPort, workerData } from "node:worker_threads";
import { gemm, gemv, ger } from "../src/kernels/index.js";
import { createRandom, fillUniform } from "../src/random/index.js";
import { allocate, type Dtype, type FloatArray } from "../src/types/index.js";
import { consume } from "./machine.js";

interface Row {
  readonly op: string;
  readonly shape: string;
  readonly dtype: Dtype;
  /** GFLOP/s of the ebbflow kernel. */
  readonly kernel: number;
  /** GFLOP/s of the textbook loop nest. */
  readonly naive: number;
}

const WORKER_TAG = "ebbflow-kernels-bench";

// ---- textbook peers: the definitions as loop nests, float64 accumulation ----

function naiveGemmNN(c: FloatArray, a: FloatArray, b: FloatArray, m: number, n: number, k: number): void {
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < n; j++) {
      let s = 0;
      for (let p = 0; p < k; p++) s += a[i * k + p]! * b[p * n + j]!;
      c[i * n + j] = s;
    }
  }
}

function naiveGemmNT(c: FloatArray, a: FloatArray, b: FloatArray, m: number, n: number, k: number): void {
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < n; j++) {
      let s = 0;
      for (let p = 0; p < k; p++) s += a[i * k + p]! * b[j * k + p]!;
      c[i * n + j] = s;
    }
  }
}

function naiveGemmTN(c: FloatArray, a: FloatArray, b: FloatArray, m: number, n: number, k: number): void {
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < n; j++) {
      let s = 0;
      for (let p = 0; p < k; p++) s += a[p * m + i]! * b[p * n + j]!;
      c[i * n + j] = s;
    }
  }
}

function naiveGemv(y: FloatArray, a: FloatArray, x: FloatArray, rows: number, cols: number): void {
  for (let i = 0; i < rows; i++) {
    let s = 0;
    for (let j = 0; j < cols; j++) s += a[i * cols + j]! * x[j]!;
    y[i] = s;
  }
}

function naiveGemvT(y: FloatArray, a: FloatArray, x: FloatArray, rows: number, cols: number): void {
  for (let j = 0; j < cols; j++) {
    let s = 0;
    for (let i = 0; i < rows; i++) s += a[i * cols + j]! * x[i]!;
    y[j] = s;
  }
}

function naiveGer(out: FloatArray, x: FloatArray, y: FloatArray, m: number, n: number, alpha: number): void {
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) out[i * n + j] = out[i * n + j]! + alpha * x[i]! * y[j]!;
}

// ---- timing ----

/** Seconds per call of `f` over one sample of about `ms` milliseconds. */
function sample(f: () => void, ms: number): number {
  let calls = 0;
  const t0 = performance.now();
  let t = t0;
  do {
    f();
    calls++;
    t = performance.now();
  } while (t - t0 < ms);
  return (t - t0) / 1000 / calls;
}

function median(xs: number[]): number {
  const s = [...xs].sort((x, y) => x - y);
  return s[Math.floor(s.length / 2)]!;
}

/**
 * GFLOP/s of a kernel and of its peer: after a warm-up of both, samples of the
 * two alternate, so a change in machine load hits both alike; medians are
 * reported.
 */
function pair(flops: number, kernel: () => void, peer: () => void, samples = 7, ms = 50): [number, number] {
  sample(kernel, 80);
  sample(peer, 80);
  const tk: number[] = [];
  const tp: number[] = [];
  for (let s = 0; s < samples; s++) {
    tk.push(sample(kernel, ms));
    tp.push(sample(peer, ms));
  }
  return [flops / median(tk) / 1e9, flops / median(tp) / 1e9];
}

function filled(dtype: Dtype, n: number, seed: number): FloatArray {
  return fillUniform(allocate(dtype, n), createRandom(seed).child("bench-kernels"), -0.5, 0.5);
}

/** One benchmark case: allocates its arrays when run, outside the timed loops. */
type Case = () => Row;

function cases(dtype: Dtype): Case[] {
  const list: Case[] = [];
  const gemmCases: [string, boolean, boolean, typeof naiveGemmNN][] = [
    ["gemm NN", false, false, naiveGemmNN],
    ["gemm NT", false, true, naiveGemmNT],
    ["gemm TN", true, false, naiveGemmTN],
  ];
  for (const size of [64, 128, 256]) {
    for (const [op, tA, tB, naive] of gemmCases) {
      list.push(() => {
        const a = filled(dtype, size * size, 1);
        const b = filled(dtype, size * size, 2);
        const c = filled(dtype, size * size, 3);
        const [kernel, peer] = pair(
          2 * size * size * size,
          () => gemm(c, a, b, size, size, size, tA, tB, 1, 0),
          () => naive(c, a, b, size, size, size),
        );
        consume(c);
        return { op, shape: `${size}x${size}x${size}`, dtype, kernel, naive: peer };
      });
    }
  }
  for (const size of [256, 1024]) {
    for (const trans of [false, true]) {
      list.push(() => {
        const a = filled(dtype, size * size, 4);
        const x = filled(dtype, size, 5);
        const y = filled(dtype, size, 6);
        const [kernel, peer] = pair(
          2 * size * size,
          () => gemv(y, a, x, size, size, trans, 1, 0),
          trans ? () => naiveGemvT(y, a, x, size, size) : () => naiveGemv(y, a, x, size, size),
        );
        consume(y);
        return { op: trans ? "gemv Aᵀ x" : "gemv A x", shape: `${size}x${size}`, dtype, kernel, naive: peer };
      });
    }
  }
  list.push(() => {
    const size = 256;
    const out = filled(dtype, size * size, 7);
    const x = filled(dtype, size, 8);
    const y = filled(dtype, size, 9);
    // a tiny alpha keeps the accumulated matrix bounded over many calls
    const [kernel, peer] = pair(
      2 * size * size,
      () => ger(out, x, y, size, size, 1e-9),
      () => naiveGer(out, x, y, size, size, 1e-9),
    );
    consume(out);
    return { op: "ger", shape: `${size}x${size}`, dtype, kernel, naive: peer };
  });
  return list;
}

/** A worker thread holding the cases of one precision; runs one case per request. */
/** Starts this file as a worker for one precision. */
async function start(dtype: Dtype) {
  return PrecisionWorker.start<Row, number>(new URL(import.meta.url), WORKER_TAG, dtype);
}

function fmt(x: number, digits = 2): string {
  return x.toFixed(digits);
}

/** Runs the kernel benchmark and prints one table (GFLOP/s and ratios). */
export async function run(): Promise<void> {
  const w64 = await start("float64");
  const w32 = await start("float32");
  const f64: Row[] = [];
  const f32: Row[] = [];
  try {
    // the two precisions take turns case by case, so both meet similar machine load
    for (let q = 0; q < w64.hello; q++) {
      f64.push(await w64.runner.run(q));
      f32.push(await w32.runner.run(q));
    }
  } finally {
    await w64.runner.stop();
    await w32.runner.stop();
  }
  const header = ["op", "shape", "f64 GFLOP/s", "f64 ×naive", "f32 GFLOP/s", "f32 ×naive", "f32/f64"];
  const lines: string[][] = [header];
  f64.forEach((r, q) => {
    const s = f32[q]!;
    lines.push([r.op, r.shape, fmt(r.kernel), fmt(r.kernel / r.naive, 1), fmt(s.kernel), fmt(s.kernel / s.naive, 1), fmt(s.kernel / r.kernel)]);
  });
  const widths = header.map((_, col) => Math.max(...lines.map((l) => l[col]!.length)));
  const render = (l: string[]) => l.map((cell, col) => (col < 2 ? cell.padEnd(widths[col]!) : cell.padStart(widths[col]!))).join("  ");
  console.log(render(header));
  console.log(widths.map((w) => "-".repeat(w)).join("  "));
  for (const l of lines.slice(1)) console.log(render(l));
  console.log(
    "×naive: speed-up over the textbook loop nest (samples alternate with the kernel's, medians of 7);" +
      " f32/f64: float32 kernel over float64 kernel, measured in turn. Each precision runs in its own worker thread (fresh type feedback).",
  );
}

if (!isMainThread && (workerData as { tag?: string } | null)?.tag === WORKER_TAG) {
  const { dtype } = workerData as { dtype: Dtype };
  const list = cases(dtype);
  const port = parentPort!;
  port.on("message", (index: number) => port.postMessage(list[index]!()));
  port.postMessage(list.length);
}
