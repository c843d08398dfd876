/**
 * Settling a 784-256-10 network (tied feedback, logistic units, rate dynamics) for 20 steps at batch 1
 * and 64, float32 and float64: steps per second, GFLOP/s, and the ratio to a naive-loop version of the
 * same work measured in the same run. Two naive peers: one with the same clamp-aware algorithm (input
 * drive once per phase), one that recomputes the input drive on every step.
 */
import { buildNetwork, Settler, loadWasmKernelsSync, wasmSimdSupported, typescriptBackend, type Dtype, type FloatArray, type KernelBackend } from "../src/index.js";
import { consume } from "./machine.js";

const SIZES = [784, 256, 10] as const;
const STEPS = 20;

function network(dtype: Dtype, backend: KernelBackend) {
  return buildNetwork({
    dtype,
    seed: 1,
    layers: [
      { name: "image", size: SIZES[0], role: "input" },
      { name: "hidden", size: SIZES[1], role: "hidden" },
      { name: "digit", size: SIZES[2], role: "output" },
    ],
    connections: [
      { from: "image", to: "hidden", feedback: { kind: "tied", gain: 1 } },
      { from: "hidden", to: "digit", feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.5, maxSteps: STEPS, tolerance: 1e-30 },
  }, { backend });
}

/** Floating-point operations of one free phase of STEPS steps (multiply-add = 2). */
function flops(batch: number, clampAware: boolean): number {
  const [i, h, o] = SIZES;
  const drive = 2 * batch * i * h;
  const perStep = 2 * batch * h * o * 2 + 6 * batch * (h + o);
  return (clampAware ? drive : drive * STEPS) + perStep * STEPS;
}

/** A plain-loop settle with the same arithmetic; `clampAware` computes the input drive once. */
function naiveSettle(w1: FloatArray, w2: FloatArray, b1: FloatArray, b2: FloatArray, x: FloatArray, batch: number, clampAware: boolean, buf: { h: FloatArray; o: FloatArray; dh: FloatArray; nh: FloatArray; no: FloatArray }): void {
  const [I, H, O] = SIZES;
  const { h, o, dh, nh, no } = buf;
  h.fill(0);
  o.fill(0);
  const drive = () => {
    for (let b = 0; b < batch; b++)
      for (let j = 0; j < H; j++) {
        let s = b1[j] as number;
        for (let k = 0; k < I; k++) s += (w1[j * I + k] as number) * (x[b * I + k] as number);
        dh[b * H + j] = s;
      }
  };
  if (clampAware) drive();
  for (let step = 0; step < STEPS; step++) {
    if (!clampAware) drive();
    for (let b = 0; b < batch; b++) {
      for (let j = 0; j < H; j++) {
        let s = dh[b * H + j] as number;
        for (let k = 0; k < O; k++) s += (w2[k * H + j] as number) * (o[b * O + k] as number);
        const f = 1 / (1 + Math.exp(-s));
        nh[b * H + j] = (h[b * H + j] as number) + 0.5 * (f - (h[b * H + j] as number));
      }
      for (let k = 0; k < O; k++) {
        let s = b2[k] as number;
        for (let j = 0; j < H; j++) s += (w2[k * H + j] as number) * (h[b * H + j] as number);
        const f = 1 / (1 + Math.exp(-s));
        no[b * O + k] = (o[b * O + k] as number) + 0.5 * (f - (o[b * O + k] as number));
      }
    }
    h.set(nh);
    o.set(no);
  }
}

function time(fn: () => void, minMs = 400): number {
  fn();
  let reps = 0;
  const t0 = performance.now();
  let t = t0;
  while (t - t0 < minMs) {
    fn();
    reps++;
    t = performance.now();
  }
  return (t - t0) / reps / 1000;
}

export async function run(): Promise<void> {
  console.log(`784-256-10, ${STEPS} steps of the free phase; figures are medians of 3 timing rounds`);
  console.log("| kernels | dtype | batch | ebbflow phases/s | ebbflow GFLOP/s | naive same algorithm (ratio) | naive recompute-drive (ratio) |");
  console.log("| --- | --- | --- | --- | --- | --- | --- |");
  const backends: KernelBackend[] = [typescriptBackend, ...(wasmSimdSupported() ? [loadWasmKernelsSync({ relaxed: false, arenaBytes: 32 * 2 ** 20 })] : [])];
  for (const backend of backends)
  for (const dtype of ["float32", "float64"] as const) {
    for (const batch of [1, 64]) {
      const net = network(dtype, backend);
      const settler = new Settler(net, batch);
      const x = net.allocate(batch * SIZES[0]);
      for (let i = 0; i < x.length; i++) x[i] = (i * 7919) % 13 === 0 ? 1 : 0;
      const inputs = { image: x };
      const snap = settler.settle({ phase: "free", inputs });
      const mk = (n: number) => (dtype === "float32" ? new Float32Array(n) : new Float64Array(n));
      const buf = { h: mk(batch * 256), o: mk(batch * 10), dh: mk(batch * 256), nh: mk(batch * 256), no: mk(batch * 10) };
      const w1 = net.connections[0]!.weights;
      const w2 = net.connections[1]!.weights;
      const b1 = net.layers[1]!.bias;
      const b2 = net.layers[2]!.bias;
      const med = (f: () => number) => [f(), f(), f()].sort((a, b) => a - b)[1] as number;
      const tE = med(() => time(() => consume(settler.settle({ phase: "free", inputs }, snap).activity[2]!)));
      const tN = med(() => time(() => (naiveSettle(w1, w2, b1, b2, x, batch, true, buf), consume(buf.o))));
      const tR = med(() => time(() => (naiveSettle(w1, w2, b1, b2, x, batch, false, buf), consume(buf.o))));
      const gflops = flops(batch, true) / tE / 1e9;
      console.log(`| ${backend.name} | ${dtype} | ${batch} | ${(1 / tE).toFixed(0)} (${(STEPS / tE).toFixed(0)} steps/s, ${((tE / batch) * 1e6).toFixed(1)} µs/example) | ${gflops.toFixed(2)} | ${(tN / tE).toFixed(2)}× | ${(tR / tE).toFixed(2)}× |`);
    }
  }
}
