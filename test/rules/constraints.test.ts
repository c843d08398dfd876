import { describe, it, expect } from "vitest";
import { buildNetwork, createRule, parseRule, applyDelta, ParameterDelta, EbbflowError, type NetworkSpecInput } from "../../src/index.js";

const base = (extra: Partial<{ sign: "any" | "excitatory" | "inhibitory"; bounds: "none" | "soft"; frozen: boolean; rate: number }> = {}): NetworkSpecInput => ({
  seed: 3,
  layers: [
    { name: "in", size: 3, role: "input" },
    { name: "h", size: 4, role: "hidden" },
    { name: "out", size: 2, role: "output" },
  ],
  connections: [
    { from: "in", to: "h", feedback: { kind: "tied", gain: 1 }, ...extra },
    { from: "h", to: "out", feedback: { kind: "tied", gain: 1 } },
  ],
});
const batch = { inputs: { in: [1, 0, 1, 0, 1, 1] }, targets: { out: [1, 0, 0, 1] } };

function errorOf(f: () => unknown): EbbflowError {
  try {
    f();
  } catch (e) {
    if (e instanceof EbbflowError) return e;
    throw e;
  }
  throw new Error("expected an EbbflowError");
}

describe("rule configs", () => {
  it("an unknown rule name is reported with its path and the names that exist", () => {
    const e = errorOf(() => parseRule({ rule: "hebbian-magic", rate: 1 }));
    expect(e.path).toBe("rule.rule");
    expect(e.expected).toMatch(/chl/);
    expect(e.received).toBe('"hebbian-magic"');
  });

  it("missing or out-of-range parameters are all reported at once: rate <= 0, β = 0, γ < 0, trough outside (0, 1)", () => {
    expect(errorOf(() => parseRule({ rule: "chl" })).path).toBe("rule.rate");
    expect(errorOf(() => parseRule({ rule: "chl", rate: 0 })).path).toBe("rule.rate");
    expect(errorOf(() => parseRule({ rule: "chl", rate: -1 })).path).toBe("rule.rate");
    const both = errorOf(() => parseRule({ rule: "eqprop", beta: 0, rate: -0.1 }));
    expect(both.issues.map((i) => i.path).sort()).toEqual(["rule.beta", "rule.rate"]);
    expect(errorOf(() => parseRule({ rule: "xie-seung", rate: 1, gamma: -0.5 })).path).toBe("rule.gamma");
    expect(errorOf(() => parseRule({ rule: "calcium", rate: 1, trough: 1.5 })).path).toBe("rule.trough");
    expect(errorOf(() => parseRule({ rule: "chl", rate: 1, colour: 3 })).path).toBe("rule.colour");
  });

  it("a per-connection rate override must name a connection", () => {
    const net = buildNetwork(base());
    expect(errorOf(() => createRule(net, { rule: "chl", rate: 1, rates: { "in->nowhere": 2 } })).path).toBe('rule.rates["in->nowhere"]');
  });

  it("a rule that needs what the network does not provide names the network path (feedforward rules and lateral connections)", () => {
    const net = buildNetwork({
      layers: [
        { name: "in", size: 2, role: "input" },
        { name: "out", size: 2, role: "output" },
      ],
      connections: [
        { from: "in", to: "out" },
        { from: "out", to: "out" },
      ],
    });
    expect(errorOf(() => createRule(net, { rule: "backprop", rate: 1 })).path).toBe("connections[1]");
  });
});

