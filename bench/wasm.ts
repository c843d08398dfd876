/**
 * WebAssembly SIMD kernels against the TypeScript kernels: GFLOP/s of gemm
 * (64/128/256 cubes in the NN, NT and TN cases, and two settling shapes), gemv
 * (256 and 1024, A x and Aᵀ x) and ger (256), float32 and float64, with the
 * ratio WASM/TypeScript measured in the same run and the percentage of the
 * CPU's FMA peak.
 *
 * Peak estimate (stated with the table): on x86-64 with AVX2 and FMA,
 * 2 FMA instructions per cycle × 8 float32 (4 float64) lanes of 256 bits ×
 * 2 flops × the clock in /proc/cpuinfo ("cpu MHz", the nominal or current
 * clock: turbo may exceed it, and WebAssembly SIMD is 128 bits wide, so it
 * can reach at most half of this peak). Elsewhere the peak is printed as
 * unknown.
 *
 * Each precision runs in its own worker thread (V8 specialises the
 * TypeScript kernels for the array type they see; see bench/kernels.ts).
 * Within a worker the TypeScript kernel and the WASM backends take turns
 * sample by sample, so machine load hits them alike; medians of 7 samples.
 * The WASM backends compute on arena views (the fast path). On Node 20 the
 * relaxed-SIMD build is enabled with `v8.setFlagsFromString` before anything
 * is compiled, so both builds are measured in one run.
 */
import { PrecisionWorker } from "./precision-worker.js";
import { readFileSync } from "node:fs";
import { setFlagsFromString } from "node:v8";
import { isMainThread, parentPort, workerData } from "node:worker_threads";
import { loadWasmKernelsSync, typescriptBackend, wasmRelaxedSimdSupported, type KernelBackend } from "../src/kernels/public.js";
import { createRandom, fillUniform } from "../src/random/index.js";
import type { Dtype, FloatArray } from "../src/types/index.js";
import { consume } from "./machine.js";

const WORKER_TAG = "ebbflow-wasm-bench";

interface Row {
  readonly op: string;
  readonly shape: string;
  readonly dtype: Dtype;
  /** GFLOP/s per backend name, in the order of `names`. */
  readonly gflops: readonly number[];
}

interface Peak {
  readonly f32: number;
  readonly f64: number;
  readonly text: string;
}

/** The FMA peak from /proc/cpuinfo (x86-64 with AVX2 and FMA), or undefined. */
function estimatePeak(): Peak | undefined {
  let info: string;
  try {
    info = readFileSync("/proc/cpuinfo", "utf8");
  } catch {
    return undefined;
  }
  const mhz = Number(/^cpu MHz\s*:\s*([\d.]+)/m.exec(info)?.[1]);
  const flags = /^flags\s*:(.*)$/m.exec(info)?.[1]?.split(/\s+/) ?? [];
  if (!Number.isFinite(mhz) || !flags.includes("avx2") || !flags.includes("fma")) return undefined;
  const ghz = mhz / 1000;
  const f32 = 2 * 8 * 2 * ghz;
  return { f32, f64: f32 / 2, text: `2 FMA/cycle × 8 f32 (4 f64) lanes × 2 flops × ${ghz.toFixed(3)} GHz = ${f32.toFixed(1)} (f32) / ${(f32 / 2).toFixed(1)} (f64) GFLOP/s` };
}

// ---- timing (as bench/kernels.ts) ----

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

/** GFLOP/s of each function, samples taken in turn after a warm-up of each. */
function race(flops: number, fs: readonly (() => void)[], samples = 7, ms = 40): number[] {
  for (const f of fs) sample(f, 80);
  const times: number[][] = fs.map(() => []);
  for (let s = 0; s < samples; s++) fs.forEach((f, q) => times[q]!.push(sample(f, ms)));
  return times.map((t) => flops / median(t) / 1e9);
}

/** The backends measured in a worker: TypeScript, then the WASM builds this engine runs. */
function backends(): KernelBackend[] {
  const list: KernelBackend[] = [typescriptBackend, loadWasmKernelsSync({ relaxed: false, arenaBytes: 32 << 20 })];
  if (wasmRelaxedSimdSupported()) list.push(loadWasmKernelsSync({ relaxed: true, arenaBytes: 32 << 20 }));
  return list;
}

function filled(be: KernelBackend, dtype: Dtype, n: number, seed: number): FloatArray {
  return fillUniform(be.allocate(dtype, n), createRandom(seed).child("bench-wasm"), -0.5, 0.5);
}

type Case = (list: readonly KernelBackend[]) => Row;

