import { describe, it, expect } from "vitest";
import { buildNetwork, Settler, clipKeepsFixedPoints, clippedLayers, createUnit, EbbflowError, type NetworkSpecInput } from "../../src/index.js";

/** 2 inputs → 3 hidden → 2 outputs on energy dynamics, driven hard enough that some states pass the bounds. */
const spec = (unit: "hard-sigmoid" | "logistic", clip?: boolean | "auto"): NetworkSpecInput => ({
  seed: 3,
  layers: [
    { name: "in", size: 2, role: "input" },
    { name: "h", size: 3, role: "hidden", unit: { kind: unit } },
    { name: "out", size: 2, role: "output", unit: { kind: unit } },
  ],
  connections: [
    { from: "in", to: "h", weights: [3, -2, -3, 2.5, 1, 1], feedback: { kind: "tied", gain: 1 } },
    { from: "h", to: "out", weights: [2, -1, 0.5, -2, 1, 0.3], feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { kind: "energy", dt: 0.5, maxSteps: 2000, tolerance: 1e-12, ...(clip === undefined ? {} : { clip }) },
});
const inputs = { in: [1, 0.5] };
const states = (s: ReturnType<Settler["settle"]>) => s.state.slice(1).flatMap((a) => Array.from(a));

describe("dynamics.clip", () => {
  it("which units clipping leaves fixed points alone for (analytic: ρ(u) = u at both bounds, flat beyond): the hard sigmoid only", () => {
    expect(clipKeepsFixedPoints(createUnit({ kind: "hard-sigmoid" }))).toBe(true);
    for (const kind of ["logistic", "tanh", "linear", "relu", "softplus"] as const) expect(clipKeepsFixedPoints(createUnit({ kind })), kind).toBe(false);
  });

  it('defaults to "auto": hard-sigmoid states on energy dynamics are clipped (they rest on the bounds and converge), exactly as clip: true', () => {
    const net = buildNetwork(spec("hard-sigmoid"));
    expect(net.spec.dynamics.clip).toBe("auto");
    expect(clippedLayers(net)).toEqual([false, true, true]);
    const s = new Settler(net, 1).settle({ phase: "free", inputs });
    expect(s.converged).toBe(true);
    const u = states(s);
    for (const v of u) expect(v >= 0 && v <= 1).toBe(true);
    expect(u.some((v) => v === 0 || v === 1)).toBe(true);
    expect(u).toEqual(states(new Settler(buildNetwork(spec("hard-sigmoid", true)), 1).settle({ phase: "free", inputs })));
  });

  it("without clipping the same hard-sigmoid net never settles: states chatter across the bounds (why the default is on)", () => {
    const s = new Settler(buildNetwork(spec("hard-sigmoid", false)), 1).settle({ phase: "free", inputs });
    expect(s.converged).toBe(false);
  });

  it('leaves smooth units alone under "auto" (same bits as clip: false; their states may leave [0, 1]); clip: true clips them too', () => {
    const auto = states(new Settler(buildNetwork(spec("logistic")), 1).settle({ phase: "free", inputs }));
    const off = states(new Settler(buildNetwork(spec("logistic", false)), 1).settle({ phase: "free", inputs }));
    expect(auto).toEqual(off);
    const on = states(new Settler(buildNetwork(spec("logistic", true)), 1).settle({ phase: "free", inputs }));
    for (const v of on) expect(v >= 0 && v <= 1).toBe(true);
  });

  it("rate dynamics clip nothing; a wrong value is refused at dynamics.clip", () => {
    expect(clippedLayers(buildNetwork({ ...spec("hard-sigmoid"), dynamics: { kind: "rate" } }))).toEqual([false, false, false]);
    try {
      buildNetwork({ ...spec("hard-sigmoid"), dynamics: { kind: "energy", clip: "yes" as never } });
      expect.unreachable();
    } catch (e) {
      expect((e as EbbflowError).path).toBe("dynamics.clip");
    }
  });
});
