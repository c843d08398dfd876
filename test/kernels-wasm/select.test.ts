import fc from "fast-check";
import { afterEach, describe, expect, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import * as ts from "../../src/kernels/index.js";
import {
  loadWasmKernels,
  loadWasmKernelsSync,
  selectBackend,
  selectBackendAsync,
  typescriptBackend,
  wasmRelaxedSimdSupported,
  wasmSimdSupported,
} from "../../src/kernels/public.js";
import { decodeBase64, moduleBytes } from "../../src/kernels/wasm/platform.js";
import { check } from "../helpers/property.js";
import { expectExact, randomArray } from "../kernels/reference.js";
import { relaxed, simd } from "./backends.js";

/** The engine's WebAssembly namespace (lib ES2022 declares none, hence the local type). */
const realWebAssembly = (globalThis as unknown as { WebAssembly: { validate(bytes: Uint8Array): boolean } }).WebAssembly;

/** Replaces the global WebAssembly object for one test (undefined: an engine without WebAssembly). */
function withWebAssembly(replacement: unknown): void {
  Object.defineProperty(globalThis, "WebAssembly", { value: replacement, configurable: true, writable: true });
}

afterEach(() => withWebAssembly(realWebAssembly));

describe("backend selection", () => {
  it("Node 20 runs the SIMD build; with relaxed SIMD enabled (V8 flag) it also runs the relaxed build, reported by name", () => {
    expect(wasmSimdSupported()).toBe(true);
    expect(simd.name).toBe("wasm-simd");
    expect(wasmRelaxedSimdSupported()).toBe(relaxed !== undefined);
    if (relaxed !== undefined) expect(relaxed.name).toBe("wasm-relaxed-simd");
  });

  it('"auto" picks the WASM kernels here, "wasm" requires them, "typescript" returns the TypeScript backend', async () => {
    expect(selectBackend("auto").name).toMatch(/^wasm-/);
    expect(selectBackend().name).toMatch(/^wasm-/);
    expect(selectBackend("wasm", { relaxed: false }).name).toBe("wasm-simd");
    expect(selectBackend("typescript")).toBe(typescriptBackend);
    expect((await selectBackendAsync("auto")).name).toMatch(/^wasm-/);
    expect(await selectBackendAsync("typescript")).toBe(typescriptBackend);
    expect((await loadWasmKernels({ relaxed: false })).name).toBe("wasm-simd");
  });

  it('falls back to TypeScript under "auto" when the engine has no WebAssembly, and "wasm" then throws unsupported', async () => {
    withWebAssembly(undefined);
    expect(wasmSimdSupported()).toBe(false);
    expect(selectBackend("auto")).toBe(typescriptBackend);
    expect(await selectBackendAsync("auto")).toBe(typescriptBackend);
    for (const f of [() => selectBackend("wasm"), () => loadWasmKernelsSync()]) {
      try {
        f();
        expect.fail("expected unsupported");
      } catch (e) {
        expect(e).toBeInstanceOf(EbbflowError);
        expect([(e as EbbflowError).code, (e as EbbflowError).path]).toEqual(["unsupported", "backend"]);
      }
    }
    await expect(selectBackendAsync("wasm")).rejects.toThrow(EbbflowError);
  });

  it('falls back to TypeScript under "auto" when the engine rejects the SIMD module (WebAssembly without SIMD)', () => {
    // an engine whose validator refuses the module, as one without the SIMD proposal does
    withWebAssembly({ ...Object.fromEntries(Object.entries(Object.getOwnPropertyDescriptors(realWebAssembly)).map(([k, d]) => [k, d.value])), validate: () => false });
    expect(wasmSimdSupported()).toBe(false);
    expect(selectBackend("auto")).toBe(typescriptBackend);
    expect(() => selectBackend("wasm")).toThrow(EbbflowError);
  });

  it('falls back to TypeScript under "auto" when synchronous compilation is refused (as on a browser main thread for modules over 4 KB)', () => {
    const refusing = Object.create(realWebAssembly) as Record<string, unknown>;
    refusing.validate = (b: Uint8Array) => realWebAssembly.validate(b);
    refusing.Module = function Module() {
      throw new RangeError("WebAssembly.Module is disallowed on the main thread, if the buffer size is larger than 4KB");
    };
    withWebAssembly(refusing);
    expect(selectBackend("auto")).toBe(typescriptBackend);
    try {
      loadWasmKernelsSync();
      expect.fail("expected unsupported");
    } catch (e) {
      expect([(e as EbbflowError).code, (e as EbbflowError).path]).toEqual(["unsupported", "backend"]);
    }
  });

  it("rejects an unknown choice with invalid_parameter (path backend), also under auto for bad options", () => {
    for (const f of [() => selectBackend("gpu" as never), () => selectBackend("auto", { arenaBytes: -1 })]) {
      try {
        f();
        expect.fail("expected invalid_parameter");
      } catch (e) {
        expect((e as EbbflowError).code).toBe("invalid_parameter");
      }
    }
    expect(() => selectBackend("gpu" as never)).toThrow(/backend/);
  });

  it("the TypeScript backend is the kernels module unchanged, and its allocate validates like the WASM one", () => {
    const be = typescriptBackend;
    expect(be.name).toBe("typescript");
    for (const name of ["gemm", "gemv", "ger", "add", "sub", "mul", "axpy", "axpby", "scale", "fill", "copy", "maxAbsDiff", "allFinite", "maxAbs", "dot", "sumSquares", "addRowVector", "sumRows"] as const) {
      expect(be[name], name).toBe(ts[name]);
    }
    const x = be.allocate("float32", 3);
    expect(x).toBeInstanceOf(Float32Array);
    expect(Array.from(x)).toEqual([0, 0, 0]);
    expect(() => be.allocate("float32", -2)).toThrow(EbbflowError);
    expect(() => be.allocate("int8" as never, 2)).toThrow(/dtype/);
  });

  it("the same code runs on every backend through the interface and agrees within rounding (here: a scaled layer product)", () => {
    const backends = [typescriptBackend, selectBackend("wasm", { relaxed: false })];
    check(
      fc.property(fc.integer({ min: 1, max: 12 }), fc.integer({ min: 1, max: 12 }), fc.integer({ min: 1, max: 12 }), fc.integer({ min: 0, max: 1000 }), (batch, n, m, seed) => {
        const results = backends.map((be) => {
          const x = be.allocate("float64", batch * m);
          const w = be.allocate("float64", n * m);
          const out = be.allocate("float64", batch * n);
          x.set(randomArray("float64", batch * m, seed, "x"));
          w.set(randomArray("float64", n * m, seed, "w"));
          be.gemm(out, x, w, batch, n, m, false, true, 1, 0);
          be.scale(out, out, 0.5);
          return Array.from(out);
        });
        results[1]!.forEach((v, q) => expect(Math.abs(v - results[0]![q]!)).toBeLessThanOrEqual((m + 4) * 2 ** -52 * m));
      }),
      30,
    );
  });
});

describe("embedded module bytes", () => {
  it("decodeBase64 equals Node's Buffer decoder on random bytes of every length remainder", () => {
    // independent reference: Node's base64 codec (RFC 4648)
    check(
      fc.property(fc.uint8Array({ minLength: 0, maxLength: 200 }), (bytes) => {
        const text = Buffer.from(bytes).toString("base64");
        expectExact(decodeBase64(text), bytes, "decoded");
      }),
      200,
    );
    expect(() => decodeBase64("ab$d")).toThrow(/base64/);
  });

  it("the embedded modules start with the WebAssembly magic number and version 1, and the SIMD one computes", () => {
    // binary format: "\0asm" then version 1 as a little-endian u32 (WebAssembly Core Specification 1.0, section 5.5.16; from memory)
    for (const build of ["simd", "relaxed"] as const) expectExact(moduleBytes(build).subarray(0, 8), [0, 0x61, 0x73, 0x6d, 1, 0, 0, 0], build);
    const backend = loadWasmKernelsSync({ relaxed: false });
    expect(backend.name).toBe("wasm-simd");
    const out = backend.allocate("float64", 2);
    backend.gemv(out, Float64Array.of(1, 2, 3, 4), Float64Array.of(1, 1), 2, 2, false, 1, 0);
    expectExact(out, [3, 7], "gemv through the embedded module");
  });
});
