// Entry of the WebAssembly kernels: every export takes byte offsets into the
// imported memory `env.memory` and element counts, and exists once per
// storage type (F32: f32x4 lanes, F64: f64x2 lanes). The JavaScript side
// (src/kernels/wasm/) owns the memory layout; this module has no data
// segment, no allocator and no imports besides the memory.

import { gemm, gemmWorkspaceBytes } from "./gemm";
import { gemv, ger } from "./level2";
import { unitFill32, unitFill64 } from "./units";
import { rateStep32, rateStep64 } from "./step";
import { addRowVector, allFinite, axpby, axpy, binary, dot, fill, maxAbs, maxAbsDiff, scale, sumRows } from "./vector";

export { gemmWorkspaceBytes };
export { constantTableAddress, constantTableBytes, writeConstantTable } from "./units";

/** 1 in the build with relaxed-SIMD multiply-adds, 0 in the plain SIMD build. */
export function relaxed(): i32 {
  return ASC_FEATURE_RELAXED_SIMD ? 1 : 0;
}

export function gemmF32(c: usize, a: usize, b: usize, m: i32, n: i32, k: i32, transA: bool, transB: bool, alpha: f64, beta: f64, work: usize): void {
  gemm<f32>(c, a, b, m, n, k, transA, transB, alpha, beta, work);
}
export function gemmF64(c: usize, a: usize, b: usize, m: i32, n: i32, k: i32, transA: bool, transB: bool, alpha: f64, beta: f64, work: usize): void {
  gemm<f64>(c, a, b, m, n, k, transA, transB, alpha, beta, work);
}

export function gemvF32(y: usize, a: usize, x: usize, rows: i32, cols: i32, trans: bool, alpha: f64, beta: f64): void {
  gemv<f32>(y, a, x, rows, cols, trans, alpha, beta);
}
export function gemvF64(y: usize, a: usize, x: usize, rows: i32, cols: i32, trans: bool, alpha: f64, beta: f64): void {
  gemv<f64>(y, a, x, rows, cols, trans, alpha, beta);
}

export function gerF32(out: usize, x: usize, y: usize, m: i32, n: i32, alpha: f64): void {
  ger<f32>(out, x, y, m, n, alpha);
}
export function gerF64(out: usize, x: usize, y: usize, m: i32, n: i32, alpha: f64): void {
  ger<f64>(out, x, y, m, n, alpha);
}

/** op: 0 add, 1 sub, 2 mul. */
export function binaryF32(op: i32, out: usize, a: usize, b: usize, n: i32): void {
  binary<f32>(op, out, a, b, n);
}
export function binaryF64(op: i32, out: usize, a: usize, b: usize, n: i32): void {
  binary<f64>(op, out, a, b, n);
}

export function axpyF32(out: usize, a: usize, alpha: f64, n: i32): void {
  axpy<f32>(out, a, alpha, n);
}
export function axpyF64(out: usize, a: usize, alpha: f64, n: i32): void {
  axpy<f64>(out, a, alpha, n);
}

export function axpbyF32(out: usize, a: usize, b: usize, alpha: f64, beta: f64, n: i32): void {
  axpby<f32>(out, a, b, alpha, beta, n);
}
export function axpbyF64(out: usize, a: usize, b: usize, alpha: f64, beta: f64, n: i32): void {
  axpby<f64>(out, a, b, alpha, beta, n);
}

export function scaleF32(out: usize, a: usize, alpha: f64, n: i32): void {
  scale<f32>(out, a, alpha, n);
}
export function scaleF64(out: usize, a: usize, alpha: f64, n: i32): void {
  scale<f64>(out, a, alpha, n);
}

export function fillF32(out: usize, value: f64, n: i32): void {
  fill<f32>(out, value, n);
}
export function fillF64(out: usize, value: f64, n: i32): void {
  fill<f64>(out, value, n);
}

/** memmove of n bytes (overlap allowed). */
export function copyBytes(out: usize, a: usize, bytes: i32): void {
  memory.copy(out, a, <usize>bytes);
}

export function maxAbsDiffF32(a: usize, b: usize, n: i32): f64 {
  return maxAbsDiff<f32>(a, b, n);
}
export function maxAbsDiffF64(a: usize, b: usize, n: i32): f64 {
  return maxAbsDiff<f64>(a, b, n);
}

export function maxAbsF32(a: usize, n: i32): f64 {
  return maxAbs<f32>(a, n);
}
export function maxAbsF64(a: usize, n: i32): f64 {
  return maxAbs<f64>(a, n);
}

export function allFiniteF32(a: usize, n: i32): i32 {
  return allFinite<f32>(a, n);
}
export function allFiniteF64(a: usize, n: i32): i32 {
  return allFinite<f64>(a, n);
}

export function dotF32(a: usize, b: usize, n: i32): f64 {
  return dot<f32>(a, b, n);
}
export function dotF64(a: usize, b: usize, n: i32): f64 {
  return dot<f64>(a, b, n);
}

export function addRowVectorF32(out: usize, bias: usize, rows: i32, cols: i32): void {
  addRowVector<f32>(out, bias, rows, cols);
}
export function addRowVectorF64(out: usize, bias: usize, rows: i32, cols: i32): void {
  addRowVector<f64>(out, bias, rows, cols);
}

export function sumRowsF32(out: usize, a: usize, rows: i32, cols: i32, alpha: f64, beta: f64): void {
  sumRows<f32>(out, a, rows, cols, alpha, beta);
}
export function sumRowsF64(out: usize, a: usize, rows: i32, cols: i32, alpha: f64, beta: f64): void {
  sumRows<f64>(out, a, rows, cols, alpha, beta);
}

/**
 * Unit (activation) function or slope, elementwise: code = kind * 2 + slope
 * with kind 0 logistic (gain, offset), 1 tanh, 2 relu, 3 hard sigmoid, 4 linear.
 */
export function unitFillF32(code: i32, gain: f64, offset: f64, out: usize, x: usize, n: i32): void {
  unitFill32(code, gain, offset, out, x, n);
}
export function unitFillF64(code: i32, gain: f64, offset: f64, out: usize, x: usize, n: i32): void {
  unitFill64(code, gain, offset, out, x, n);
}

/**
 * One fused rate-dynamics step of a layer (see step.ts): nx holds the net input on entry and the new
 * state on return; t = 0 for no nudging. Returns the largest |next - x|, -1 on a NaN or a value
 * beyond `bound`, -2 for a unit code it does not handle.
 */
export function rateStepF32(code: i32, gain: f64, offset: f64, x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return rateStep32(code, gain, offset, x, nx, t, beta, dt, bound, n);
}
export function rateStepF64(code: i32, gain: f64, offset: f64, x: usize, nx: usize, t: usize, beta: f64, dt: f64, bound: f64, n: i32): f64 {
  return rateStep64(code, gain, offset, x, nx, t, beta, dt, bound, n);
}
