import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";
import { checkGemm, checkGemv, checkGer, gemm, kernelsChecked } from "../../src/kernels/index.js";
import { check } from "../helpers/property.js";
import { arb, expectExact, randomArray } from "./reference.js";
import { thrown } from "../helpers/errors.js";


const f64 = (n: number) => new Float64Array(n);

describe("checkGemm", () => {
  it("accepts every consistent set of shapes and flags", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dim, fc.boolean(), fc.boolean(), (m, n, k, tA, tB) => {
        checkGemm(f64(m * n), f64(m * k), f64(k * n), m, n, k, tA, tB, 1, 0);
      }),
      100,
    );
  });

  it("reports a wrong length as shape_mismatch with the argument as path and both lengths", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dim, fc.constantFrom("out", "a", "b"), fc.integer({ min: 1, max: 3 }), (m, n, k, which, extra) => {
        const len = { out: m * n, a: m * k, b: k * n };
        const arr = (p: "out" | "a" | "b") => f64(len[p] + (p === which ? extra : 0));
        const e = thrown(() => checkGemm(arr("out"), arr("a"), arr("b"), m, n, k, false, true, 1, 0));
        expect(e.code).toBe("shape_mismatch");
        expect(e.path).toBe(which);
        expect(e.expected).toContain(`length ${len[which]}`);
        expect(e.received).toBe(`length ${len[which] + extra}`);
      }),
      100,
    );
  });

  it("names the transposed shape in the message: b is n*k when transB", () => {
    const e = thrown(() => checkGemm(f64(6), f64(6), f64(5), 2, 3, 3, false, true, 1, 0));
    expect(e.message).toContain("b: expected length 9 (n*k with n=3, k=3), received length 5");
    expect(e.message).toContain("(gemm)");
  });

  it("rejects sizes that are not integers >= 0, non-finite scales and non-boolean flags as invalid_parameter, listing every problem", () => {
    const e = thrown(() =>
      checkGemm(f64(4), f64(4), f64(4), -1, 1.5, Number.NaN, "no" as unknown as boolean, false, Number.POSITIVE_INFINITY, Number.NaN),
    );
    expect(e.code).toBe("invalid_parameter");
    expect(e.issues.map((i) => i.path)).toEqual(["m", "n", "k", "transA", "alpha", "beta"]);
    expect(e.issues.every((i) => i.code === "invalid_parameter")).toBe(true);
    expect(e.issues[0]?.received).toBe("-1");
    expect(e.issues[2]?.received).toBe("NaN");
  });

  it("rejects arrays that are not Float32Array or Float64Array", () => {
    const e = thrown(() => checkGemm(f64(1), [1] as unknown as Float64Array, new Int32Array(1) as unknown as Float64Array, 1, 1, 1, false, false, 1, 0));
    expect(e.issues.map((i) => [i.path, i.code])).toEqual([
      ["a", "invalid_parameter"],
      ["b", "invalid_parameter"],
    ]);
  });

  it("rejects an out that overlaps a or b (gemm must not alias its inputs)", () => {
    const buffer = new Float64Array(12);
    const a = buffer.subarray(0, 4);
    const out = buffer.subarray(2, 6); // overlaps a
    const e = thrown(() => checkGemm(out, a, f64(4), 2, 2, 2, false, false, 1, 0));
    expect(e.code).toBe("invalid_parameter");
    expect(e.path).toBe("out");
    expect(e.expected).toContain("shares no memory with a");
    const same = f64(4);
    expect(thrown(() => checkGemm(same, f64(4), same, 2, 2, 2, false, false, 1, 0)).expected).toContain("with b");
    // adjacent views of one buffer do not overlap and are fine
    checkGemm(buffer.subarray(4, 8), a, buffer.subarray(8, 12), 2, 2, 2, false, false, 1, 0);
  });
});