function cases(dtype: Dtype): Case[] {
  const out: Case[] = [];
  const gemmCase = (op: string, m: number, n: number, k: number, tA: boolean, tB: boolean): Case => (list) => {
    // each backend gets its own arrays (arena views for WASM), allocated before timing
    const args = list.map((be) => ({
      be,
      a: filled(be, dtype, m * k, 1),
      b: filled(be, dtype, k * n, 2),
      c: filled(be, dtype, m * n, 3),
    }));
    const g = race(2 * m * n * k, args.map(({ be, a, b, c }) => () => be.gemm(c, a, b, m, n, k, tA, tB, 1, 0)));
    for (const { c } of args) consume(c);
    return { op, shape: `${m}x${n}x${k}`, dtype, gflops: g };
  };
  for (const size of [64, 128, 256]) {
    out.push(gemmCase("gemm NN", size, size, size, false, false));
    out.push(gemmCase("gemm NT", size, size, size, false, true));
    out.push(gemmCase("gemm TN", size, size, size, true, false));
  }
  // a settling step of a 784-256 connection on batches of 16 and 128: out(B×n) += X(B×m)·Wᵀ
  out.push(gemmCase("gemm NT settle", 16, 256, 784, false, true));
  out.push(gemmCase("gemm NT settle", 128, 256, 784, false, true));
  for (const size of [256, 1024]) {
    for (const trans of [false, true]) {
      out.push((list) => {
        const args = list.map((be) => ({ be, a: filled(be, dtype, size * size, 4), x: filled(be, dtype, size, 5), y: filled(be, dtype, size, 6) }));
        const g = race(2 * size * size, args.map(({ be, a, x, y }) => () => be.gemv(y, a, x, size, size, trans, 1, 0)));
        for (const { y } of args) consume(y);
        return { op: trans ? "gemv Aᵀ x" : "gemv A x", shape: `${size}x${size}`, dtype, gflops: g };
      });
    }
  }
  out.push((list) => {
    const size = 256;
    const args = list.map((be) => ({ be, a: filled(be, dtype, size * size, 7), x: filled(be, dtype, size, 8), y: filled(be, dtype, size, 9) }));
    // a tiny alpha keeps the accumulated matrix bounded over many calls
    const g = race(2 * size * size, args.map(({ be, a, x, y }) => () => be.ger(a, x, y, size, size, 1e-9)));
    for (const { a } of args) consume(a);
    return { op: "ger", shape: `${size}x${size}`, dtype, gflops: g };
  });
  return out;
}

/** A worker thread holding the cases of one precision; runs one case per request. */
/** Starts this file as a worker for one precision. */
async function start(dtype: Dtype) {
  return PrecisionWorker.start<Row, { count: number; names: string[] }>(new URL(import.meta.url), WORKER_TAG, dtype);
}

function fmt(x: number, digits = 2): string {
  return x.toFixed(digits);
}

/** Runs the benchmark and prints one table per precision. */
export async function run(): Promise<void> {
  const peak = estimatePeak();
  const w64 = await start("float64");
  const w32 = await start("float32");
  const rows: Record<Dtype, Row[]> = { float64: [], float32: [] };
  try {
    for (let q = 0; q < w64.hello.count; q++) {
      rows.float64.push(await w64.runner.run(q));
      rows.float32.push(await w32.runner.run(q));
    }
  } finally {
    await w64.runner.stop();
    await w32.runner.stop();
  }
  const names = w64.hello.names;
  const wasmNames = names.slice(1);
  const header = ["op", "shape", "dtype", "TS GFLOP/s", ...wasmNames.flatMap((n) => [`${n} GFLOP/s`, "×TS"]), "% peak"];
  const lines: string[][] = [];
  for (const dtype of ["float32", "float64"] as const) {
    for (const r of rows[dtype]) {
      const ts = r.gflops[0]!;
      const best = Math.max(...r.gflops.slice(1));
      const p = peak === undefined ? "?" : fmt((100 * best) / (dtype === "float32" ? peak.f32 : peak.f64), 0);
      lines.push([r.op, r.shape, dtype, fmt(ts), ...r.gflops.slice(1).flatMap((g) => [fmt(g), fmt(g / ts, 1)]), p]);
    }
  }
  const widths = header.map((h, col) => Math.max(h.length, ...lines.map((l) => l[col]!.length)));
  const render = (l: string[]) => l.map((cell, col) => (col < 3 ? cell.padEnd(widths[col]!) : cell.padStart(widths[col]!))).join("  ");
  console.log(render(header));
  console.log(widths.map((w) => "-".repeat(w)).join("  "));
  for (const l of lines) console.log(render(l));
  console.log(`peak: ${peak === undefined ? "unknown (needs /proc/cpuinfo with avx2 and fma)" : peak.text}; % peak uses the best WASM build.`);
  console.log(
    "×TS: WASM backend over the TypeScript backend, samples taken in turn (medians of 7). WASM on arena views; each precision in its own worker thread." +
      (wasmNames.length < 2 ? " Relaxed SIMD not available in this engine." : ""),
  );
}

if (isMainThread) {
  // Node 20 keeps relaxed SIMD behind a flag; later versions enable it by default
  if (Number(process.versions.node.split(".")[0]) === 20) setFlagsFromString("--experimental-wasm-relaxed-simd");
} else if ((workerData as { tag?: string } | null)?.tag === WORKER_TAG) {
  const { dtype } = workerData as { dtype: Dtype };
  const list = backends();
  const all = cases(dtype);
  const port = parentPort!;
  port.on("message", (index: number) => port.postMessage(all[index]!(list)));
  port.postMessage({ count: all.length, names: list.map((b) => b.name) });
}
