/**
 * The few WebAssembly JavaScript-API members the WASM kernels use, typed
 * locally: the project compiles against lib ES2022 without the DOM, which
 * declares no `WebAssembly` namespace. The global is looked up at call time,
 * so importing this module never fails where WebAssembly is absent.
 * @module
 */
import { SIMD_WASM_BASE64, RELAXED_WASM_BASE64 } from "./generated/bytes.js";

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

/** The module bytes of a build (decoded once). */
export function moduleBytes(build: WasmBuild): Uint8Array {
  let b = bytesCache[build];
  if (b === undefined) {
    b = decodeBase64(build === "simd" ? SIMD_WASM_BASE64 : RELAXED_WASM_BASE64);
    bytesCache[build] = b;
  }
  return b;
}

/** Whether this engine validates the module of a build (checked once per build and engine). */
export function buildValidates(build: WasmBuild): boolean {
  const wa = wasmGlobal();
  if (wa === undefined) return false;
  const cache = engineCache(wa).valid;
  let v = cache[build];
  if (v === undefined) {
    try {
      v = wa.validate(moduleBytes(build));
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

/** Compiles a build asynchronously (cached). */
export async function compileAsync(build: WasmBuild): Promise<WasmModule> {
  const wa = wasmGlobal()!;
  const cache = engineCache(wa).modules;
  let m = cache[build];
  if (m === undefined) {
    m = await wa.compile(moduleBytes(build));
    cache[build] = m;
  }
  return m;
}

/** Instantiates a compiled build on a memory. */
export function instantiate(module: WasmModule, memory: WasmMemory): Record<string, unknown> {
  const wa = wasmGlobal()!;
  return new wa.Instance(module, { env: { memory } }).exports;
}

/** Creates a memory of `pages` pages (optionally bounded). */
export function createMemory(pages: number, maximumPages: number | undefined): WasmMemory {
  const wa = wasmGlobal()!;
  // shared memory: growth keeps earlier views valid (the kernels' module declares its memory shared)
  return new wa.Memory({ initial: pages, maximum: maximumPages ?? MAX_PAGES, shared: true });
}
