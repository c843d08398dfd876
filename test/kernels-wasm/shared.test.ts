import fc from "fast-check";
import { Worker } from "node:worker_threads";
import { describe, expect, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import * as ts from "../../src/kernels/index.js";
import { loadWasmKernelsSync, type WasmKernelBackend } from "../../src/kernels/wasm/index.js";
import { check } from "../helpers/property.js";
import { expectExact, expectWithinBound, naiveGemm, randomArray } from "../kernels/reference.js";
import { thrown } from "../helpers/errors.js";


/** Byte ranges [start, end) of views, sorted by start. */
function ranges(views: readonly { byteOffset: number; byteLength: number }[]): [number, number][] {
  return views.map((v) => [v.byteOffset, v.byteOffset + v.byteLength] as [number, number]).sort((a, b) => a[0] - b[0]);
}

function expectDisjoint(rs: readonly [number, number][]): void {
  for (let i = 1; i < rs.length; i++) expect(rs[i]![0], `range ${i} starts before range ${i - 1} ends`).toBeGreaterThanOrEqual(rs[i - 1]![1]);
}

const KIB = 1024;
const MIB = 1 << 20;

/** The built loader (worker threads load the compiled JavaScript). */
const builtLoader = new URL("../../dist/kernels/wasm/loader.js", import.meta.url).href;

/** Runs `body` (the text of an async function of `loader` and `data`) in a worker thread; resolves with what it returns. */
function inWorker<T>(body: string, data: unknown): Promise<T> {
  const code = `
    const { parentPort, workerData } = require("node:worker_threads");
    import(workerData.loader).then(async (loader) => {
      const run = async (loader, data) => { ${body} };
      parentPort.postMessage(await run(loader, workerData.data));
    }).catch((e) => parentPort.postMessage({ error: String(e && e.stack || e) }));`;
  return new Promise((resolve, reject) => {
    const w = new Worker(code, { eval: true, workerData: { loader: builtLoader, data } });
    w.once("message", (m: T & { error?: string }) => {
      void w.terminate();
      if (m && typeof m === "object" && "error" in m && m.error !== undefined) reject(new Error(m.error));
      else resolve(m);
    });
    w.once("error", reject);
  });
}

describe("WASM backends sharing one memory (attach, share, arrayAt)", () => {
  it("backends attached to one memory hand out disjoint, zeroed, 16-byte aligned ranges, whatever the order of their allocations", () => {
    check(
      fc.property(fc.array(fc.tuple(fc.integer({ min: 0, max: 2 }), fc.constantFrom("float32" as const, "float64" as const), fc.integer({ min: 0, max: 5000 })), { minLength: 1, maxLength: 30 }), (requests) => {
        const first = loadWasmKernelsSync({ arenaBytes: 16 * KIB, scratchBytes: 4 * KIB, relaxed: false });
        const handle = first.share();
        const all: WasmKernelBackend[] = [first, loadWasmKernelsSync({ attach: handle, scratchBytes: 4 * KIB, relaxed: false }), loadWasmKernelsSync({ attach: handle, scratchBytes: 0, relaxed: false })];
        const views = requests.map(([who, dtype, n]) => {
          const v = all[who]!.allocate(dtype, n);
          expect(v.byteOffset % 16).toBe(0);
          expect(v.every((x) => x === 0)).toBe(true);
          v.fill(who + 1); // marks the range as used
          return v;
        });
        expectDisjoint(ranges(views));
        // no backend's writes reached another's range
        views.forEach((v, q) => expect(v.every((x) => x === requests[q]![0] + 1)).toBe(true));
      }),
      40,
    );
  });

  it("arrayAt shows an allocation of another backend: the same bytes, on the fast path of the viewer", () => {
    const a = loadWasmKernelsSync({ relaxed: false });
    const b = loadWasmKernelsSync({ attach: a.share(), relaxed: false });
    const x = a.allocate("float64", 5);
    x.set([1, 2, 3, 4, 5]);
    const seen = b.arrayAt("float64", x.byteOffset, x.length);
    expect(b.isArenaView(seen)).toBe(true);
    expectExact(seen, [1, 2, 3, 4, 5], "view of the other backend's array");
    b.scale(seen, seen, 2);
    expectExact(x, [2, 4, 6, 8, 10], "written through the view");
  });

  it("kernels of an attached backend give the creator's results bit for bit (same build) on the creator's arrays", () => {
    check(
      fc.property(fc.integer({ min: 1, max: 70 }), fc.integer({ min: 1, max: 70 }), fc.integer({ min: 1, max: 300 }), fc.boolean(), fc.boolean(), fc.integer({ min: 0, max: 1000 }), (m, n, k, tA, tB, seed) => {
        const a = loadWasmKernelsSync({ relaxed: false });
        const b = loadWasmKernelsSync({ attach: a.share(), relaxed: false });
        const A = a.allocate("float32", m * k);
        const Bm = a.allocate("float32", k * n);
        A.set(randomArray("float32", m * k, seed, "a"));
        Bm.set(randomArray("float32", k * n, seed, "b"));
        const c1 = a.allocate("float32", m * n);
        const c2 = a.allocate("float32", m * n);
        a.gemm(c1, A, Bm, m, n, k, tA, tB, 1, 0);
        const view = (x: Float32Array | Float64Array) => b.arrayAt("float32", x.byteOffset, x.length);
        b.gemm(view(c2), view(A), view(Bm), m, n, k, tA, tB, 1, 0);
        expectExact(c2, c1, "attached gemm");
      }),
      30,
    );
  });

  it("growth by one backend is seen by the others: arrays allocated past the memory's old end are visible through arrayAt, earlier views stay live", () => {
    const a = loadWasmKernelsSync({ arenaBytes: 0, scratchBytes: 0, relaxed: false });
    const b = loadWasmKernelsSync({ attach: a.share(), scratchBytes: 0, relaxed: false });
    const early = a.allocate("float64", 4);
    early.set([1, 2, 3, 4]);
    const genA = a.generation;
    const big = b.allocate("float64", MIB); // 8 MiB: past the end of the memory a knows
    big[MIB - 1] = 7;
    const seen = a.arrayAt("float64", big.byteOffset, big.length);
    expect(a.generation).toBe(genA + 1);
    expect(seen[MIB - 1]).toBe(7);
    expect(a.isArenaView(early)).toBe(true);
    a.axpy(seen.subarray(0, 4), early, 1, 4);
    expectExact(big.subarray(0, 4), [1, 2, 3, 4], "kernel on an early and a late view");
  });

  it("share() moves the creating backend's slow-path scratch into a region of the arena: the free space, where other threads allocate, is never written by its copies", () => {
    const a = loadWasmKernelsSync({ arenaBytes: 256 * KIB, scratchBytes: 64 * KIB, relaxed: false });
    const before = a.arenaBytes;
    a.share();
    expect(a.arenaBytes - before).toBeGreaterThanOrEqual(64 * KIB);
    const probe = a.allocate("float32", 4);
    const free = new Uint8Array(probe.buffer, probe.buffer.byteLength - a.freeBytes, a.freeBytes).fill(0xab);
    // ordinary arrays go through scratch copies (16 KiB each)
    const x = randomArray("float32", 4096, 1, "x");
    const out = new Float32Array(4096);
    a.scale(out, x, 2);
    expectExact(out, ts.scale(new Float32Array(4096), x, 2), "slow path result");
    expect(free.every((v) => v === 0xab)).toBe(true);
  });

  it("allocate hands out zeros even where the slow path of an earlier call left its copies", () => {
    const a = loadWasmKernelsSync({ arenaBytes: 64 * KIB, scratchBytes: 64 * KIB, relaxed: false });
    a.scale(new Float32Array(1000), Float32Array.from({ length: 1000 }, () => 5), 2);
    expect(a.allocate("float32", 3000).every((v) => v === 0)).toBe(true);
  });

  it("two threads allocate at the same time without overlap, and run gemm at the same time, each with its own workspace", async () => {
    const a = loadWasmKernelsSync({ arenaBytes: 4 * MIB, relaxed: false });
    const handle = a.share();
    const m = 96;
    const n = 80;
    const k = 300;
    const A = a.allocate("float32", m * k);
    const B = a.allocate("float32", k * n);
    A.set(randomArray("float32", m * k, 3, "a"));
    B.set(randomArray("float32", k * n, 3, "b"));
    const expected = naiveGemm(new Float64Array(m * n), A, B, m, n, k, false, true, 1, 0);
    // the worker allocates 200 arrays and runs 50 products into its own output while this thread does the same
    const body = `
      const be = loader.loadWasmKernelsSync({ attach: data.handle, relaxed: false });
      const A = be.arrayAt("float32", data.A, data.m * data.k), B = be.arrayAt("float32", data.B, data.k * data.n);
      const offsets = [];
      for (let i = 0; i < 200; i++) { const v = be.allocate("float32", 1 + (i % 37) * 50); offsets.push([v.byteOffset, v.byteOffset + v.byteLength]); }
      const C = be.allocate("float32", data.m * data.n);
      for (let i = 0; i < 50; i++) be.gemm(C, A, B, data.m, data.n, data.k, false, true, 1, 0);
      return { offsets, C: Array.from(C) };`;
    const other = inWorker<{ offsets: [number, number][]; C: number[] }>(body, { handle, A: A.byteOffset, B: B.byteOffset, m, n, k });
    const mine: [number, number][] = [];
    const C = a.allocate("float32", m * n);
    for (let i = 0; i < 200; i++) {
      const v = a.allocate("float32", 1 + (i % 41) * 50);
      mine.push([v.byteOffset, v.byteOffset + v.byteLength]);
      if (i % 4 === 0) a.gemm(C, A, B, m, n, k, false, true, 1, 0);
    }
    const got = await other;
    expectDisjoint([...mine, ...got.offsets].sort((p, q) => p[0] - q[0]));
    // both threads agree bit for bit, and with the definition within the sum-of-products bound
    expectExact(got.C, C, "gemm of the worker thread = gemm of this thread");
    expectWithinBound(C, expected, k + 4, 2 ** -23, "vs naive");
  });

  it("rejects a handle that is not one share() returned, and views outside the arena, with invalid_parameter", () => {
    const a = loadWasmKernelsSync({ relaxed: false });
    const e1 = thrown(() => loadWasmKernelsSync({ attach: { memory: {}, build: "simd" } }));
    expect([e1.code, e1.path]).toEqual(["invalid_parameter", "attach"]);
    const e2 = thrown(() => loadWasmKernelsSync({ attach: undefined as never, relaxed: false }).arrayAt("float32", 0, 4));
    expect([e2.code, e2.path]).toEqual(["invalid_parameter", "byteOffset"]);
    const x = a.allocate("float64", 4);
    const cases: [number, number][] = [
      [x.byteOffset + 4, 2], // not aligned to 8 bytes
      [x.byteOffset, 10_000_000], // past the arena's end
      [Number.NaN, 1],
    ];
    for (const [off, len] of cases) {
      const e = thrown(() => a.arrayAt("float64", off, len));
      expect([e.code, e.path]).toEqual(["invalid_parameter", "byteOffset"]);
    }
    const e3 = thrown(() => a.arrayAt("float64", x.byteOffset, -1));
    expect([e3.code, e3.path]).toEqual(["invalid_parameter", "n"]);
  });
});
