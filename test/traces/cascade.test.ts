import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { exponentialTrace, traceCascade, vectorCascade, type CascadeOrdering, type TraceMethod } from "../../src/traces/index.js";
import { check } from "../helpers/property.js";
import { expectClose, EPS64 } from "../helpers/tolerance.js";
import { expectEbbflowError } from "./expect-error.js";

/** Binomial coefficient C(n, k) (exact for the small arguments used here). */
function binomial(n: number, k: number): number {
  if (k < 0 || k > n) return 0;
  let r = 1;
  for (let i = 1; i <= k; i++) r = (r * (n - k + i)) / i;
  return r;
}

/** Discrete impulse response read after each update (unit impulse at update 0). */
function impulse(stages: number, ordering: CascadeOrdering, a: number, length: number): number[] {
  // a is realised exactly as an Euler coefficient dt/tau with dt = a, tau = 1
  const c = traceCascade({ tau: 1, dt: a, method: "euler", stages, ordering });
  const out: number[] = [];
  for (let j = 0; j < length; j++) out.push(c.update(j === 0 ? 1 : 0));
  return out;
}

const orderingArb = fc.constantFrom<CascadeOrdering>("no-delay", "delayed");
const methodArb = fc.constantFrom<TraceMethod>("exact", "euler");

describe("traceCascade: discrete impulse responses", () => {
  it("no-delay cascade with a = 0.2 matches the tabulated impulse responses for n = 1, 2, 3", () => {
    // methods.md item 13 [DER]: discrete no-delay cascade, a = 0.2
    const table: Record<number, number[]> = {
      1: [0.2, 0.16, 0.128, 0.1024],
      2: [0.04, 0.064, 0.0768, 0.08192],
      3: [0.008, 0.0192, 0.03072, 0.04096],
    };
    for (const n of [1, 2, 3]) {
      const h = impulse(n, "no-delay", 0.2, 4);
      for (let k = 0; k < 4; k++) expectClose(h[k] as number, table[n]![k] as number, 1e-12, `h_${n}[${k}]`);
    }
  });

  it("no-delay impulse response equals C(k+n-1, n-1) a^n (1-a)^k", () => {
    // methods.md item 13 [DER]: h_n[k] = C(k+n-1, n-1) a^n (1-a)^k, k >= 0
    check(
      fc.property(fc.double({ min: 0.01, max: 0.99, noNaN: true }), fc.integer({ min: 1, max: 6 }), (a, n) => {
        const h = impulse(n, "no-delay", a, 40);
        for (let k = 0; k < 40; k++) expectClose(h[k] as number, binomial(k + n - 1, n - 1) * a ** n * (1 - a) ** k, 1e-12, `h_${n}[${k}]`);
      }),
    );
  });

  it("delayed impulse response equals C(m-1, n-1) a^n (1-a)^(m-n) at time index m = j + 1", () => {
    // methods.md item 13 [DER]: delayed stage, h_n[m] = C(m-1, n-1) a^n (1-a)^(m-n), m >= n (0 before)
    check(
      fc.property(fc.double({ min: 0.01, max: 0.99, noNaN: true }), fc.integer({ min: 1, max: 6 }), (a, n) => {
        const h = impulse(n, "delayed", a, 40);
        for (let j = 0; j < 40; j++) {
          const m = j + 1;
          const expected = m >= n ? binomial(m - 1, n - 1) * a ** n * (1 - a) ** (m - n) : 0;
          expectClose(h[j] as number, expected, 1e-12, `h_${n}[${m}]`);
        }
      }),
    );
  });

  it("every discrete impulse response sums to 1 (unit DC gain)", () => {
    // methods.md item 13 [DER]: each cascade sums to 1 (H(1) = 1 for every stage)
    check(
      fc.property(fc.double({ min: 0.05, max: 0.95, noNaN: true }), fc.integer({ min: 1, max: 5 }), orderingArb, (a, n, ordering) => {
        // the tail after L steps is below C(L+n, n) (1-a)^L; 2000 steps make it negligible for a >= 0.05
        const h = impulse(n, ordering, a, 2000);
        expectClose(h.reduce((s, v) => s + v, 0), 1, 1e-12, "sum h");
      }),
    );
  });

  it("no-delay cascade equals a chain of scalar traces, each fed the previous one's new output", () => {
    // definition of the no-delay ordering (methods.md item 13: y[k] = (1-a) y[k-1] + a x[k] per stage)
    check(
      fc.property(
        fc.double({ min: 0.6, max: 50, noNaN: true }),
        methodArb,
        fc.integer({ min: 1, max: 5 }),
        fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: 1, maxLength: 40 }),
        (tau, method, n, xs) => {
          const c = traceCascade({ tau, method, stages: n });
          const chain = Array.from({ length: n }, () => exponentialTrace({ tau, method }));
          for (const x of xs) {
            c.update(x);
            let v = x;
            for (const t of chain) v = t.update(v);
            for (let k = 1; k <= n; k++) expect(c.stage(k)).toBe(chain[k - 1]!.value);
          }
        },
      ),
    );
  });
});

