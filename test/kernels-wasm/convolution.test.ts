/**
 * Convolution kernels (direct and im2col on every backend) against: the dense product of the matrix the
 * convolution stands for (naive xGEMM loops, within the inner-product bound of Higham 2002 §3.1); tfjs-core's
 * conv2d with explicit padding (an independent general-purpose library, float32, CPU backend, test-only
 * dependency) and its gradients for the transposed product and the kernel change; and a hand-worked example.
 */
import * as tf from "@tensorflow/tfjs-core";
import "@tensorflow/tfjs-backend-cpu";
import "@tensorflow/tfjs-core/dist/register_all_gradients.js";
import fc from "fast-check";
import { beforeAll, describe, expect, it } from "vitest";
import {
  convolutionChangeByRows,
  convolutionChangeDirect,
  convolutionGeometry,
  convolutionMatrix,
  convolveByRows,
  convolveDirect,
  convolveTransposedByRows,
  convolveTransposedDirect,
  fieldRowsLength,
  fieldSize,
  inputUnits,
  outputUnits,
  type ConvolutionGeometry,
} from "../../src/kernels/convolution.js";
import { typescriptBackend, type KernelBackend } from "../../src/kernels/index.js";
import { EbbflowError } from "../../src/errors/index.js";
import { check } from "../helpers/property.js";
import { EPS32 } from "../helpers/tolerance.js";
import { arb, epsOf, expectWithinBound, make, naiveGemm, randomArray } from "../kernels/reference.js";
import { wasmBackends } from "./backends.js";

const backends: readonly KernelBackend[] = [typescriptBackend, ...wasmBackends];

beforeAll(async () => {
  tf.env().set("IS_TEST", true);
  await tf.setBackend("cpu");
});

const geometry = fc
  .record({
    height: fc.integer({ min: 1, max: 7 }),
    width: fc.integer({ min: 1, max: 7 }),
    channels: fc.integer({ min: 1, max: 3 }),
    kernelHeight: fc.integer({ min: 1, max: 4 }),
    kernelWidth: fc.integer({ min: 1, max: 4 }),
    outChannels: fc.integer({ min: 1, max: 3 }),
    stride: fc.integer({ min: 1, max: 3 }),
    padding: fc.integer({ min: 0, max: 2 }),
  })
  .filter((g) => g.height + 2 * g.padding >= g.kernelHeight && g.width + 2 * g.padding >= g.kernelWidth)
  .map(convolutionGeometry);

/** The variants of each product on one backend. */
function forward(be: KernelBackend, out: Float32Array | Float64Array, k: Float32Array | Float64Array, x: Float32Array | Float64Array, g: ConvolutionGeometry, B: number, alpha: number, beta: number) {
  const direct = convolveDirect(out.slice(), k, x, g, B, alpha, beta);
  const rows = convolveByRows(be, out.slice(), k, x, g, B, alpha, beta, make(out instanceof Float32Array ? "float32" : "float64", fieldRowsLength(g, B)));
  return { direct, rows };
}