describe("checkGemv and checkGer", () => {
  it("checkGemv takes rows and cols as A is stored: x has rows entries and out has cols when trans", () => {
    checkGemv(f64(3), f64(6), f64(2), 2, 3, true, 1, 0);
    checkGemv(f64(2), f64(6), f64(3), 2, 3, false, 1, 0);
    const e = thrown(() => checkGemv(f64(2), f64(6), f64(3), 2, 3, true, 1, 0));
    expect(e.issues.map((i) => [i.path, i.code])).toEqual([
      ["out", "shape_mismatch"],
      ["x", "shape_mismatch"],
    ]);
    expect(thrown(() => checkGemv(f64(2), f64(6), f64(3), 2, 3, false, Number.NaN, 0)).path).toBe("alpha");
    const shared = f64(6);
    expect(thrown(() => checkGemv(shared.subarray(0, 2), shared, f64(3), 2, 3, false, 1, 0)).path).toBe("out");
  });

  it("checkGer requires out m*n, x m, y n, a finite alpha and out apart from x and y", () => {
    checkGer(f64(6), f64(2), f64(3), 2, 3, 1);
    expect(thrown(() => checkGer(f64(6), f64(3), f64(2), 2, 3, 1)).path).toBe("x");
    expect(thrown(() => checkGer(f64(6), f64(2), f64(3), 2, 3, Number.NaN)).path).toBe("alpha");
    const shared = f64(6);
    expect(thrown(() => checkGer(shared, shared.subarray(0, 2), f64(3), 2, 3, 1)).path).toBe("out");
  });
});

