/**
 * One rate-dynamics settling step of a layer (unit function, `x + dt (f(η) − x)`, divergence bound and
 * stop-rule maximum): the fused WebAssembly kernel (`rateStep`) against the separate WebAssembly kernels
 * it replaces and against the TypeScript kernels, measured in turn in one run. Sizes: one pattern of a
 * 256-unit layer (batch 1) and 64 patterns of it (batch 64), logistic and tanh, float32 and float64.
 * Figures are nanoseconds per value and ratios against the separate WebAssembly kernels.
 */
import { fillUnit, loadWasmKernelsSync, typescriptBackend, type KernelBackend } from "../src/kernels/public.js";
import { createUnit } from "../src/units/index.js";
import { createRandom, fillUniform } from "../src/random/index.js";
import type { Dtype, FloatArray } from "../src/types/index.js";
import { consume } from "./machine.js";

function sample(f: () => void, ms: number): number {
  let calls = 0;
  const t0 = performance.now();
  let t = t0;
  do {
    f();
    calls++;
    t = performance.now();
  } while (t - t0 < ms);
  return (t - t0) / calls;
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)]!;
}

/** Milliseconds per call of each function, samples taken in turn (medians of 9). */
function race(fs: readonly (() => void)[]): number[] {
  for (const f of fs) sample(f, 60);
  const times: number[][] = fs.map(() => []);
  for (let s = 0; s < 9; s++) fs.forEach((f, q) => times[q]!.push(sample(f, 30)));
  return times.map(median);
}

function arrays(be: KernelBackend, dtype: Dtype, n: number): { x: FloatArray; eta: FloatArray; keep: FloatArray } {
  const r = createRandom(3).child("bench-step");
  const x = fillUniform(be.allocate(dtype, n), r, 0, 1);
  const keep = fillUniform(be.allocate(dtype, n), r, -4, 4);
  return { x, eta: be.allocate(dtype, n), keep };
}

/** Runs the comparison and prints a table. */
export async function run(): Promise<void> {
  const wasm = loadWasmKernelsSync({ relaxed: false, arenaBytes: 16 << 20 });
  const dt = 0.5;
  console.log("kind      dtype    values   TS separate ns/value   WASM separate ns/value   WASM fused ns/value   fused × separate   fused × TS");
  for (const kind of ["logistic", "tanh"] as const) {
    const unit = createUnit({ kind });
    for (const dtype of ["float32", "float64"] as const) {
      for (const n of [256, 64 * 256]) {
        const w = arrays(wasm, dtype, n);
        const t = arrays(typescriptBackend, dtype, n);
        // each call restarts from the same net input, so every sample does the same work
        const separate = (K: KernelBackend, a: { x: FloatArray; eta: FloatArray; keep: FloatArray }) => () => {
          K.copy(a.eta, a.keep, n);
          fillUnit(K, unit, false, a.eta, a.eta, n);
          K.sub(a.eta, a.eta, a.x, n);
          K.axpby(a.eta, a.x, a.eta, 1, dt, n);
          consume(K.maxAbs(a.eta, n) + K.maxAbsDiff(a.eta, a.x, n));
        };
        const fused = () => {
          wasm.copy(w.eta, w.keep, n);
          consume(wasm.rateStep!(kind, 1, 0, w.x, w.eta, null, 0, dt, Infinity, n) as number);
        };
        const [ts, sep, fu] = race([separate(typescriptBackend, t), separate(wasm, w), fused]).map((ms) => (ms * 1e6) / n);
        console.log(
          `${kind.padEnd(9)} ${dtype.padEnd(8)} ${String(n).padStart(6)}   ${ts!.toFixed(2).padStart(20)}   ${sep!.toFixed(2).padStart(22)}   ${fu!.toFixed(2).padStart(19)}   ${(sep! / fu!).toFixed(2).padStart(16)}   ${(ts! / fu!).toFixed(1).padStart(10)}`,
        );
      }
    }
  }
  console.log("(each call includes copying the net input back in: the step overwrites it. × = speed-up, time of the peer / time of the fused kernel.)");
}