describe("convolution kernels", () => {
  it("forward: direct and im2col equal the dense product of the convolution's matrix", () => {
    check(
      fc.property(geometry, fc.integer({ min: 1, max: 4 }), arb.alpha, arb.beta, arb.dtype, arb.seed, (g, B, alpha, beta, dtype, seed) => {
        const k = randomArray(dtype, g.outChannels * fieldSize(g), seed, "k");
        const x = randomArray(dtype, B * inputUnits(g), seed, "x");
        const y0 = randomArray(dtype, B * outputUnits(g), seed, "y");
        const W = convolutionMatrix(make(dtype, outputUnits(g) * inputUnits(g)), k, g);
        const ref = naiveGemm(Array.from(y0), x, W, B, outputUnits(g), inputUnits(g), false, true, alpha, beta);
        for (const be of backends) {
          const { direct, rows } = forward(be, y0, k, x, g, B, alpha, beta);
          expectWithinBound(direct, ref, fieldSize(g) + 4, epsOf(direct), `direct ${JSON.stringify(g)}`);
          expectWithinBound(rows, ref, fieldSize(g) + 4, epsOf(rows), `${be.name} im2col ${JSON.stringify(g)}`);
        }
      }),
      120,
    );
  });

  it("transposed: direct and im2col equal Zᵀ through the convolution's matrix", () => {
    check(
      fc.property(geometry, fc.integer({ min: 1, max: 4 }), arb.alpha, arb.beta, arb.dtype, arb.seed, (g, B, alpha, beta, dtype, seed) => {
        const k = randomArray(dtype, g.outChannels * fieldSize(g), seed, "k");
        const z = randomArray(dtype, B * outputUnits(g), seed, "z");
        const y0 = randomArray(dtype, B * inputUnits(g), seed, "y");
        const W = convolutionMatrix(make(dtype, outputUnits(g) * inputUnits(g)), k, g);
        const ref = naiveGemm(Array.from(y0), z, W, B, inputUnits(g), outputUnits(g), false, false, alpha, beta);
        // each input unit lies in at most ceil(kh/s)·ceil(kw/s)·outChannels fields; the sums round in storage precision
        const terms = outputUnits(g) + 4;
        const direct = convolveTransposedDirect(y0.slice(), k, z, g, B, alpha, beta);
        expectWithinBound(direct, ref, terms, epsOf(direct), `direct ${JSON.stringify(g)}`);
        for (const be of backends) {
          const rows = convolveTransposedByRows(be, y0.slice(), k, z, g, B, alpha, beta, make(dtype, fieldRowsLength(g, B)));
          expectWithinBound(rows, ref, terms, epsOf(rows), `${be.name} im2col ${JSON.stringify(g)}`);
        }
      }),
      120,
    );
  });

  it("kernel change: each shared weight receives the sum of its positions' dense changes", () => {
    check(
      fc.property(geometry, fc.integer({ min: 1, max: 4 }), arb.alpha, arb.beta, arb.dtype, arb.seed, (g, B, alpha, beta, dtype, seed) => {
        const k0 = randomArray(dtype, g.outChannels * fieldSize(g), seed, "k");
        const post = randomArray(dtype, B * outputUnits(g), seed, "post");
        const x = randomArray(dtype, B * inputUnits(g), seed, "x");
        // dense change Δ = postᵀ x (outputUnits × inputUnits), then summed over the positions of each shared weight
        const nIn = inputUnits(g);
        const dense = naiveGemm(new Float64Array(outputUnits(g) * nIn), post, x, outputUnits(g), nIn, B, true, false, 1, 0);
        const F = fieldSize(g);
        const value = new Float64Array(g.outChannels * F);
        const magnitude = new Float64Array(g.outChannels * F);
        // which dense entries share kernel entry q: read off the convolution's matrix of the unit kernel e_q
        const unit = new Float64Array(g.outChannels * F);
        const Wq = new Float64Array(outputUnits(g) * nIn);
        for (let q = 0; q < value.length; q++) {
          unit.fill(0);
          unit[q] = 1;
          convolutionMatrix(Wq, unit, g);
          let s = 0;
          let m = 0;
          for (let e = 0; e < Wq.length; e++) if (Wq[e] === 1) (s += dense.value[e]!), (m += dense.magnitude[e]!);
          const old = beta === 0 ? 0 : beta * k0[q]!;
          value[q] = alpha * s + old;
          magnitude[q] = Math.abs(alpha) * m + Math.abs(old);
        }
        const terms = B * g.outHeight * g.outWidth + 4;
        const direct = convolutionChangeDirect(k0.slice(), post, x, g, B, alpha, beta);
        expectWithinBound(direct, { value, magnitude }, terms, epsOf(direct), `direct ${JSON.stringify(g)}`);
        for (const be of backends) {
          const rows = convolutionChangeByRows(be, k0.slice(), post, x, g, B, alpha, beta, make(dtype, fieldRowsLength(g, B)));
          expectWithinBound(rows, { value, magnitude }, terms, epsOf(rows), `${be.name} im2col ${JSON.stringify(g)}`);
        }
      }),
      100,
    );
  });

  it("agrees with tfjs-core conv2d, its input gradient and its filter gradient", () => {
    check(
      fc.property(geometry, fc.integer({ min: 1, max: 3 }), arb.seed, (g, B, seed) => {
        const k = randomArray("float32", g.outChannels * fieldSize(g), seed, "k") as Float32Array;
        const x = randomArray("float32", B * inputUnits(g), seed, "x") as Float32Array;
        const z = randomArray("float32", B * outputUnits(g), seed, "z") as Float32Array;
        // ebbflow's kernel is [co][ky][kx][ci]; tfjs wants [ky][kx][ci][co]
        const kt = new Float32Array(k.length);
        const F = fieldSize(g);
        for (let co = 0; co < g.outChannels; co++) for (let f = 0; f < F; f++) kt[f * g.outChannels + co] = k[co * F + f]!;
        const pad: [[number, number], [number, number], [number, number], [number, number]] = [[0, 0], [g.padding, g.padding], [g.padding, g.padding], [0, 0]];
        const xs = tf.tensor4d(x, [B, g.height, g.width, g.channels]);
        const ks = tf.tensor4d(kt, [g.kernelHeight, g.kernelWidth, g.channels, g.outChannels]);
        const zs = tf.tensor4d(z, [B, g.outHeight, g.outWidth, g.outChannels]);
        const y = tf.conv2d(xs, ks, g.stride, pad).dataSync();
        // d/dx Σ z·conv(x) = convᵀ(z); d/dk Σ z·conv(x) = Σ over positions z ⊗ field(x)
        const gradX = tf.grad((t: tf.Tensor) => tf.sum(tf.mul(tf.conv2d(t as tf.Tensor4D, ks, g.stride, pad), zs)))(xs).dataSync();
        const gradK = tf.grad((t: tf.Tensor) => tf.sum(tf.mul(tf.conv2d(xs, t as tf.Tensor4D, g.stride, pad), zs)))(ks).dataSync();
        tf.dispose([xs, ks, zs]);
        const tol = 8 * (F * B * g.outHeight * g.outWidth + 4) * EPS32;
        const near = (a: number, b: number) => Math.abs(a - b) <= tol * Math.max(1, Math.abs(b));
        const ours = convolveDirect(new Float32Array(B * outputUnits(g)), k, x, g, B, 1, 0);
        ours.forEach((v, q) => expect(near(v, y[q]!), `forward[${q}] ${v} vs ${y[q]}`).toBe(true));
        const back = convolveTransposedDirect(new Float32Array(B * inputUnits(g)), k, z, g, B, 1, 0);
        back.forEach((v, q) => expect(near(v, gradX[q]!), `transposed[${q}] ${v} vs ${gradX[q]}`).toBe(true));
        const change = convolutionChangeDirect(new Float32Array(k.length), z, x, g, B, 1, 0);
        for (let co = 0; co < g.outChannels; co++) for (let f = 0; f < F; f++) expect(near(change[co * F + f]!, gradK[f * g.outChannels + co]!), `change[${co},${f}]`).toBe(true);
      }),
      40,
    );
  });

  it("gives the hand-worked convolution of 1..9 (3×3) with the 2×2 diagonal kernel", () => {
    // [1 2 3; 4 5 6; 7 8 9] * [1 0; 0 1], valid, stride 1: [1+5, 2+6; 4+8, 5+9] = [6, 8; 12, 14]
    const g = convolutionGeometry({ height: 3, width: 3, channels: 1, kernelHeight: 2, kernelWidth: 2, outChannels: 1, stride: 1, padding: 0 });
    const x = Float64Array.of(1, 2, 3, 4, 5, 6, 7, 8, 9);
    const k = Float64Array.of(1, 0, 0, 1);
    expect(Array.from(convolveDirect(new Float64Array(4), k, x, g, 1, 1, 0))).toEqual([6, 8, 12, 14]);
    for (const be of backends) expect(Array.from(convolveByRows(be, new Float64Array(4), k, x, g, 1, 1, 0, new Float64Array(fieldRowsLength(g, 1))))).toEqual([6, 8, 12, 14]);
  });

  it("refuses a kernel larger than the padded input with a typed error", () => {
    expect(() => convolutionGeometry({ height: 2, width: 2, channels: 1, kernelHeight: 3, kernelWidth: 3, outChannels: 1, stride: 1, padding: 0 })).toThrow(EbbflowError);
  });
});
