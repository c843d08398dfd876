/**
 * The backends under test. In Node 20 relaxed SIMD sits behind a V8 flag;
 * setting it here (before any module is validated) lets one test process run
 * both builds of the kernels. Later Node versions enable relaxed SIMD by
 * default, and there the flag is not touched.
 */
import { setFlagsFromString } from "node:v8";
import { loadWasmKernelsSync, wasmRelaxedSimdSupported, type WasmKernelBackend } from "../../src/kernels/wasm/index.js";
import { dtypeOf, type FloatArray } from "../../src/types/index.js";

if (Number(process.versions.node.split(".")[0]) === 20) setFlagsFromString("--experimental-wasm-relaxed-simd");

/** The plain 128-bit SIMD build. */
export const simd: WasmKernelBackend = loadWasmKernelsSync({ relaxed: false });

/** The relaxed-SIMD build, when this engine validates it. */
export const relaxed: WasmKernelBackend | undefined = wasmRelaxedSimdSupported() ? loadWasmKernelsSync({ relaxed: true }) : undefined;

/** Every WASM backend this engine runs. */
export const wasmBackends: readonly WasmKernelBackend[] = relaxed === undefined ? [simd] : [simd, relaxed];

/**
 * Copies of the arrays in the arena of `be` (views into its WebAssembly
 * memory). Room for all of them is reserved first, so no allocation among
 * them grows the memory and detaches the views made before it (the usage
 * the backend documents: reserve, then allocate).
 */
export function inArena<T extends FloatArray[]>(be: WasmKernelBackend, ...xs: T): T {
  be.reserve(xs.reduce((s, x) => s + x.byteLength + 16, 0));
  const before = be.generation;
  const views = xs.map((x) => {
    const v = be.allocate(dtypeOf(x), x.length);
    v.set(x);
    return v;
  });
  if (be.generation !== before) throw new Error("inArena: the memory grew after reserve()");
  return views as T;
}
