/**
 * WebAssembly SIMD kernels behind the kernel backend interface.
 *
 * The kernels of the kernels module exist twice: as TypeScript loops
 * (`typescriptBackend`) and as AssemblyScript compiled to WebAssembly
 * with 128-bit SIMD (f32x4 / f64x2 lanes), in a plain build and a build with
 * relaxed-SIMD fused multiply-adds. {@link selectBackend} picks one; both
 * implement `KernelBackend`, so code written against the interface runs
 * on either.
 *
 * The WASM backends compute on arrays in their own WebAssembly memory: get
 * them from `backend.allocate(dtype, n)` (16-byte aligned views) and the
 * kernels run on them in place. Ordinary typed arrays also work, through a
 * copy (the slow path). See {@link WasmKernelBackend} for memory growth.
 * @module
 */
export type { WasmBackendOptions, WasmKernelBackend, WasmSharedMemory } from "./wasm-backend.js";
export {
  loadWasmKernels,
  loadWasmKernelsSync,
  selectBackend,
  selectBackendAsync,
  wasmRelaxedSimdSupported,
  wasmSimdSupported,
  type BackendChoice,
} from "./loader.js";
