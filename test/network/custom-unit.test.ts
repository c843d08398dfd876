/**
 * A user's unit kind (the scaled arctangent of test/helpers/arctan-unit.ts) named in a network
 * declaration: refused without the registry that has it (never replaced by another kind),
 * through a model file round trip bit for bit with it, and settling with its own fill on every
 * kernel backend.
 */
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  buildNetwork,
  EbbflowError,
  modelFromData,
  modelToJson,
  safeParseNetwork,
  Settler,
  typescriptBackend,
  UnitRegistry,
  builtinUnits,
  defineUnit,
  unitFromScalars,
  type KernelBackend,
  type Network,
  type NetworkSpecInput,
  type Snapshot,
} from "../../src/index.js";
import { z } from "zod";
import { wasmBackends } from "../kernels-wasm/backends.js";
import { arctanClassUnit, arctanRate, arctanSlope, arctanUnit } from "../helpers/arctan-unit.js";
import { check } from "../helpers/property.js";
import { thrown } from "../helpers/errors.js";

const units = builtinUnits.with(arctanUnit, arctanClassUnit);

const chain = (kind: string, dtype: "float32" | "float64" = "float64"): NetworkSpecInput => ({
  dtype,
  seed: 7,
  layers: [
    { name: "in", size: 4, role: "input" },
    { name: "hid", size: 5, role: "hidden", unit: { kind, gain: 1.3 } },
    { name: "out", size: 3, role: "output", unit: { kind } },
  ],
  connections: [
    { from: "in", to: "hid", feedback: { kind: "tied", gain: 1 } },
    { from: "hid", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.4, maxSteps: 60, tolerance: 1e-12 },
});
const inputs = { in: Float64Array.of(0.2, -1, 0.7, 0.05, 1, 0.3, -0.4, 0.9) };


function expectSameBits(a: ArrayLike<number>, b: ArrayLike<number>, label: string): void {
  expect(a.length, label).toBe(b.length);
  for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) expect.fail(`${label}[${i}]: ${a[i]} vs ${b[i]}`);
}

function expectSameState(a: Snapshot, b: Snapshot, label: string): void {
  a.activity.forEach((x, l) => expectSameBits(x, b.activity[l]!, `${label} activity[${l}]`));
  expect(a.steps, `${label} steps`).toBe(b.steps);
}

describe("a user's unit kind in a network declaration", () => {
  it("without the registry that has it: unknown_name at layers[i].unit.kind, naming the kind, with the other problems", () => {
    const err = thrown(() => buildNetwork(chain("arctan")));
    expect(err.code).toBe("unknown_name");
    expect(err.path).toBe("layers[1].unit.kind");
    expect(err.received).toBe('"arctan"');
    expect(err.expected).toMatch(/register/);
    const r = safeParseNetwork({ ...chain("arctan"), dynamics: { dt: -1 } });
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.issues.map((i) => i.path)).toEqual(["layers[1].unit.kind", "layers[2].unit.kind", "dynamics.dt"]);
  });

  it("with it: built, and its parameters checked at their path (invalid_config, as every bad value of a declaration)", () => {
    const net = buildNetwork(chain("arctan"), { units });
    expect(net.layer("hid").unit.spec).toEqual({ kind: "arctan", gain: 1.3 });
    expect(net.spec.layers[2]!.unit).toEqual({ kind: "arctan" }); // the declaration keeps the spec as written
    const r = safeParseNetwork({ ...chain("arctan"), layers: [{ name: "in", size: 1, role: "input" }, { name: "o", size: 1, role: "output", unit: { kind: "arctan", gain: "steep" } }], connections: [{ from: "in", to: "o" }] }, units);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.issues.map((i) => [i.code, i.path])).toEqual([["invalid_config", "layers[1].unit.gain"]]);
  });

  it("a copy, a change of dynamics and a model file round trip keep the kind and every bit; a model read without the registry is refused, naming the kind", () => {
    const net = buildNetwork(chain("arctan"), { units });
    const text = modelToJson(net);
    const back = modelFromData(text, { units });
    back.connections.forEach((c, i) => expectSameBits(c.weights, net.connections[i]!.weights, `weights ${c.label}`));
    back.layers.forEach((l, i) => expectSameBits(l.bias, net.layers[i]!.bias, `bias ${l.name}`));
    expect(back.layers.map((l) => l.unit.spec)).toEqual(net.layers.map((l) => l.unit.spec));
    expectSameState(new Settler(back, 2).settle({ phase: "free", inputs }), new Settler(net, 2).settle({ phase: "free", inputs }), "round trip");
    const slower = net.withDynamics({ dt: 0.2 });
    expect(slower.layer("out").unit.spec.kind).toBe("arctan");
    expect(slower.units).toBe(units);
    const err = thrown(() => modelFromData(text));
    expect(err.code).toBe("unknown_name");
    expect(err.path).toBe("network.layers[1].unit.kind");
    expect(err.message).toContain('"arctan"');
  });
});

/** Dyadic values k/8: every product and sum of the drive below is exact, in any order, in float32 and float64. */
const dyadic = (max: number) => fc.integer({ min: -max, max }).map((k) => k / 8);