describe("traceCascade: continuous limit (gamma kernel)", () => {
  /** Peak of the response to an impulse of area 1 (x = 1/dt for one step), tau = 10. */
  function peak(stages: number, ordering: CascadeOrdering, dt: number): { value: number; time: number } {
    const c = traceCascade({ tau: 10, dt, stages, ordering });
    let value = -1;
    let time = -1;
    const steps = Math.round(50 / dt);
    for (let j = 0; j < steps; j++) {
      const y = c.update(j === 0 ? 1 / dt : 0);
      if (y > value) {
        value = y;
        time = (ordering === "delayed" ? j + 1 : j) * dt;
      }
    }
    return { value, time };
  }

  it("h_2 peaks at t = tau = 10 with value 1/(10 e) = 0.036787944 as dt -> 0", () => {
    // methods.md item 13 [DER]: gamma kernel n = 2 (alpha kernel), peak 1/(e tau) at t = tau
    for (const ordering of ["no-delay", "delayed"] as const) {
      for (const dt of [0.1, 0.01]) {
        const p = peak(2, ordering, dt);
        expectClose(p.value, 0.036787944, dt * 1e-4, `${ordering} dt=${dt} peak`);
        expect(Math.abs(p.time - 10)).toBeLessThanOrEqual(2 * dt);
      }
    }
  });

  it("h_3 peaks at t = 2 tau = 20 with value 0.027067057 as dt -> 0", () => {
    // methods.md item 13 [DER]: gamma kernel n = 3, peak at (n-1) tau
    for (const ordering of ["no-delay", "delayed"] as const) {
      for (const dt of [0.1, 0.01]) {
        const p = peak(3, ordering, dt);
        expectClose(p.value, 0.027067057, dt * 1e-4, `${ordering} dt=${dt} peak`);
        expect(Math.abs(p.time - 20)).toBeLessThanOrEqual(3 * dt);
      }
    }
  });

  it("step responses at t = tau converge to 0.632120559, 0.264241118, 0.080301397 (n = 1, 2, 3) at first order in dt", () => {
    // methods.md item 13 [DER]: step response 1 - exp(-t/tau) sum_{k<n} (t/tau)^k / k!, at t = tau
    const reference = [0.632120559, 0.264241118, 0.080301397];
    for (const ordering of ["no-delay", "delayed"] as const) {
      for (let n = 1; n <= 3; n++) {
        const errors = [0.1, 0.01, 0.001].map((dt) => {
          const c = traceCascade({ tau: 10, dt, stages: n, ordering });
          const steps = Math.round(10 / dt);
          for (let j = 0; j < steps; j++) c.update(1);
          return Math.abs(c.value - (reference[n - 1] as number));
        });
        if (n === 1) {
          // one exact stage is exact at the sample times (tabulated value rounded to 9 digits)
          for (const e of errors) expect(e).toBeLessThan(1e-9);
        } else {
          // first order: the error shrinks about tenfold per tenfold smaller dt
          expect(errors[2]).toBeLessThan(5e-5);
          for (let i = 1; i < 3; i++) {
            const ratio = (errors[i - 1] as number) / (errors[i] as number);
            expect(ratio).toBeGreaterThan(8);
            expect(ratio).toBeLessThan(12);
          }
        }
      }
    }
  });

  it("the continuous step response at t = tau lies between the no-delay and delayed orderings", () => {
    // methods.md item 13 [DER] values; the two orderings lead and lag by one step per extra stage
    const reference = [0.264241118, 0.080301397];
    for (const n of [2, 3]) {
      const run = (ordering: CascadeOrdering) => {
        const c = traceCascade({ tau: 10, dt: 0.05, stages: n, ordering });
        for (let j = 0; j < 200; j++) c.update(1);
        return c.value;
      };
      expect(run("no-delay")).toBeGreaterThan(reference[n - 2] as number);
      expect(run("delayed")).toBeLessThan(reference[n - 2] as number);
    }
  });
});

