import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { applyCalciumCurve, bcmThreshold, blendedThreshold, slowTraceThreshold } from "../../src/curves/index.js";
import { traceDifference, vectorTrace } from "../../src/traces/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";
import { expectEbbflowError } from "../traces/expect-error.js";

const rowsArb = (n: number, len: number) => fc.array(fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: len, maxLength: len }), { minLength: n, maxLength: n });

describe("slowTraceThreshold (error-driven)", () => {
  it("equals a vector trace of the coactivity, bit for bit", () => {
    // definition: tau_slow dtheta/dt = x - theta (methods.md item 13 filter)
    check(
      fc.property(fc.double({ min: 1, max: 100, noNaN: true }), rowsArb(20, 3), (tau, rows) => {
        const th = slowTraceThreshold({ tau, n: 3 });
        const ref = vectorTrace({ tau, n: 3 });
        for (const r of rows) {
          const x = Float64Array.from(r);
          expect(Array.from(th.update(x))).toEqual(Array.from(ref.update(x)));
        }
        expect(th.value).toBe(th.trace.value);
      }),
    );
  });

  it("turns the calcium curve into 'clamped minus free': curve(fast, slow) = fast - slow in the linear region", () => {
    // design contract of calciumCurve + methods.md item 13 traces
    check(
      fc.property(rowsArb(30, 4), fc.double({ min: 0.05, max: 0.95, noNaN: true }), (rows, trough) => {
        const fast = vectorTrace({ tau: 2, n: 4 });
        const slow = slowTraceThreshold({ tau: 30, n: 4 });
        const dw = new Float64Array(4);
        const diff = new Float64Array(4);
        for (const r of rows) {
          const x = Float64Array.from(r);
          fast.update(x);
          slow.update(x);
          applyCalciumCurve(dw, fast.value, slow.value, trough);
          traceDifference(diff, fast.value, slow.value);
          for (let i = 0; i < 4; i++) {
            const f = fast.value[i] as number;
            if (f > 0 && f > trough * (slow.value[i] as number)) expect(dw[i]).toBe(diff[i]);
          }
        }
      }),
    );
  });
});

describe("bcmThreshold (self-organising)", () => {
  it("equals a vector trace of y^2, bit for bit", () => {
    // methods.md item 7: online form tau_theta dtheta/dt = y^2 - theta
    check(
      fc.property(fc.double({ min: 1, max: 100, noNaN: true }), fc.array(fc.array(fc.double({ min: -3, max: 3, noNaN: true }), { minLength: 2, maxLength: 2 }), { minLength: 1, maxLength: 30 }), (tau, rows) => {
        const th = bcmThreshold({ tau, n: 2 });
        const ref = vectorTrace({ tau, n: 2 });
        for (const r of rows) {
          const out = Array.from(th.update(Float64Array.from(r)));
          expect(out).toEqual(Array.from(ref.update(Float64Array.from(r.map((y) => y * y)))));
        }
      }),
    );
  });

  it("settles to E[y^2] for a periodic input (cycle average of the steady state)", () => {
    // methods.md item 7: theta estimates E[y^2]
    const ys = [0, 1, 2, 3];
    const th = bcmThreshold({ tau: 20, n: 1 });
    const y = new Float64Array(1);
    for (let s = 0; s < 4000; s++) {
      y[0] = ys[s % 4] as number;
      th.update(y);
    }
    let mean = 0;
    for (let s = 0; s < 4; s++) {
      y[0] = ys[s % 4] as number;
      mean += (th.update(y)[0] as number) / 4;
    }
    // E[y^2] = (0 + 1 + 4 + 9)/4 = 3.5. Summing y[k+1] = (1-a) y[k] + a x[k] over one period of the
    // periodic steady state gives a sum(y) = a sum(x): the cycle mean equals the input mean exactly.
    expectClose(mean, 3.5, 1e-9, "theta");
  });

  it("a constant activity with theta = y^2 is a fixed point; float32 works", () => {
    // methods.md item 13: constant input is a fixed point
    const th = bcmThreshold({ tau: 10, n: 3, dtype: "float32", initial: 4 });
    const y = new Float32Array([2, -2, 2]);
    th.update(y);
    expect(Array.from(th.value)).toEqual([4, 4, 4]);
    expect(th.value).toBeInstanceOf(Float32Array);
    expectEbbflowError(() => th.update(new Float32Array(2)), "shape_mismatch", "input");
  });

  it("state round-trips and reset works", () => {
    const th = bcmThreshold({ tau: 5, n: 2 });
    th.update(new Float64Array([1, 2]));
    const saved = th.saveState();
    const next = Array.from(th.update(new Float64Array([3, 0])));
    th.loadState(saved);
    expect(Array.from(th.update(new Float64Array([3, 0])))).toEqual(next);
    th.reset(1);
    expect(Array.from(th.value)).toEqual([1, 1]);
  });
});