describe("a user's unit kind on every kernel backend", () => {
  const backends: readonly KernelBackend[] = [typescriptBackend, ...wasmBackends];

  it("settles bit for bit alike on the TypeScript and WebAssembly backends, and like the same math with hand-written fills (free and nudged phases)", () => {
    // one free layer fed by clamped inputs: its net input is exact, so the settled states depend
    // only on the unit's fill and the elementwise kernels (bit-identical across backends)
    const netArb = fc.record({
      nIn: fc.integer({ min: 1, max: 6 }),
      nOut: fc.integer({ min: 1, max: 7 }),
      batch: fc.integer({ min: 1, max: 3 }),
      dtype: fc.constantFrom<"float32" | "float64">("float32", "float64"),
      gain: fc.constantFrom(0.5, 1, 2.5),
      seed: fc.integer({ min: 0, max: 1000 }),
    });
    check(
      fc.property(
        netArb.chain((p) =>
          fc.record({
            p: fc.constant(p),
            w: fc.array(dyadic(16), { minLength: p.nIn * p.nOut, maxLength: p.nIn * p.nOut }),
            bias: fc.array(dyadic(8), { minLength: p.nOut, maxLength: p.nOut }),
            x: fc.array(dyadic(8), { minLength: p.batch * p.nIn, maxLength: p.batch * p.nIn }),
            t: fc.array(dyadic(8), { minLength: p.batch * p.nOut, maxLength: p.batch * p.nOut }),
            beta: fc.constantFrom(0.5, -0.25, 1),
          }),
        ),
        ({ p, w, bias, x, t, beta }) => {
          const spec = (kind: string): NetworkSpecInput => ({
            dtype: p.dtype,
            seed: p.seed,
            layers: [
              { name: "in", size: p.nIn, role: "input" },
              { name: "out", size: p.nOut, role: "output", unit: { kind, gain: p.gain }, bias },
            ],
            connections: [{ from: "in", to: "out", weights: w }],
            dynamics: { dt: 0.3, maxSteps: 25, tolerance: 1e-14 },
          });
          const phases = (net: Network) => {
            const s = new Settler(net, p.batch);
            const free = s.settle({ phase: "free", inputs: { in: x } });
            const nudged = s.settle({ phase: "nudged", inputs: { in: x }, targets: { out: t }, beta });
            return [free, nudged] as const;
          };
          const want = phases(buildNetwork(spec("arctan-class"), { units }));
          for (const be of backends) {
            for (const kind of ["arctan", "arctan-class"]) {
              const got = phases(buildNetwork(spec(kind), { units, backend: be }));
              expectSameState(got[0], want[0], `${be.name} ${kind} free`);
              expectSameState(got[1], want[1], `${be.name} ${kind} nudged`);
            }
          }
          // and the free phase is the arctangent's own recurrence, written out here: the exact net input
          // eta = bias + W x, then x <- x + dt (f(eta) - x) for the steps taken, each kernel's result rounded to the dtype
          const round = p.dtype === "float32" ? Math.fround : (v: number) => v;
          const free = want[0];
          for (let b = 0; b < p.batch; b++) {
            for (let j = 0; j < p.nOut; j++) {
              let eta = bias[j]!;
              for (let i = 0; i < p.nIn; i++) eta += w[j * p.nIn + i]! * x[b * p.nIn + i]!;
              const f = round(arctanRate(eta, p.gain));
              let s = 0;
              for (let k = 0; k < free.steps; k++) s = round(s + 0.3 * round(f - s));
              expect(free.activity[1]![b * p.nOut + j]).toBe(s);
            }
          }
        },
      ),
      40,
    );
  });

  it("named like a built-in kind in a registry of its own, it still runs its own fill on the WebAssembly backends (never the built-in's kernel)", () => {
    // a registry without the built-in kinds, whose "logistic" is the arctangent
    const impostor = defineUnit({
      kind: "logistic",
      schema: z.object({ kind: z.literal("logistic"), gain: z.number().default(1) }).strict(),
      summary: "the arctangent under another name",
      create: (spec) => unitFromScalars(spec, { lower: 0, upper: 1, value: (v) => arctanRate(v, spec.gain), slope: (v) => arctanSlope(v, spec.gain) }),
    });
    const own = UnitRegistry.empty.with(impostor);
    const spec = chain("logistic");
    const ts = new Settler(buildNetwork(spec, { units: own }), 2).settle({ phase: "free", inputs });
    for (const be of wasmBackends) {
      const net = buildNetwork(spec, { units: own, backend: be });
      expect(net.layer("out").unit.kernel).toBeUndefined();
      const got = new Settler(net, 2).settle({ phase: "free", inputs });
      got.activity.forEach((a, l) => a.forEach((v, i) => expect(Math.abs(v - ts.activity[l]![i]!)).toBeLessThan(1e-12)));
    }
    const real = new Settler(buildNetwork(spec), 2).settle({ phase: "free", inputs });
    expect(Math.abs(real.activity[2]![0]! - ts.activity[2]![0]!)).toBeGreaterThan(1e-3);
  });

  it("in a deeper network with feedback: lifted and hand-written fills agree bit for bit on each backend, and the backends agree to rounding", () => {
    for (const dtype of ["float64", "float32"] as const) {
      const ref = new Settler(buildNetwork(chain("arctan", dtype), { units }), 2).settle({ phase: "free", inputs });
      for (const be of backends) {
        const lifted = new Settler(buildNetwork(chain("arctan", dtype), { units, backend: be }), 2).settle({ phase: "free", inputs });
        const written = new Settler(buildNetwork(chain("arctan-class", dtype), { units, backend: be }), 2).settle({ phase: "free", inputs });
        expectSameState(lifted, written, `${be.name} ${dtype}`);
        const tol = dtype === "float64" ? 1e-12 : 1e-5;
        lifted.activity.forEach((a, l) => a.forEach((v, i) => expect(Math.abs(v - ref.activity[l]![i]!), `${be.name} ${dtype} layer ${l}`).toBeLessThan(tol)));
      }
    }
  });
});
