import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { buildNetwork, createRule, ParameterDelta, Snapshot, parseRule, Settler } from "../../src/index.js";
import { generecFromSnapshots } from "../../src/rules/contrastive.js";
import { allocate } from "../../src/types/index.js";
import { check } from "../helpers/property.js";
import { expectClose } from "../helpers/tolerance.js";

/** A 1→1 network and hand-set snapshots: x = sending, y = receiving. */
function pair(xm: number, xp: number, ym: number, yp: number) {
  const net = buildNetwork({
    layers: [
      { name: "x", size: 1, role: "input" },
      { name: "y", size: 1, role: "output" },
    ],
    connections: [{ from: "x", to: "y", weights: [0] }],
  });
  const minus = new Snapshot(net, 1);
  const plus = new Snapshot(net, 1);
  minus.activity[0]![0] = xm;
  minus.activity[1]![0] = ym;
  plus.activity[0]![0] = xp;
  plus.activity[1]![0] = yp;
  return { net, minus, plus };
}

function generec(variant: "basic" | "symmetric" | "midpoint" | "symmetric-midpoint", xm: number, xp: number, ym: number, yp: number): number {
  const { net, minus, plus } = pair(xm, xp, ym, yp);
  const cfg = parseRule({ rule: "generec", variant, rate: 1 }) as Extract<ReturnType<typeof parseRule>, { rule: "generec" }>;
  const out = generecFromSnapshots(net, cfg, minus, plus, 1, new ParameterDelta(net), [allocate("float64", 1), allocate("float64", 1)], [allocate("float64", 1), allocate("float64", 1)]);
  return out.weights[0]![0]!;
}

describe("GeneRec and CHL arithmetic", () => {
  it("GeneRec variants give the check values of methods.md item 2 [DER] (x- 0.2, x+ 0.4, y- 0.5, y+ 0.8)", () => {
    expectClose(generec("basic", 0.2, 0.4, 0.5, 0.8), 0.06, 1e-15);
    expectClose(generec("symmetric", 0.2, 0.4, 0.5, 0.8), 0.16, 1e-15);
    expectClose(generec("midpoint", 0.2, 0.4, 0.5, 0.8), 0.09, 1e-15);
    expectClose(generec("symmetric-midpoint", 0.2, 0.4, 0.5, 0.8), 0.22, 1e-15);
    // CHL = x+y+ - x-y- = 0.4*0.8 - 0.2*0.5
    expectClose(0.4 * 0.8 - 0.2 * 0.5, 0.22, 1e-15);
  });

  it("symmetric + midpoint GeneRec equals CHL for every value (O'Reilly 1996 abstract; methods.md item 2 [DER] identity)", () => {
    check(
      fc.property(fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), (xm, xp, ym, yp) => {
        expectClose(generec("symmetric-midpoint", xm, xp, ym, yp), xp * yp - xm * ym, 1e-14);
      }),
    );
  });

  it("when the sending unit does not change, basic, symmetric, midpoint and CHL all give x (y+ - y-) (methods.md item 2 [DER])", () => {
    check(
      fc.property(fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), (x, ym, yp) => {
        const want = x * (yp - ym);
        for (const v of ["basic", "symmetric", "midpoint", "symmetric-midpoint"] as const) expectClose(generec(v, x, x, ym, yp), want, 1e-14);
      }),
    );
  });

  it("the symmetric variant is invariant under swapping sending and receiving roles (methods.md item 2 [DER])", () => {
    check(
      fc.property(fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0, max: 1, noNaN: true }), (xm, xp, ym, yp) => {
        expectClose(generec("symmetric", xm, xp, ym, yp), generec("symmetric", ym, yp, xm, xp), 1e-14);
      }),
    );
  });

  it("CHL on the 3-unit network gives dw01, dw02, dw12 and J of methods.md item 1 [DER, numerically verified]", () => {
    const net = buildNetwork({
      layers: [
        { name: "in", size: 1, role: "input" },
        { name: "hidden", size: 1, role: "hidden", bias: 0.1 },
        { name: "out", size: 1, role: "output", bias: -0.2 },
      ],
      connections: [
        { from: "in", to: "hidden", weights: [0.5], feedback: { kind: "tied", gain: 1 } },
        { from: "in", to: "out", weights: [-0.3], feedback: { kind: "tied", gain: 1 } },
        { from: "hidden", to: "out", weights: [0.8], feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: { dt: 0.5, maxSteps: 5000, tolerance: 1e-15 },
    });
    const batch = { inputs: { in: [1] }, targets: { out: [0.9] } };
    const d = createRule(net, { rule: "chl", rate: 1 }).computeDelta(batch, new ParameterDelta(net));
    expectClose(d.weights[0]![0]!, 0.0546950615, 1e-9, "dw01");
    expectClose(d.weights[1]![0]!, 0.3781166598, 1e-9, "dw02");
    expectClose(d.weights[2]![0]!, 0.3269471922, 1e-9, "dw12");
    // contrastive objective J = E(s+) - E(s-), E = -½ Σ w s s - Σ b s + Σ G(s), G(s) = s ln s + (1-s) ln(1-s) for units 1, 2
    const s = new Settler(net, 1);
    const E = (h: number, o: number) => {
      const G = (v: number) => v * Math.log(v) + (1 - v) * Math.log(1 - v);
      return -(0.5 * h + -0.3 * o + 0.8 * h * o) - (0.1 * h - 0.2 * o) + G(h) + G(o);
    };
    const m = s.settle({ phase: "free", inputs: { in: [1] }, tolerance: 1e-15, maxSteps: 5000 });
    const hm = m.activity[1]![0]!;
    const om = m.activity[2]![0]!;
    const p = s.settle({ phase: "clamped", inputs: { in: [1] }, targets: { out: [0.9] }, tolerance: 1e-15, maxSteps: 5000 });
    expectClose(E(p.activity[1]![0]!, 0.9) - E(hm, om), 0.3254959232, 1e-9, "J");
  });

  it("CHL is zero when both phases agree (methods.md item 1 [DER] property)", () => {
    const { net, minus } = pair(0.3, 0.3, 0.7, 0.7);
    const cfg = parseRule({ rule: "generec", variant: "symmetric-midpoint", rate: 1 }) as Extract<ReturnType<typeof parseRule>, { rule: "generec" }>;
    const out = generecFromSnapshots(net, cfg, minus, minus, 1, new ParameterDelta(net), [allocate("float64", 1), allocate("float64", 1)], [allocate("float64", 1), allocate("float64", 1)]);
    expect(out.weights[0]![0]).toBe(0);
  });
});
