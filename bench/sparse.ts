/**
 * Sparse storage benchmark (`npm run bench -- sparse`): row-compressed products against the dense masked
 * product (the same matrix with zeros outside the pattern, through `gemm`), on the TypeScript backend and
 * the WebAssembly builds, measured in turn in one run (medians of 7 samples; every figure a ratio):
 *
 * - random patterns at 10% density and a density sweep (where sparse and dense cost the same: the
 *   crossover the automatic storage choice uses);
 * - a local 7×7 projection between 22×22 sheets (density 10%) and a local 3×3 projection between 64×64
 *   sheets (density 0.2%), with the memory of both storages;
 * - convolution: the direct kernel against the im2col product, forward, transposed and kernel change.
 *
 * Each precision runs in its own worker thread (see bench/kernels.ts for why); WASM backends on arena views.
 */
import { PrecisionWorker } from "./precision-worker.js";
import { setFlagsFromString } from "node:v8";
import { isMainThread, parentPort, workerData } from "node:worker_threads";
import { loadWasmKernelsSync, typescriptBackend, wasmRelaxedSimdSupported, type KernelBackend } from "../src/kernels/public.js";
import { compressRows, expandRows, storedEntries, type RowCompressed } from "../src/kernels/sparse.js";
import {
  convolutionChangeByRows,
  convolutionChangeDirect,
  convolutionGeometry,
  convolveByRows,
  convolveDirect,
  convolveTransposedByRows,
  convolveTransposedDirect,
  fieldRowsLength,
  inputUnits,
  outputUnits,
  type ConvolutionGeometry,
} from "../src/kernels/convolution.js";
import { localMask } from "../src/kernels/storage.js";
import { createRandom, fillUniform } from "../src/random/index.js";
import { buildNetwork, Settler, type NetworkSpecInput } from "../src/index.js";
import type { Dtype, FloatArray } from "../src/types/index.js";
import { consume } from "./machine.js";

const WORKER_TAG = "ebbflow-sparse-bench";
const SAMPLES = 7;

interface Row {
  readonly name: string;
  readonly dtype: Dtype;
  /** Per backend: [label, milliseconds] pairs of the variants measured. */
  readonly times: readonly (readonly [string, readonly (readonly [string, number])[]])[];
  readonly note?: string | undefined;
}

function backends(): KernelBackend[] {
  const list: KernelBackend[] = [typescriptBackend, loadWasmKernelsSync({ relaxed: false, arenaBytes: 64 << 20 })];
  if (wasmRelaxedSimdSupported()) list.push(loadWasmKernelsSync({ relaxed: true, arenaBytes: 64 << 20 }));
  return list;
}

function filled(be: KernelBackend, dtype: Dtype, n: number, seed: number): FloatArray {
  const a = be.allocate(dtype, n);
  fillUniform(a, createRandom(seed), -1, 1);
  return a;
}

/** Median milliseconds of `SAMPLES` runs of each variant, taken in turn; each sample repeats until 20 ms. */
function measure(variants: readonly (readonly [string, () => void])[], samples = SAMPLES): [string, number][] {
  const reps = variants.map(([, f]) => {
    let r = 0;
    const t0 = performance.now();
    do {
      f();
      r++;
    } while (performance.now() - t0 < 20);
    return r;
  });
  const runs: number[][] = variants.map(() => []);
  for (let s = 0; s < samples; s++) {
    variants.forEach(([, f], v) => {
      const t0 = performance.now();
      for (let r = 0; r < reps[v]!; r++) f();
      runs[v]!.push((performance.now() - t0) / reps[v]!);
    });
  }
  return variants.map(([label], v) => {
    const sorted = runs[v]!.sort((a, b) => a - b);
    return [label, sorted[Math.floor(sorted.length / 2)]!];
  });
}

function randomMask(rows: number, cols: number, density: number, seed: number): Uint8Array {
  const rng = createRandom(seed).child("mask");
  const m = new Uint8Array(rows * cols);
  for (let q = 0; q < m.length; q++) m[q] = rng.uniform() < density ? 1 : 0;
  return m;
}

/** Drive, transposed drive and sampled product of one mask, dense masked against sparse, on one backend. */
function productCase(be: KernelBackend, dtype: Dtype, mask: Uint8Array, n: number, m: number, B: number, which: "all" | "drive"): [string, number][] {
  const w = filled(be, dtype, n * m, 1);
  const s: RowCompressed = compressRows(mask, n, m, dtype, w, be.sparse!.allocator);
  expandRows(w, s);
  const x = filled(be, dtype, B * m, 2);
  const y = filled(be, dtype, B * n, 3);
  const z = filled(be, dtype, B * n, 4);
  const post = filled(be, dtype, n * B, 5);
  const back = filled(be, dtype, B * m, 6);
  const k = be.sparse!;
  const variants: [string, () => void][] = [
    ["drive dense", () => consume(be.gemm(y, x, w, B, n, m, false, true, 1, 1))],
    ["drive sparse", () => consume(k.sparseDrive(y, s.values, s.rowStart, s.columnIndex, x, n, m, B, 1, 1))],
  ];
  if (which === "all") {
    variants.push(
      ["transposed dense", () => consume(be.gemm(back, z, w, B, m, n, false, false, 1, 1))],
      ["transposed sparse", () => consume(k.sparseDriveTransposed(back, s.values, s.rowStart, s.columnIndex, z, n, m, B, 1, 1))],
      // the dense change touches every entry; the masked weights would then be zeroed again (not timed)
      ["change dense", () => consume(be.gemm(w, post, x, n, m, B, false, false, 1e-9, 1))],
      ["change sparse", () => consume(k.sparseSampledProduct(s.values, s.rowStart, s.columnIndex, post, x, n, m, B, 1e-9, 1))],
    );
  }
  return measure(variants, n * m > 4_000_000 ? 3 : SAMPLES);
}

