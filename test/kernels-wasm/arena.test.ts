import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import * as ts from "../../src/kernels/index.js";
import { loadWasmKernelsSync, type WasmKernelBackend } from "../../src/kernels/wasm/index.js";
import { check } from "../helpers/property.js";
import { arb, expectExact, naiveGemm, randomArray, expectWithinBound, epsOf } from "../kernels/reference.js";
import { inArena, wasmBackends } from "./backends.js";
import { thrown } from "../helpers/errors.js";


const MIB = 1 << 20;

describe("WASM arena", () => {
  it("allocate returns zeroed views into WebAssembly memory of the requested dtype and length, 16-byte aligned and disjoint", () => {
    check(
      fc.property(fc.array(fc.tuple(arb.dtype, fc.integer({ min: 0, max: 300 })), { minLength: 1, maxLength: 12 }), (requests) => {
        const be = loadWasmKernelsSync({ arenaBytes: 64 * 1024, scratchBytes: 0 });
        const views = requests.map(([dtype, n]) => be.allocate(dtype, n));
        let end = 0;
        views.forEach((v, q) => {
          const [dtype, n] = requests[q]!;
          // every view shares the memory that is current now (growth makes them fresh via refresh)
          const live = be.refresh(v);
          expect(live).toBeInstanceOf(dtype === "float32" ? Float32Array : Float64Array);
          expect(live.length).toBe(n);
          expect(live.byteOffset % 16).toBe(0);
          expect(live.byteOffset).toBeGreaterThanOrEqual(end);
          end = live.byteOffset + live.byteLength;
          expect(live.every((x) => x === 0)).toBe(true);
          expect(be.isArenaView(live)).toBe(true);
        });
      }),
      50,
    );
  });

  it("arena views stay the same live views through every kernel, and the fast path copies nothing into the free space", () => {
    for (const be of wasmBackends) {
      const gen = be.generation;
      const [a, b, c, x, y] = inArena(be, randomArray("float32", 64 * 48, 1, "a"), randomArray("float32", 48 * 32, 1, "b"), new Float32Array(64 * 32), randomArray("float32", 48, 1, "x"), new Float32Array(64));
      const bufferBefore = a.buffer;
      // the free space beyond the arena holds the scratch copies of the slow path: mark it
      const free = new Uint8Array(a.buffer, a.buffer.byteLength - be.freeBytes, be.freeBytes).fill(0xab);
      const marked = () => free.every((v) => v === 0xab);
      be.gemm(c, a, b, 64, 32, 48, false, false, 1, 0);
      be.gemm(c, a, a, 64, 64 / 2, 48, false, true, 1, 0);
      be.gemv(y, a, x, 64, 48, false, 1, 0);
      be.ger(a, y, x, 64, 48, 0.5);
      be.add(c, c, c);
      be.axpby(c, c, c, 0.5, 0.25);
      be.scale(x, x, 2);
      be.fill(y, 1);
      be.sumRows(x, a, 64, 48, 1, 0);
      be.addRowVector(a, x, 64, 48);
      expect(be.allFinite(c)).toBe(true);
      expect(be.dot(c, c)).toBeGreaterThan(0);
      for (const v of [a, b, c, x, y]) {
        expect(v.buffer).toBe(bufferBefore);
        expect(be.isArenaView(v)).toBe(true);
      }
      expect([a.length, b.length, c.length, x.length, y.length]).toEqual([64 * 48, 48 * 32, 64 * 32, 48, 64]);
      expect(be.generation).toBe(gen);
      expect(marked()).toBe(true);
      // an ordinary array goes through the free space (the slow path), leaving the arena views live
      be.scale(new Float32Array(64), y, 2);
      expect(marked()).toBe(false);
      expect(be.isArenaView(y)).toBe(true);
    }
  });

  it("growth keeps earlier views live (the memory is shared, so growing it detaches nothing): kernels on views from before and after a growth work together", () => {
    const be = loadWasmKernelsSync({ arenaBytes: 1024, scratchBytes: 0, relaxed: false });
    const w = be.allocate("float64", 4) as Float64Array;
    w.set([1, 2, 3, 4]);
    const gen = be.generation;
    expect(be.isArenaView(w)).toBe(true);
    // 2 MiB does not fit in the arena: the memory grows
    const big = be.allocate("float64", MIB / 4) as Float64Array;
    expect(be.generation).toBe(gen + 1);
    expect(w.length).toBe(4); // still attached (WebAssembly JS API: growing a shared memory keeps its old buffers valid)
    expect(be.isArenaView(w)).toBe(true);
    expect(be.isArenaView(big)).toBe(true);
    be.scale(big.subarray(0, 4), w, 2, 4);
    expectExact(big.subarray(0, 4), [2, 4, 6, 8], "old view read by a kernel after growth");
    be.scale(w, big.subarray(0, 4), 0.5, 4);
    expectExact(w, [1, 2, 3, 4], "old view written by a kernel after growth");
    expect(be.refresh(w)).toBe(w);
  });

  it("reserve() grows once up front, so the allocations that follow keep every view live", () => {
    const be = loadWasmKernelsSync({ arenaBytes: 0, scratchBytes: 0, relaxed: false });
    be.reserve(8 * MIB);
    const gen = be.generation;
    const views = Array.from({ length: 16 }, () => be.allocate("float64", 65536));
    expect(be.generation).toBe(gen);
    for (const v of views) expect(v.length).toBe(65536);
    expect(be.arenaBytes).toBe(16 * 65536 * 8);
    expect(be.freeBytes).toBeGreaterThanOrEqual(0);
  });

  it("ordinary arrays work through the copy path and give the arena result bit for bit; the arena is left untouched", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dim, fc.boolean(), fc.boolean(), arb.alpha, arb.beta, arb.dtype, arb.seed, (m, n, k, tA, tB, alpha, beta, dtype, seed) => {
        for (const be of wasmBackends) {
          const a = randomArray(dtype, m * k, seed, "a");
          const b = randomArray(dtype, k * n, seed, "b");
          const c = randomArray(dtype, m * n, seed, "c");
          const [av, bv, cv, sentinel] = inArena(be, a, b, c.slice(), Float64Array.of(42));
          const used = be.arenaBytes;
          be.gemm(cv, av, bv, m, n, k, tA, tB, alpha, beta);
          const plain = be.gemm(c.slice(), a, b, m, n, k, tA, tB, alpha, beta);
          expectExact(plain, cv, "copy path = arena path");
          expect(be.arenaBytes).toBe(used);
          expect(sentinel[0]).toBe(42);
          expectWithinBound(plain, naiveGemm(Array.from(c), a, b, m, n, k, tA, tB, alpha, beta), k + 4, epsOf(c), "vs naive");
        }
      }),
      50,
    );
  });

  it("when the copies do not fit in the free space the TypeScript kernel runs (same result as the TypeScript gemm)", () => {
    const be = loadWasmKernelsSync({ arenaBytes: 0, scratchBytes: 0, relaxed: false });
    // fill the memory up to its end so the free space is smaller than the operands
    be.allocate("float32", be.freeBytes / 4 - 8);
    const free = be.freeBytes;
    expect(free).toBeLessThan(3 * 40 * 40 * 8);
    const a = randomArray("float64", 40 * 40, 3, "a");
    const b = randomArray("float64", 40 * 40, 3, "b");
    const got = be.gemm(new Float64Array(1600), a, b, 40, 40, 40, false, true, 1, 0);
    expectExact(got, ts.gemm(new Float64Array(1600), a, b, 40, 40, 40, false, true, 1, 0), "TypeScript fallback");
    expect(be.freeBytes).toBe(free);
  });

  it("subarrays of arena views are arena views (unaligned offsets included) and run in place", () => {
    for (const be of wasmBackends) {
      const [x, y] = inArena(be, randomArray("float32", 37, 5, "x"), randomArray("float32", 37, 5, "y"));
      const xs = x.subarray(1); // byte offset 4 past a 16-byte boundary
      const ys = y.subarray(3);
      expect(be.isArenaView(xs)).toBe(true);
      const expected = ts.add(new Float32Array(34), xs, ys, 34);
      be.add(xs, xs, ys, 34);
      expectExact(xs.subarray(0, 34), expected, "unaligned add");
    }
  });

  it("rejects bad sizes and options with invalid_parameter naming the parameter", () => {
    const be = wasmBackends[0]!;
    const cases: [() => unknown, string, unknown][] = [
      [() => be.allocate("float16" as never, 3), "dtype", '"float16"'],
      [() => be.allocate("float32", -1), "n", "-1"],
      [() => be.allocate("float32", 1.5), "n", "1.5"],
      [() => be.allocate("float64", Number.NaN), "n", "NaN"],
      [() => be.reserve(-4), "bytes", "-4"],
      [() => be.refresh(new Float32Array(3)), "view", "Float32Array of length 3"],
      [() => loadWasmKernelsSync({ arenaBytes: -1 }), "arenaBytes", "-1"],
      [() => loadWasmKernelsSync({ scratchBytes: 0.5 }), "scratchBytes", "0.5"],
      [() => loadWasmKernelsSync({ maximumBytes: 100 }), "maximumBytes", "100"],
      [() => loadWasmKernelsSync({ maximumBytes: 2 * MIB, arenaBytes: 4 * MIB }), "maximumBytes", "2097152"],
      [() => loadWasmKernelsSync({ arenaBytes: 2 ** 33 }), "arenaBytes", "8589934592"],
      [() => loadWasmKernelsSync({ relaxed: "yes" as never }), "relaxed", '"yes"'],
    ];
    for (const [f, path, received] of cases) {
      const e = thrown(f);
      expect([e.code, e.path, e.received], path).toEqual(["invalid_parameter", path, received]);
    }
  });

  it("a bounded memory refuses growth past its maximum with unsupported, leaving earlier views live", () => {
    const be: WasmKernelBackend = loadWasmKernelsSync({ maximumBytes: 4 * MIB, arenaBytes: 0, scratchBytes: 0, relaxed: false });
    const v = be.allocate("float64", 8);
    const e = thrown(() => be.allocate("float64", MIB));
    expect([e.code, e.path]).toEqual(["unsupported", "memory"]);
    expect(be.isArenaView(v)).toBe(true);
  });
});