describe("constraints and overrides", () => {
  it("per-connection rate overrides scale that connection's change only", () => {
    const net = buildNetwork(base());
    const a = createRule(net, { rule: "chl", rate: 0.1 }).computeDelta(batch, new ParameterDelta(net));
    const b = createRule(net, { rule: "chl", rate: 0.1, rates: { "in->h": 0.3 } }).computeDelta(batch, new ParameterDelta(net));
    b.weights[0]!.forEach((v, i) => expect(v).toBeCloseTo(3 * a.weights[0]![i]!, 14));
    expect(Array.from(b.weights[1]!)).toEqual(Array.from(a.weights[1]!));
  });

  it("the connection's own rate multiplier applies on top of the rule's rate", () => {
    const a = buildNetwork(base());
    const b = buildNetwork(base({ rate: 2 }));
    const da = createRule(a, { rule: "generec", rate: 0.1 }).computeDelta(batch, new ParameterDelta(a));
    const db = createRule(b, { rule: "generec", rate: 0.1 }).computeDelta(batch, new ParameterDelta(b));
    db.weights[0]!.forEach((v, i) => expect(v).toBeCloseTo(2 * da.weights[0]![i]!, 14));
  });

  it("frozen connections never change; other connections and biases do", () => {
    const net = buildNetwork(base({ frozen: true }));
    const before = Array.from(net.connections[0]!.weights);
    const before2 = Array.from(net.connections[1]!.weights);
    const rule = createRule(net, { rule: "chl", rate: 0.5 });
    for (let i = 0; i < 5; i++) rule.step(batch);
    expect(Array.from(net.connections[0]!.weights)).toEqual(before);
    expect(Array.from(net.connections[1]!.weights)).not.toEqual(before2);
  });

  it("sign-constrained weights stay on their side of zero under any rule (Dale's principle)", () => {
    for (const sign of ["excitatory", "inhibitory"] as const) {
      for (const rule of [{ rule: "chl", rate: 5 }, { rule: "eqprop", beta: 0.5, rate: 5 }, { rule: "backprop", rate: 5 }] as const) {
        const net = buildNetwork(base({ sign }));
        const r = createRule(net, rule);
        for (let i = 0; i < 20; i++) r.step(batch);
        const w = Array.from(net.connections[0]!.weights);
        expect(w.every((v) => (sign === "excitatory" ? v >= 0 : v <= 0))).toBe(true);
      }
    }
  });

  it("soft-bounded weights stay in [0, 1] and approach the bounds multiplicatively", () => {
    const net = buildNetwork(base({ sign: "excitatory", bounds: "soft" }));
    const r = createRule(net, { rule: "chl", rate: 20 });
    for (let i = 0; i < 30; i++) r.step(batch);
    expect(Array.from(net.connections[0]!.weights).every((v) => v >= 0 && v <= 1)).toBe(true);
    // a single large step of +10 from w moves it to w + 10 (1 - w) clipped at 1; of -10 to w - 10 w clipped at 0
    const d = new ParameterDelta(net).clear();
    net.connections[0]!.weights.fill(0.5);
    d.weights[0]!.fill(0.5);
    applyDelta(net, d);
    expect(net.connections[0]!.weights[0]).toBe(0.75);
  });

  it("a non-finite update stops with an error naming the connection and leaves every weight as it was", () => {
    const net = buildNetwork(base());
    const before = net.connections.map((c) => Array.from(c.weights));
    const biases = net.layers.map((l) => Array.from(l.bias));
    const d = new ParameterDelta(net);
    d.weights[0]!.fill(0.1);
    d.weights[1]![3] = Number.POSITIVE_INFINITY;
    const e = errorOf(() => applyDelta(net, d));
    expect(e.code).toBe("non_finite_update");
    expect(e.path).toBe("connections[1]");
    expect(e.message).toMatch(/h->out/);
    expect(net.connections.map((c) => Array.from(c.weights))).toEqual(before);
    expect(net.layers.map((l) => Array.from(l.bias))).toEqual(biases);
  });

  it("one network declaration trains under every rule by changing only the rule config", () => {
    const configs = [
      { rule: "chl", rate: 0.1 },
      { rule: "generec", variant: "midpoint", rate: 0.1 },
      { rule: "xie-seung", rate: 0.1 },
      { rule: "eqprop", beta: 0.2, rate: 0.1, mode: "symmetric" },
      { rule: "calcium", rate: 0.1, threshold: "blend" },
      { rule: "bcm", rate: 0.01 },
      { rule: "feedback-alignment", rate: 0.1 },
      { rule: "direct-feedback-alignment", rate: 0.1 },
      { rule: "backprop", rate: 0.1 },
    ] as const;
    for (const config of configs) {
      const net = buildNetwork(base());
      const before = Array.from(net.connections[1]!.weights);
      createRule(net, config).step(batch);
      expect(Array.from(net.connections[1]!.weights), config.rule).not.toEqual(before);
    }
  });
});