describe("traceCascade: properties", () => {
  it("every stage stays within the range of the initial state and the inputs", () => {
    // methods.md item 13 [DER]: each stage is a convex combination for 0 < a <= 1
    check(
      fc.property(
        fc.double({ min: 0.5, max: 50, noNaN: true }),
        orderingArb,
        fc.integer({ min: 1, max: 5 }),
        fc.double({ min: -100, max: 100, noNaN: true }),
        fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { minLength: 1, maxLength: 40 }),
        (tau, ordering, n, y0, xs) => {
          const c = traceCascade({ tau, stages: n, ordering, initial: y0 });
          let lo = y0;
          let hi = y0;
          for (const x of xs) {
            lo = Math.min(lo, x);
            hi = Math.max(hi, x);
            c.update(x);
            for (let k = 1; k <= n; k++) {
              expect(c.stage(k)).toBeGreaterThanOrEqual(lo - 1e3 * EPS64);
              expect(c.stage(k)).toBeLessThanOrEqual(hi + 1e3 * EPS64);
            }
          }
        },
      ),
    );
  });

  it("a constant input equal to the state is an exact fixed point of every stage", () => {
    // methods.md item 13 [DER]: x = y is an equilibrium of each stage
    check(
      fc.property(fc.double({ min: 0.6, max: 50, noNaN: true }), orderingArb, methodArb, fc.integer({ min: 1, max: 5 }), fc.double({ min: -1e3, max: 1e3, noNaN: true }), (tau, ordering, method, n, c0) => {
        const c = traceCascade({ tau, stages: n, ordering, method, initial: c0 });
        for (let j = 0; j < 10; j++) expect(c.update(c0) === c0).toBe(true);
      }),
    );
  });

  it("is linear (superposition) in the input and initial state", () => {
    // linear time-invariant recursion (methods.md item 13 [DER])
    check(
      fc.property(
        fc.double({ min: 0.5, max: 50, noNaN: true }),
        orderingArb,
        fc.integer({ min: 1, max: 4 }),
        fc.double({ min: -5, max: 5, noNaN: true }),
        fc.array(fc.tuple(fc.double({ min: -10, max: 10, noNaN: true }), fc.double({ min: -10, max: 10, noNaN: true })), { minLength: 1, maxLength: 30 }),
        (tau, ordering, n, alpha, pairs) => {
          const cx = traceCascade({ tau, stages: n, ordering, initial: 1 });
          const cz = traceCascade({ tau, stages: n, ordering, initial: -2 });
          const cs = traceCascade({ tau, stages: n, ordering, initial: alpha * 1 + -2 });
          for (const [x, z] of pairs) {
            const s = cs.update(alpha * x + z);
            expect(Math.abs(s - (alpha * cx.update(x) + cz.update(z)))).toBeLessThanOrEqual(1e-12 * 100);
          }
        },
      ),
    );
  });
});

