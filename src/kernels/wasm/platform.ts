/**
 * The few WebAssembly JavaScript-API members the WASM kernels use, typed
 * locally: the project compiles against lib ES2022 without the DOM, which
 * declares no `WebAssembly` namespace. The global is looked up at call time,
 * so importing this module never fails where WebAssembly is absent.
 *
 * Which build an engine runs is decided by two probe modules of a few dozen
 * bytes (below), not by the builds' own bytes, so the decision needs neither
 * build. The builds live in two generated modules: the asynchronous loaders
 * import the chosen one with a dynamic `import()` (a bundler makes each a
 * chunk of its own, and a page fetches only the build it runs); the
 * synchronous loaders use the builds `#kernel-builds` gives — both in Node
 * (`static-builds.ts`), none in a browser bundle (`no-static-builds.ts`, by
 * the "browser" condition of package.json "imports") — and any build an
 * asynchronous load has brought in.
 * @module
 */
import { fail } from "../../errors/index.js";
// both builds in Node and workers; none in browser bundles (package.json "imports", "browser" condition)
import { STATIC_BUILDS } from "#kernel-builds";

/** A WebAssembly.Memory as far as the arena uses it. */
export interface WasmMemory {
  readonly buffer: ArrayBuffer;
  grow(deltaPages: number): number;
}

/** Opaque compiled module. */
export type WasmModule = object;

interface WasmInstance {
  readonly exports: Record<string, unknown>;
}

interface WasmNamespace {
  validate(bytes: Uint8Array): boolean;
  compile(bytes: Uint8Array): Promise<WasmModule>;
  Module: new (bytes: Uint8Array) => WasmModule;
  Instance: new (module: WasmModule, imports: Record<string, Record<string, unknown>>) => WasmInstance;
  Memory: new (descriptor: { initial: number; maximum?: number; shared?: boolean }) => WasmMemory;
}

/** Bytes of one WebAssembly page. */
export const PAGE_BYTES = 65536;

/** Largest memory of a 32-bit WebAssembly module, in pages (4 GiB). */
export const MAX_PAGES = 65536;

/** The global WebAssembly object, or undefined where the engine has none. */
export function wasmGlobal(): WasmNamespace | undefined {
  const g = (globalThis as { WebAssembly?: WasmNamespace }).WebAssembly;
  return g !== undefined && typeof g.validate === "function" ? g : undefined;
}

/** Decodes standard base64 (RFC 4648 section 4) without `atob` or Node's Buffer. */
export function decodeBase64(text: string): Uint8Array {
  const table = new Int16Array(128).fill(-1);
  const alphabet = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  for (let i = 0; i < 64; i++) table[alphabet.charCodeAt(i)] = i;
  let end = text.length;
  while (end > 0 && text.charCodeAt(end - 1) === 61 /* = */) end--;
  const out = new Uint8Array(Math.floor((end * 3) / 4));
  let acc = 0;
  let bits = 0;
  let o = 0;
  for (let i = 0; i < end; i++) {
    const code = text.charCodeAt(i);
    const v = code < 128 ? table[code]! : -1;
    if (v < 0) throw new Error(`invalid base64 character at ${i}`);
    acc = (acc << 6) | v;
    bits += 6;
    if (bits >= 8) {
      bits -= 8;
      out[o++] = (acc >> bits) & 0xff;
    }
  }
  return out;
}

/** Which build of the kernels: plain 128-bit SIMD, or SIMD with relaxed-SIMD multiply-adds. */
export type WasmBuild = "simd" | "relaxed";

/**
 * Probe modules (WebAssembly binary format, Core Specification section 5): the features each build needs.
 * `simd`: imports a shared memory (`(import "env" "memory" (memory 1 1 shared))`, threads) and returns
 * `i32x4.splat (i32.const 0)` (128-bit SIMD, opcode 0xFD 17). `relaxed`: returns
 * `f32x4.relaxed_madd` of its three v128 parameters (relaxed SIMD, opcode 0xFD 0x105).
 */
const PROBES: Record<WasmBuild, readonly number[]> = {
  simd: [0x00, 0x61, 0x73, 0x6d, 1, 0, 0, 0, 1, 5, 1, 0x60, 0, 1, 0x7b, 2, 16, 1, 3, 0x65, 0x6e, 0x76, 6, 0x6d, 0x65, 0x6d, 0x6f, 0x72, 0x79, 2, 3, 1, 1, 3, 2, 1, 0, 10, 8, 1, 6, 0, 0x41, 0, 0xfd, 0x11, 0x0b],
  relaxed: [0x00, 0x61, 0x73, 0x6d, 1, 0, 0, 0, 1, 8, 1, 0x60, 3, 0x7b, 0x7b, 0x7b, 1, 0x7b, 3, 2, 1, 0, 10, 13, 1, 11, 0, 0x20, 0, 0x20, 1, 0x20, 2, 0xfd, 0x85, 2, 0x0b],
};