describe("kernelsChecked", () => {
  it("gives the same results as the unchecked kernels on valid arguments", () => {
    check(
      fc.property(arb.dim, arb.dim, arb.dim, fc.boolean(), fc.boolean(), arb.seed, (m, n, k, tA, tB, seed) => {
        const a = randomArray("float64", m * k, seed, "a");
        const b = randomArray("float64", k * n, seed, "b");
        expectExact(kernelsChecked.gemm(f64(m * n), a, b, m, n, k, tA, tB, 0.5, 0), gemm(f64(m * n), a, b, m, n, k, tA, tB, 0.5, 0), "gemm");
      }),
      50,
    );
    const x = Float64Array.of(1, 2, 3);
    const y = Float64Array.of(4, 5, 6);
    expectExact(kernelsChecked.add(f64(3), x, y), [5, 7, 9], "add");
    expectExact(kernelsChecked.sub(f64(3), x, y), [-3, -3, -3], "sub");
    expectExact(kernelsChecked.mul(f64(3), x, y), [4, 10, 18], "mul");
    expectExact(kernelsChecked.axpy(Float64Array.of(1, 1, 1), x, 2), [3, 5, 7], "axpy");
    expectExact(kernelsChecked.axpby(f64(3), x, y, 1, -1), [-3, -3, -3], "axpby");
    expectExact(kernelsChecked.scale(f64(3), x, 2), [2, 4, 6], "scale");
    expectExact(kernelsChecked.fill(f64(3), 2, 2), [2, 2, 0], "fill");
    expectExact(kernelsChecked.copy(f64(3), x), [1, 2, 3], "copy");
    expect(kernelsChecked.maxAbsDiff(x, y)).toBe(3);
    expect(kernelsChecked.allFinite(x)).toBe(true);
    expect(kernelsChecked.maxAbs(y)).toBe(6);
    expect(kernelsChecked.dot(x, y)).toBe(32);
    expect(kernelsChecked.sumSquares(x)).toBe(14);
    expectExact(kernelsChecked.gemv(f64(1), x, y, 1, 3, false, 1, 0), [32], "gemv");
    expectExact(kernelsChecked.ger(f64(2), Float64Array.of(1, 2), Float64Array.of(3), 2, 1, 1), [3, 6], "ger");
    expectExact(kernelsChecked.addRowVector(Float64Array.of(1, 2, 3, 4), Float64Array.of(1, 1), 2, 2), [2, 3, 4, 5], "addRowVector");
    expectExact(kernelsChecked.sumRows(f64(2), Float64Array.of(1, 2, 3, 4), 2, 2, 1, 0), [4, 6], "sumRows");
  });

  it("elementwise members accept out identical to an input and compute the right result", () => {
    const x = Float64Array.of(1, 2, 3);
    expectExact(kernelsChecked.add(x, x, x), [2, 4, 6], "add(x, x, x)");
    const y = Float32Array.of(1, 2);
    expectExact(kernelsChecked.scale(y, y, 3), [3, 6], "scale in place");
  });

  it("elementwise members reject a partial overlap between out and an input", () => {
    const buffer = new Float64Array(5);
    const e = thrown(() => kernelsChecked.add(buffer.subarray(1, 4), buffer.subarray(0, 3), f64(3)));
    expect(e.code).toBe("invalid_parameter");
    expect(e.path).toBe("out");
    expect(e.expected).toContain("same array as a");
    // the same memory seen with another element type is not the same array either
    const bytes = new ArrayBuffer(16);
    expect(thrown(() => kernelsChecked.copy(new Float32Array(bytes, 0, 2), new Float64Array(bytes, 0, 2))).path).toBe("out");
  });

  it("elementwise members report lengths: equal to out without n, at least n with n", () => {
    const e = thrown(() => kernelsChecked.add(f64(3), f64(3), f64(2)));
    expect([e.code, e.path, e.expected, e.received]).toEqual(["shape_mismatch", "b", "length 3 (the length of out)", "length 2"]);
    kernelsChecked.add(f64(3), f64(5), f64(2), 2);
    const e2 = thrown(() => kernelsChecked.add(f64(3), f64(5), f64(1), 2));
    expect([e2.code, e2.path, e2.expected]).toEqual(["shape_mismatch", "b", "length >= 2 (n=2)"]);
    expect(thrown(() => kernelsChecked.fill(f64(3), 1, 4)).path).toBe("out");
    expect(thrown(() => kernelsChecked.copy(f64(3), f64(3), -1)).path).toBe("n");
    expect(thrown(() => kernelsChecked.dot(f64(3), f64(4))).path).toBe("b");
    expect(thrown(() => kernelsChecked.sumSquares(f64(3), 2.5)).path).toBe("n");
  });

  it("elementwise and row members reject non-finite scales by name", () => {
    expect(thrown(() => kernelsChecked.axpy(f64(2), f64(2), Number.NaN)).path).toBe("alpha");
    expect(thrown(() => kernelsChecked.scale(f64(2), f64(2), Number.NEGATIVE_INFINITY)).path).toBe("alpha");
    expect(thrown(() => kernelsChecked.axpby(f64(2), f64(2), f64(2), 1, Number.NaN)).path).toBe("beta");
    expect(thrown(() => kernelsChecked.sumRows(f64(2), f64(4), 2, 2, Number.NaN, 0)).path).toBe("alpha");
    expect(thrown(() => kernelsChecked.fill(f64(2), "1" as unknown as number)).path).toBe("value");
  });

  it("row members check out, bias and a against rows and cols, and aliasing", () => {
    expect(thrown(() => kernelsChecked.addRowVector(f64(6), f64(2), 2, 3)).path).toBe("bias");
    expect(thrown(() => kernelsChecked.addRowVector(f64(6), f64(3), 3, 3)).path).toBe("out");
    expect(thrown(() => kernelsChecked.sumRows(f64(3), f64(5), 2, 3, 1, 0)).path).toBe("a");
    const shared = f64(6);
    expect(thrown(() => kernelsChecked.sumRows(shared.subarray(0, 3), shared, 2, 3, 1, 0)).path).toBe("out");
    expect(thrown(() => kernelsChecked.addRowVector(shared, shared.subarray(3), 2, 3)).path).toBe("out");
  });

  it("reductions do not treat NaN data as an argument error", () => {
    expect(kernelsChecked.maxAbsDiff(Float64Array.of(Number.NaN), f64(1))).toBeNaN();
    expect(kernelsChecked.allFinite(Float64Array.of(Number.POSITIVE_INFINITY))).toBe(false);
  });
});
