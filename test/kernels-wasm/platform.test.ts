/**
 * What browsers do to the WebAssembly kernels, reproduced in Node: a page without cross-origin isolation hides
 * the SharedArrayBuffer global (though a shared memory's buffer still is one), an engine may refuse shared memory,
 * and each build is loaded on its own (probe modules decide which, the bytes are imported on demand).
 */
import { afterEach, describe, expect, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import { typescriptBackend } from "../../src/kernels/typescript-backend.js";
import { loadWasmKernels, loadWasmKernelsSync, selectBackend, selectBackendAsync, wasmRelaxedSimdSupported, wasmSimdSupported } from "../../src/kernels/wasm/index.js";
import { isSharedBuffer, loadModuleBytes, moduleBytes } from "../../src/kernels/wasm/platform.js";

type WasmGlobal = { validate(b: Uint8Array): boolean; Memory: new (d: { initial: number; maximum?: number; shared?: boolean }) => { buffer: ArrayBuffer } };
const realWebAssembly = (globalThis as unknown as { WebAssembly: WasmGlobal }).WebAssembly;
const realShared = (globalThis as { SharedArrayBuffer?: unknown }).SharedArrayBuffer;

function setGlobal(name: string, value: unknown): void {
  Object.defineProperty(globalThis, name, { value, configurable: true, writable: true });
}

afterEach(() => {
  setGlobal("WebAssembly", realWebAssembly);
  setGlobal("SharedArrayBuffer", realShared);
});

describe("the kernels' WebAssembly platform", () => {
  it("the probe modules agree with the builds themselves: each build is supported exactly when the engine validates its bytes", async () => {
    expect(wasmSimdSupported()).toBe(realWebAssembly.validate(moduleBytes("simd")));
    expect(wasmRelaxedSimdSupported()).toBe(realWebAssembly.validate(moduleBytes("relaxed")));
    // Node 20 validates relaxed SIMD only with --experimental-wasm-relaxed-simd; V8 12 (Node 22 and later) by default
    const major = Number(process.versions.node.split(".")[0]);
    if (major >= 22) {
      expect(wasmRelaxedSimdSupported()).toBe(true);
      expect([selectBackend("auto").name, (await selectBackendAsync("auto")).name]).toEqual(["wasm-relaxed-simd", "wasm-relaxed-simd"]);
    }
    for (const build of ["simd", "relaxed"] as const) expect(await loadModuleBytes(build)).toEqual(moduleBytes(build));
  });

  it("without the SharedArrayBuffer global (a page without cross-origin isolation) arrays allocated before a growth stay on the fast path", async () => {
    setGlobal("SharedArrayBuffer", undefined);
    for (const be of [loadWasmKernelsSync({ arenaBytes: 64 * 1024, scratchBytes: 0 }), await loadWasmKernels({ arenaBytes: 64 * 1024, scratchBytes: 0 })]) {
      const before = be.allocate("float64", 16);
      before.fill(2);
      expect(isSharedBuffer(before.buffer)).toBe(true); // the tag, not the hidden global
      const generation = be.generation;
      be.allocate("float64", 64 * 1024); // 512 KiB: past the arena, so the memory grows
      expect(be.generation).toBeGreaterThan(generation);
      expect(be.isArenaView(before)).toBe(true); // still computed on in place
      const out = be.allocate("float64", 16);
      be.axpy(out, before, 0.5);
      expect(Array.from(out)).toEqual(new Array(16).fill(1));
    }
  });

  it('a refused shared memory is the documented unsupported error for "wasm", and "auto" falls back to TypeScript', async () => {
    const refusing = Object.create(realWebAssembly) as Record<string, unknown>;
    refusing.validate = (b: Uint8Array) => realWebAssembly.validate(b);
    refusing.Memory = function Memory(d: { initial: number; maximum?: number; shared?: boolean }) {
      if (d.shared === true) throw new TypeError("WebAssembly.Memory(): shared memory is not allowed here");
      return new realWebAssembly.Memory(d);
    };
    setGlobal("WebAssembly", refusing);
    const err = await selectBackendAsync("wasm").then(() => undefined, (e: unknown) => e);
    expect(err).toBeInstanceOf(EbbflowError);
    expect([(err as EbbflowError).code, (err as EbbflowError).path]).toEqual(["unsupported", "memory"]);
    expect((err as EbbflowError).received).toContain("TypeError");
    expect(() => loadWasmKernelsSync()).toThrow(expect.objectContaining({ code: "unsupported", path: "memory" }) as unknown as Error);
    expect(await selectBackendAsync("auto")).toBe(typescriptBackend);
  });
});
