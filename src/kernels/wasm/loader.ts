/**
 * Loading the WebAssembly kernels and choosing a backend.
 *
 * The module bytes are embedded in the package (base64 in a generated
 * module), so loading needs neither the file system nor the network and works
 * the same in Node, in browsers and in workers.
 *
 * Synchronous versus asynchronous compilation: Chrome refuses synchronous
 * compilation (`new WebAssembly.Module`) of modules larger than 4 KB on the
 * browser's main thread; the kernels are about 15 KB. In a browser page use
 * {@link loadWasmKernels} or {@link selectBackendAsync}; the synchronous
 * variants are for Node and for workers (where the limit does not apply).
 * @module
 */
import { EbbflowError, fail } from "../../errors/index.js";
import type { KernelBackend } from "../backend.js";
import { typescriptBackend } from "../typescript-backend.js";
import { buildValidates, compileAsync, compileSync, wasmGlobal, type WasmBuild } from "./platform.js";
import { createWasmBackend, type WasmBackendOptions, type WasmKernelBackend } from "./wasm-backend.js";

/**
 * Whether this engine runs the 128-bit SIMD build of the kernels (checked by
 * validating the actual module bytes, once).
 * @returns `true` when `WebAssembly` exists and validates the SIMD module.
 * @category Kernels
 */
export function wasmSimdSupported(): boolean {
  return buildValidates("simd");
}

/**
 * Whether this engine runs the relaxed-SIMD build (fused multiply-adds).
 * Node 20 needs the flag `--experimental-wasm-relaxed-simd`; Node 22 and
 * current Chrome and Firefox enable relaxed SIMD by default.
 * @returns `true` when the relaxed-SIMD module validates.
 * @category Kernels
 */
export function wasmRelaxedSimdSupported(): boolean {
  return buildValidates("relaxed");
}

function checkOptions(options: WasmBackendOptions): void {
  const r = options.relaxed;
  if (r !== undefined && r !== "auto" && r !== true && r !== false) fail("invalid_parameter", "relaxed", 'true, false or "auto"', r);
}

function chooseBuild(options: WasmBackendOptions): WasmBuild {
  if (!wasmSimdSupported()) {
    fail("unsupported", "backend", "an engine with WebAssembly 128-bit SIMD", wasmGlobal() === undefined ? "no WebAssembly" : "WebAssembly without SIMD");
  }
  const relaxed = options.relaxed ?? "auto";
  if (relaxed !== false && wasmRelaxedSimdSupported()) return "relaxed";
  if (relaxed === true) fail("unsupported", "relaxed", "an engine with WebAssembly relaxed SIMD", "relaxed SIMD not validated");
  return "simd";
}

/**
 * Compiles (once per process) and instantiates the WebAssembly kernels on a
 * new memory, asynchronously: the way to load them on a browser's main
 * thread. Each call returns an independent backend with its own memory, or,
 * with the option `attach`, a backend on the memory another backend shared
 * (see `WasmKernelBackend.share`).
 * @param options - arena and scratch sizes, relaxed-SIMD choice.
 * @returns the backend (`wasm-relaxed-simd` when available and allowed, else `wasm-simd`).
 * @throws {@link EbbflowError} `unsupported` without WebAssembly SIMD (or
 * without relaxed SIMD when `relaxed: true`); `invalid_parameter` for a bad
 * option (path = the option name; `attach` for a handle that is not one
 * `share()` returned).
 * @category Kernels
 * @example
 * ```ts
 * const be = await loadWasmKernels();
 * const x = be.allocate("float32", 4); // a view into WebAssembly memory
 * be.fill(x, 0.5).length; // 4
 * ```
 */
export async function loadWasmKernels(options: WasmBackendOptions = {}): Promise<WasmKernelBackend> {
  checkOptions(options);
  const build = chooseBuild(options);
  return createWasmBackend(await compileAsync(build), build, options);
}

/**
 * Synchronous {@link loadWasmKernels}, for Node and workers. On a browser's
 * main thread Chrome refuses to compile modules over 4 KB synchronously and
 * this throws (`unsupported`); use the asynchronous loader there.
 * @param options - arena and scratch sizes, relaxed-SIMD choice.
 * @returns the backend.
 * @throws {@link EbbflowError} as {@link loadWasmKernels}, and `unsupported`
 * when the engine refuses synchronous compilation.
 * @category Kernels
 */
export function loadWasmKernelsSync(options: WasmBackendOptions = {}): WasmKernelBackend {
  checkOptions(options);
  const build = chooseBuild(options);
  let module;
  try {
    module = compileSync(build);
  } catch (e) {
    fail("unsupported", "backend", "synchronous WebAssembly compilation (use loadWasmKernels() on a browser main thread)", String(e));
  }
  return createWasmBackend(module, build, options);
}

/**
 * Which kernels to use: `"auto"` picks the WebAssembly SIMD kernels when the
 * engine supports them and falls back to TypeScript otherwise; `"wasm"`
 * requires them; `"typescript"` always uses the TypeScript loops.
 * @category Kernels
 */
export type BackendChoice = "auto" | "typescript" | "wasm";

function checkChoice(option: unknown): asserts option is BackendChoice {
  if (option !== "auto" && option !== "typescript" && option !== "wasm") fail("invalid_parameter", "backend", '"auto", "typescript" or "wasm"', option);
}

/** An error that means "WebAssembly cannot run here", as opposed to a caller's mistake. */
function unavailable(e: unknown): boolean {
  return !(e instanceof EbbflowError) || e.code === "unsupported";
}

/**
 * Chooses a kernel backend synchronously (Node, workers). With `"auto"` a
 * failure to load the WebAssembly kernels (no SIMD, synchronous compilation
 * refused, memory refused) falls back to {@link typescriptBackend}.
 * @param option - `"auto"` (default), `"typescript"` or `"wasm"`.
 * @param options - options of the WASM backend (ignored for `"typescript"`).
 * @returns the backend.
 * @throws {@link EbbflowError} `invalid_parameter` (path `backend`) for an
 * unknown choice or a bad option; `unsupported` for `"wasm"` where the WASM
 * kernels cannot load.
 * @category Kernels
 * @example
 * ```ts
 * selectBackend("typescript").name; // "typescript"
 * selectBackend("auto").name; // "wasm-simd" in Node 20 ("wasm-relaxed-simd" with relaxed SIMD enabled)
 * ```
 */
export function selectBackend(option: BackendChoice = "auto", options: WasmBackendOptions = {}): KernelBackend {
  checkChoice(option);
  if (option === "typescript") return typescriptBackend;
  checkOptions(options);
  if (option === "wasm") return loadWasmKernelsSync(options);
  try {
    return loadWasmKernelsSync(options);
  } catch (e) {
    if (unavailable(e)) return typescriptBackend;
    throw e;
  }
}

/**
 * Asynchronous {@link selectBackend}: the one to use on a browser's main thread.
 * @param option - `"auto"` (default), `"typescript"` or `"wasm"`.
 * @param options - options of the WASM backend (ignored for `"typescript"`).
 * @returns the backend.
 * @throws {@link EbbflowError} as {@link selectBackend}.
 * @category Kernels
 */
export async function selectBackendAsync(option: BackendChoice = "auto", options: WasmBackendOptions = {}): Promise<KernelBackend> {
  checkChoice(option);
  if (option === "typescript") return typescriptBackend;
  checkOptions(options);
  if (option === "wasm") return loadWasmKernels(options);
  try {
    return await loadWasmKernels(options);
  } catch (e) {
    if (unavailable(e)) return typescriptBackend;
    throw e;
  }
}