const bytesCache: Partial<Record<WasmBuild, Uint8Array>> = {};

/** Validation results and compiled modules, per WebAssembly namespace (so a replaced global is asked afresh). */
interface EngineCache {
  valid: Partial<Record<WasmBuild, boolean>>;
  modules: Partial<Record<WasmBuild, WasmModule>>;
}
const engines = new WeakMap<object, EngineCache>();

function engineCache(wa: WasmNamespace): EngineCache {
  let c = engines.get(wa);
  if (c === undefined) {
    c = { valid: {}, modules: {} };
    engines.set(wa, c);
  }
  return c;
}

/**
 * The module bytes of a build (decoded once), without waiting: from the builds `#kernel-builds` gives, or
 * one an asynchronous load has brought in.
 * @throws {@link EbbflowError} `unsupported` (path `backend`) in a browser bundle before any asynchronous load of the build.
 */
export function moduleBytes(build: WasmBuild): Uint8Array {
  let b = bytesCache[build];
  if (b === undefined) {
    const text = STATIC_BUILDS[build];
    if (text === undefined) {
      return fail("unsupported", "backend", `the ${build} build of the kernels loaded (in a browser bundle, load it once with await loadWasmKernels() or selectBackendAsync() before the synchronous loaders)`, "not loaded yet");
    }
    b = bytesCache[build] = decodeBase64(text);
  }
  return b;
}

/** The module bytes of a build, imported on demand (a separate chunk in a bundle; decoded once). */
export async function loadModuleBytes(build: WasmBuild): Promise<Uint8Array> {
  let b = bytesCache[build];
  if (b === undefined) {
    const text = build === "simd" ? (await import("./generated/simd.js")).SIMD_WASM_BASE64 : (await import("./generated/relaxed.js")).RELAXED_WASM_BASE64;
    b = bytesCache[build] ??= decodeBase64(text);
  }
  return b;
}

/**
 * Whether this engine has the features of a build (checked once per build and engine, with the
 * build's probe module; the relaxed build also needs what the SIMD build needs).
 */
export function buildValidates(build: WasmBuild): boolean {
  const wa = wasmGlobal();
  if (wa === undefined) return false;
  const cache = engineCache(wa).valid;
  let v = cache[build];
  if (v === undefined) {
    try {
      v = wa.validate(Uint8Array.from(PROBES[build])) && (build === "simd" || buildValidates("simd"));
    } catch {
      v = false;
    }
    cache[build] = v;
  }
  return v;
}

/** Compiles a build synchronously (cached). Chrome refuses this on its main thread for modules over 4 KB. */
export function compileSync(build: WasmBuild): WasmModule {
  const wa = wasmGlobal()!;
  const cache = engineCache(wa).modules;
  let m = cache[build];
  if (m === undefined) {
    m = new wa.Module(moduleBytes(build));
    cache[build] = m;
  }
  return m;
}

/** Compiles a build asynchronously (cached), importing its bytes on demand. */
export async function compileAsync(build: WasmBuild): Promise<WasmModule> {
  const wa = wasmGlobal()!;
  const cache = engineCache(wa).modules;
  let m = cache[build];
  if (m === undefined) {
    m = await wa.compile(await loadModuleBytes(build));
    cache[build] = m;
  }
  return m;
}

/** Instantiates a compiled build on a memory. */
export function instantiate(module: WasmModule, memory: WasmMemory): Record<string, unknown> {
  const wa = wasmGlobal()!;
  return new wa.Instance(module, { env: { memory } }).exports;
}

/**
 * Creates a shared memory of `pages` pages (optionally bounded).
 * @throws {@link EbbflowError} `unsupported` (path `memory`) when the engine refuses shared memory (some
 *   engines do on pages that are not cross-origin isolated) or the size.
 */
export function createMemory(pages: number, maximumPages: number | undefined): WasmMemory {
  const wa = wasmGlobal()!;
  // shared memory: growth keeps earlier views valid (the kernels' module declares its memory shared)
  try {
    return new wa.Memory({ initial: pages, maximum: maximumPages ?? MAX_PAGES, shared: true });
  } catch (e) {
    return fail("unsupported", "memory", "shared WebAssembly memory (in browsers, some engines grant it only to cross-origin isolated pages: serve with COOP/COEP headers)", String(e));
  }
}

/**
 * Whether a buffer is a SharedArrayBuffer, judged by its built-in tag: on a page that is not cross-origin
 * isolated the `SharedArrayBuffer` global is hidden although a shared WebAssembly memory's buffer is one.
 */
export function isSharedBuffer(buffer: unknown): boolean {
  return Object.prototype.toString.call(buffer) === "[object SharedArrayBuffer]";
}