describe("vectorCascade", () => {
  it("a float64 bank equals n scalar cascades bit for bit, on every stage", () => {
    // the vector step is the scalar cascade step per unit (methods.md item 13)
    check(
      fc.property(
        fc.double({ min: 0.6, max: 50, noNaN: true }),
        orderingArb,
        methodArb,
        fc.integer({ min: 1, max: 4 }),
        fc.integer({ min: 1, max: 6 }),
        fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: 6 * 15, maxLength: 6 * 15 }),
        (tau, ordering, method, stages, n, flat) => {
          const bank = vectorCascade({ tau, ordering, method, stages, n });
          const scalars = Array.from({ length: n }, () => traceCascade({ tau, ordering, method, stages }));
          const input = new Float64Array(n);
          for (let step = 0; step < 15; step++) {
            for (let i = 0; i < n; i++) input[i] = flat[step * 6 + i] as number;
            const out = bank.update(input);
            expect(out).toBe(bank.value);
            expect(out).toBe(bank.stage(stages));
            for (let i = 0; i < n; i++) {
              const s = scalars[i]!;
              s.update(input[i] as number);
              for (let k = 1; k <= stages; k++) expect(bank.stage(k)[i]).toBe(s.stage(k));
            }
          }
        },
      ),
    );
  });

  it("a float32 bank reproduces the tabulated impulse response within float32 rounding", () => {
    // methods.md item 13 [DER]: a = 0.2, n = 3: 0.008, 0.0192, 0.03072, 0.04096
    const c = vectorCascade({ tau: 5, dt: 1, method: "euler", stages: 3, n: 2, dtype: "float32" });
    const expected = [0.008, 0.0192, 0.03072, 0.04096];
    for (let j = 0; j < 4; j++) {
      const out = c.update(new Float32Array(j === 0 ? [1, 2] : [0, 0]));
      expect(out).toBeInstanceOf(Float32Array);
      expectClose(out[0] as number, expected[j] as number, 1e-7, `h[${j}]`);
      expectClose(out[1] as number, 2 * (expected[j] as number), 2e-7, `2h[${j}]`);
    }
  });

  it("saveState/loadState round-trip; loadState validates the shape and values", () => {
    const c = vectorCascade({ tau: 3, stages: 2, n: 3, ordering: "delayed" });
    c.update(new Float64Array([1, 2, 3]));
    c.update(new Float64Array([0, 1, 0]));
    const saved = JSON.parse(JSON.stringify(c.saveState())) as ReturnType<typeof c.saveState>;
    expect(saved.stages.length).toBe(2);
    const next = Float64Array.from(c.update(new Float64Array([5, 5, 5])));
    c.loadState(saved);
    expect(Array.from(c.update(new Float64Array([5, 5, 5])))).toEqual(Array.from(next));
    const before = Float64Array.from(c.stage(1));
    expectEbbflowError(() => c.loadState({ stages: [[1, 2, 3]] }), "shape_mismatch", "state.stages");
    expectEbbflowError(() => c.loadState({ stages: [[1, 2, 3], [1, 2]] }), "shape_mismatch", "state.stages[1]");
    expectEbbflowError(() => c.loadState({ stages: [[1, 2, 3], [1, 2, Number.NaN]] }), "invalid_parameter", "state.stages[1][2]");
    expect(Array.from(c.stage(1))).toEqual(Array.from(before));
    c.reset(0.5);
    expect(Array.from(c.stage(1))).toEqual([0.5, 0.5, 0.5]);
    expect(Array.from(c.stage(2))).toEqual([0.5, 0.5, 0.5]);
  });

  it("scalar cascade state round-trips and reset fills every stage", () => {
    const c = traceCascade({ tau: 3, stages: 3 });
    c.update(1);
    const saved = c.saveState();
    expect(saved.stages.map((s) => s.length)).toEqual([1, 1, 1]);
    const next = c.update(0);
    c.loadState(saved);
    expect(c.update(0)).toBe(next);
    c.reset(2);
    expect(Array.from(c.outputs)).toEqual([2, 2, 2]);
    expect(c.value).toBe(2);
  });

  it("rejects bad parameters naming them", () => {
    expectEbbflowError(() => traceCascade({ tau: 1, stages: 0 }), "invalid_parameter", "stages");
    expectEbbflowError(() => traceCascade({ tau: 1, stages: 1.5 }), "invalid_parameter", "stages");
    expectEbbflowError(() => traceCascade({ tau: -2, stages: 2 }), "invalid_parameter", "tau");
    expectEbbflowError(() => traceCascade({ tau: 1, dt: Number.NaN, stages: 2 }), "invalid_parameter", "dt");
    expectEbbflowError(() => traceCascade({ tau: 1, stages: 2, ordering: "late" as never }), "invalid_parameter", "ordering");
    expectEbbflowError(() => traceCascade({ tau: 1, stages: 2 }).stage(3), "invalid_parameter", "k");
    expectEbbflowError(() => traceCascade({ tau: 1, stages: 2 }).stage(0), "invalid_parameter", "k");
    expectEbbflowError(() => vectorCascade({ tau: 1, stages: 2, n: 0 }), "invalid_parameter", "n");
    expectEbbflowError(() => vectorCascade({ tau: 1, stages: 2, n: 2 }).update(new Float64Array(3)), "shape_mismatch", "input");
  });
});