function convCase(be: KernelBackend, dtype: Dtype, g: ConvolutionGeometry, B: number): [string, number][] {
  const kernel = filled(be, dtype, g.outChannels * g.kernelHeight * g.kernelWidth * g.channels, 1);
  const x = filled(be, dtype, B * inputUnits(g), 2);
  const y = filled(be, dtype, B * outputUnits(g), 3);
  const back = filled(be, dtype, B * inputUnits(g), 4);
  const work = be.allocate(dtype, fieldRowsLength(g, B));
  const variants: [string, () => void][] = [
    ["forward direct", () => consume(convolveDirect(y, kernel, x, g, B, 1, 0))],
    ["forward im2col", () => consume(convolveByRows(be, y, kernel, x, g, B, 1, 0, work))],
    ["transposed direct", () => consume(convolveTransposedDirect(back, kernel, y, g, B, 1, 0))],
    ["transposed im2col", () => consume(convolveTransposedByRows(be, back, kernel, y, g, B, 1, 0, work))],
    ["change direct", () => consume(convolutionChangeDirect(kernel, y, x, g, B, 1e-9, 1))],
    ["change im2col", () => consume(convolutionChangeByRows(be, kernel, y, x, g, B, 1e-9, 1, work))],
  ];
  return measure(variants);
}

/** One free settling (20 steps) of a declared network per storage choice, on one backend. */
function settleCase(be: KernelBackend, dtype: Dtype, decl: (storage: "dense" | "sparse" | "auto") => NetworkSpecInput, storages: readonly ("dense" | "sparse" | "auto")[], B: number): [string, number][] {
  const variants = storages.map((st) => {
    const net = buildNetwork({ ...decl(st), dtype }, { backend: be });
    const first = net.inputLayers[0]!;
    const inputs = { [first.name]: Array.from({ length: B * first.size }, (_, q) => Math.sin(q)) };
    const settler = new Settler(net, B);
    return [`settle ${st}`, () => consume(settler.settle({ phase: "free", inputs }).activity[net.layers.length - 1]!)] as [string, () => void];
  });
  return measure(variants);
}

