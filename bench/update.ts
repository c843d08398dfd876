/**
 * The activity-sparse contrastive update against the dense product: `W (n×m) += α · diffᵀ x` at batch 20
 * and 64 on 784-500 (the published digits network's largest matrix), with a fraction of the post units'
 * phase differences exactly zero (rows), or of the sending units silent in the whole batch (columns), per backend: µs per update, and the ratio dense / sparse (> 1: the
 * row-sparse update is faster). The crossover SPARSE_UPDATE_CROSSOVER (src/rules/base.ts) is where the
 * ratio falls to about 1.
 */
import { setFlagsFromString } from "node:v8";
import { typescriptBackend } from "../src/kernels/index.js";
import type { KernelBackend } from "../src/kernels/backend.js";
import { loadWasmKernelsSync, wasmRelaxedSimdSupported } from "../src/kernels/wasm/index.js";
import { outerSum, sparseOuterSum } from "../src/rules/base.js";

if (Number(process.versions.node.split(".")[0]) === 20) setFlagsFromString("--experimental-wasm-relaxed-simd");

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)] as number;
}

function time(fn: () => void, ms: number): number {
  fn();
  const samples: number[] = [];
  for (let q = 0; q < 5; q++) {
    let reps = 0;
    const t0 = performance.now();
    let t = t0;
    while (t - t0 < ms / 5) {
      fn();
      reps++;
      t = performance.now();
    }
    samples.push(((t - t0) / reps) * 1000);
  }
  return median(samples);
}

export async function run(): Promise<void> {
  const backends: KernelBackend[] = [typescriptBackend, loadWasmKernelsSync({ relaxed: false })];
  if (wasmRelaxedSimdSupported()) backends.push(loadWasmKernelsSync({ relaxed: true }));
  const n = 500;
  const m = 784;
  console.log("| backend | batch | active entries | dense µs | sparse µs | dense / sparse |");
  console.log("| --- | --- | --- | --- | --- | --- |");
  for (const be of backends) {
    for (const B of [20, 64]) {
      const w = be.allocate("float32", n * m);
      const x = be.allocate("float32", B * m);
      for (let i = 0; i < x.length; i++) x[i] = i % 5 === 0 ? 0.5 : 0;
      const d = be.allocate("float32", B * n);
      for (const density of [0.1, 0.25, 0.5, 0.75, 0.9]) {
        for (let i = 0; i < n; i++) for (let b = 0; b < B; b++) d[b * n + i] = (i * 7919) % 1000 < density * 1000 ? 1e-3 * ((b % 3) - 1 || 1) : 0;
        const ms = be.name === "typescript" ? 600 : 300;
        const dense = time(() => outerSum(be, w, 1e-3, d, x, B, n, m, 1), ms);
        const sparse = time(() => void sparseOuterSum(be, w, 1e-3, d, x, B, n, m, 1, 2), ms);
        console.log(`| ${be.name} | ${B} | ${(density * 100).toFixed(0)}% rows | ${dense.toFixed(0)} | ${sparse.toFixed(0)} | ${(dense / sparse).toFixed(2)} |`);
      }
      // every row active, a fraction of the columns (sending units silent in the whole batch, as pixels at 0)
      for (let i = 0; i < d.length; i++) d[i] = 1e-3 * ((i % 3) - 1 || 1);
      for (const density of [0.25, 0.4, 0.5, 0.6]) {
        for (let j = 0; j < m; j++) for (let b = 0; b < B; b++) x[b * m + j] = (j * 7919) % 1000 < density * 1000 && (b + j) % 3 === 0 ? 0.5 : 0;
        const ms = be.name === "typescript" ? 600 : 300;
        const dense = time(() => outerSum(be, w, 1e-3, d, x, B, n, m, 1), ms);
        const sparse = time(() => void sparseOuterSum(be, w, 1e-3, d, x, B, n, m, 1, 2), ms);
        console.log(`| ${be.name} | ${B} | ${(density * 100).toFixed(0)}% columns | ${dense.toFixed(0)} | ${sparse.toFixed(0)} | ${(dense / sparse).toFixed(2)} |`);
      }
    }
  }
}