describe("blendedThreshold", () => {
  const post = 2;
  const pre = 3;

  function run(share: number, rows: number[][], posts: number[][]) {
    const m = blendedThreshold({ post, pre, errorShare: share, slow: { tau: 10 }, bcm: { tau: 40 } });
    const slow = slowTraceThreshold({ tau: 10, n: post * pre });
    const bcm = bcmThreshold({ tau: 40, n: post });
    rows.forEach((r, s) => {
      const x = Float64Array.from(r);
      const y = Float64Array.from(posts[s] as number[]);
      m.update(x, y);
      slow.update(x);
      bcm.update(y);
    });
    return { m, slow, bcm };
  }

  const inputsArb = fc.integer({ min: 1, max: 20 }).chain((steps) => fc.tuple(rowsArb(steps, post * pre), rowsArb(steps, post)));

  it("is m theta_slow + (1 - m) theta_bcm, the BCM part shared along each postsynaptic row", () => {
    // definition: theta = m theta_slow + (1 - m) theta_bcm
    check(
      fc.property(fc.double({ min: 0, max: 1, noNaN: true }), inputsArb, (share, [rows, posts]) => {
        const { m, slow, bcm } = run(share, rows, posts);
        for (let i = 0; i < post; i++) {
          for (let j = 0; j < pre; j++) {
            const o = i * pre + j;
            expect(m.value[o]).toBe(share * (slow.value[o] as number) + (1 - share) * (bcm.value[i] as number));
          }
        }
      }),
    );
  });

  it("m = 1 is purely error-driven and m = 0 purely BCM", () => {
    // limits of the blend
    check(
      fc.property(inputsArb, ([rows, posts]) => {
        const one = run(1, rows, posts);
        expect(Array.from(one.m.value)).toEqual(Array.from(one.slow.value));
        const zero = run(0, rows, posts);
        for (let o = 0; o < post * pre; o++) expect(zero.m.value[o]).toBe(zero.bcm.value[Math.floor(o / pre)]);
      }),
    );
  });

  it("state round-trips; a bad state is rejected with its path and leaves the threshold untouched", () => {
    const m = blendedThreshold({ post, pre, errorShare: 0.5, slow: { tau: 10 }, bcm: { tau: 40 }, dtype: "float32" });
    m.update(new Float32Array([1, 0, 1, 0, 1, 0]), new Float32Array([1, 2]));
    const saved = JSON.parse(JSON.stringify(m.saveState())) as ReturnType<typeof m.saveState>;
    const next = Array.from(m.update(new Float32Array(6).fill(0.5), new Float32Array([0, 1])));
    m.loadState(saved);
    expect(Array.from(m.update(new Float32Array(6).fill(0.5), new Float32Array([0, 1])))).toEqual(next);
    const before = Array.from(m.value);
    expectEbbflowError(() => m.loadState({ slow: { values: [1, 2, 3, 4, 5, 6] }, bcm: { values: [1] } }), "shape_mismatch", "state.bcm.values");
    expectEbbflowError(() => m.loadState({ slow: { values: [1, 2, 3, 4, 5, Number.NaN] }, bcm: { values: [1, 2] } }), "invalid_parameter", "state.slow.values[5]");
    expect(Array.from(m.value)).toEqual(before);
    m.reset(2);
    expect(Array.from(m.value)).toEqual([2, 2, 2, 2, 2, 2]);
  });

  it("rejects bad parameters naming them", () => {
    const base = { post: 2, pre: 3, errorShare: 0.5, slow: { tau: 10 }, bcm: { tau: 40 } };
    expectEbbflowError(() => blendedThreshold({ ...base, errorShare: -0.1 }), "invalid_parameter", "errorShare");
    expectEbbflowError(() => blendedThreshold({ ...base, errorShare: 1.5 }), "invalid_parameter", "errorShare");
    expectEbbflowError(() => blendedThreshold({ ...base, errorShare: Number.NaN }), "invalid_parameter", "errorShare");
    // the renamed key is refused, and the message names its new spelling
    const refused = expectEbbflowError(() => blendedThreshold({ ...base, mix: 0.5 } as never), "invalid_parameter", "mix");
    expect(refused.message).toContain("errorShare");
    expectEbbflowError(() => blendedThreshold({ ...base, post: 0 }), "invalid_parameter", "post");
    expectEbbflowError(() => blendedThreshold({ ...base, pre: 1.5 }), "invalid_parameter", "pre");
    expectEbbflowError(() => blendedThreshold({ ...base, slow: { tau: -1 } }), "invalid_parameter", "slow.tau");
    expectEbbflowError(() => blendedThreshold({ ...base, bcm: { tau: 1, dt: Number.POSITIVE_INFINITY } }), "invalid_parameter", "bcm.dt");
    expectEbbflowError(() => blendedThreshold({ ...base, bcm: { tau: 1, dt: 3, method: "euler" } }), "invalid_parameter", "bcm.dt");
    expectEbbflowError(() => blendedThreshold({ ...base, dtype: "int8" as never }), "invalid_parameter", "dtype");
    expectEbbflowError(() => slowTraceThreshold({ tau: 0, n: 2 }), "invalid_parameter", "tau");
    expectEbbflowError(() => bcmThreshold({ tau: 1, n: -1 }), "invalid_parameter", "n");
    const m = blendedThreshold(base);
    expectEbbflowError(() => m.update(new Float64Array(5), new Float64Array(2)), "shape_mismatch", "coactivity");
    expectEbbflowError(() => m.update(new Float64Array(6).fill(1), new Float64Array(3)), "shape_mismatch", "postActivity");
    expect(Array.from(m.value)).toEqual([0, 0, 0, 0, 0, 0]);
  });
});