const topographic = (storage: "dense" | "sparse" | "auto"): NetworkSpecInput => ({
  layers: [
    { name: "sheet", shape: [32, 32], role: "input" },
    { name: "map", shape: [32, 32], role: "hidden" },
    { name: "out", size: 10, role: "output" },
  ],
  connections: [
    { from: "sheet", to: "map", pattern: { kind: "local", kernel: 3, padding: 1 }, storage },
    { from: "map", to: "map", pattern: { kind: "local", radius: 1.5, selfConnections: false, symmetric: true }, storage },
    { from: "map", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { maxSteps: 20, tolerance: Number.MIN_VALUE },
});

const convolutional = (storage: "dense" | "sparse" | "auto"): NetworkSpecInput => ({
  layers: [
    { name: "image", shape: [28, 28, 1], role: "input" },
    { name: "features", shape: [24, 24, 8], role: "hidden" },
    { name: "out", size: 10, role: "output" },
  ],
  connections: [
    { from: "image", to: "features", pattern: { kind: "convolution", kernel: 5 }, feedback: { kind: "tied", gain: 1 }, storage },
    { from: "features", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { maxSteps: 20, tolerance: Number.MIN_VALUE },
});

type Case = (list: KernelBackend[]) => Row;

function cases(dtype: Dtype): Case[] {
  const B = 16;
  const out: Case[] = [];
  const per = (name: string, f: (be: KernelBackend) => [string, number][], note?: string): Case => (list) => ({ name, dtype, times: list.map((be) => [be.name, f(be)] as const), note });
  out.push(per("random 10%, 1024×1024, batch 16", (be) => productCase(be, dtype, randomMask(1024, 1024, 0.1, 7), 1024, 1024, B, "all")));
  const local22 = localMask(22, 22, 22, 22, 7, 1);
  out.push(per(`local 7×7, 22×22 → 22×22 (density ${((100 * local22.reduce((a, b) => a + b, 0)) / local22.length).toFixed(1)}%), batch 16`, (be) => productCase(be, dtype, local22, 484, 484, B, "all")));
  const local64 = localMask(64, 64, 64, 64, 3, 1);
  out.push(per(`local 3×3, 64×64 → 64×64 (density ${((100 * local64.reduce((a, b) => a + b, 0)) / local64.length).toFixed(2)}%), batch 16`, (be) => productCase(be, dtype, local64, 4096, 4096, B, "drive")));
  for (const d of [0.01, 0.03, 0.1, 0.2, 0.3, 0.5, 0.7, 1]) {
    out.push(per(`sweep density ${d}, 512×512, batch 16`, (be) => productCase(be, dtype, randomMask(512, 512, d, 11), 512, 512, B, "drive")));
  }
  const g1 = convolutionGeometry({ height: 28, width: 28, channels: 1, kernelHeight: 5, kernelWidth: 5, outChannels: 16, stride: 1, padding: 2 });
  const g2 = convolutionGeometry({ height: 16, width: 16, channels: 8, kernelHeight: 3, kernelWidth: 3, outChannels: 16, stride: 1, padding: 1 });
  const g3 = convolutionGeometry({ height: 28, width: 28, channels: 1, kernelHeight: 4, kernelWidth: 4, outChannels: 8, stride: 2, padding: 1 });
  out.push(per("settle 20 steps: 32×32 sheet → 32×32 map (local 3×3) + lateral radius 1.5 + 10 outputs, batch 16", (be) => settleCase(be, dtype, topographic, ["dense", "auto"], B)));
  out.push(per("settle 20 steps: 28×28 image → 24×24×8 convolution 5×5 (tied feedback) + 10 outputs, batch 16", (be) => settleCase(be, dtype, convolutional, ["dense", "sparse", "dense", "auto"], B)));
  out.push(per("conv 28×28×1 → 5×5×16 pad 2, batch 16", (be) => convCase(be, dtype, g1, B)));
  out.push(per("conv 16×16×8 → 3×3×16 pad 1, batch 16", (be) => convCase(be, dtype, g2, B)));
  out.push(per("conv 28×28×1 → 4×4×8 stride 2, batch 16", (be) => convCase(be, dtype, g3, B)));
  return out;
}

function start(dtype: Dtype) {
  return PrecisionWorker.start<Row, { count: number }>(new URL(import.meta.url), WORKER_TAG, dtype);
}

const fmt = (x: number, d = 3): string => (x >= 100 ? x.toFixed(0) : x.toPrecision(d));

/** Memory of a projection's two storages (bytes): dense n×m values, or values + i32 columns + i32 row starts. */
function memoryLine(label: string, mask: Uint8Array, n: number, m: number): string {
  const s = compressRows(mask, n, m, "float32");
  const nnz = storedEntries(s);
  const parts = (["float32", "float64"] as const).map((dt) => {
    const bytes = dt === "float32" ? 4 : 8;
    const dense = n * m * bytes;
    const dense8 = dense + n * m; // with a one-byte mask beside it
    const sparse = nnz * (bytes + 4) + (n + 1) * 4;
    return `${dt}: dense ${(dense / 2 ** 20).toFixed(2)} MiB (+ mask ${(dense8 / 2 ** 20).toFixed(2)} MiB), sparse ${(sparse / 2 ** 20).toFixed(3)} MiB (${(dense / sparse).toFixed(0)}× less than dense)`;
  });
  return `memory of ${label}: ${nnz} stored entries of ${n * m}; ${parts.join("; ")}`;
}

export async function run(): Promise<void> {
  const w64 = await start("float64");
  const w32 = await start("float32");
  const rows: Row[] = [];
  try {
    for (let q = 0; q < w64.hello.count; q++) {
      rows.push(await w64.runner.run(q));
      rows.push(await w32.runner.run(q));
    }
  } finally {
    await w64.runner.stop();
    await w32.runner.stop();
  }
  for (const r of rows) {
    console.log(`\n${r.name} [${r.dtype}]`);
    for (const [be, times] of r.times) {
      const cells: string[] = [];
      for (let v = 0; v + 1 < times.length; v += 2) {
        const [a, ta] = times[v]!;
        const [b, tb] = times[v + 1]!;
        cells.push(`${a} ${fmt(ta)} ms, ${b} ${fmt(tb)} ms (${b.split(" ").pop()}/${a.split(" ").pop()} time ×${fmt(tb / ta, 2)})`);
      }
      console.log(`  ${be.padEnd(18)} ${cells.join("; ")}`);
    }
  }
  console.log("\n" + memoryLine("local 3×3, 64×64 → 64×64", localMask(64, 64, 64, 64, 3, 1), 4096, 4096));
  console.log(memoryLine("local 7×7, 22×22 → 22×22", localMask(22, 22, 22, 22, 7, 1), 484, 484));
  console.log("time ×: the second variant's median time over the first's, same backend, samples taken in turn (medians of 7, 3 for the 4096×4096 case).");
}

if (isMainThread) {
  if (Number(process.versions.node.split(".")[0]) === 20) setFlagsFromString("--experimental-wasm-relaxed-simd");
} else if ((workerData as { tag?: string } | null)?.tag === WORKER_TAG) {
  const { dtype } = workerData as { dtype: Dtype };
  const list = backends();
  const all = cases(dtype);
  const port = parentPort!;
  port.on("message", (index: number) => port.postMessage(all[index]!(list)));
  port.postMessage({ count: all.length });
}
