/**
 * Connection patterns: geometry against convolution arithmetic, the gradients of patterned networks
 * (recurrent backprop against finite differences that move a parameter's positions together), every
 * rule keeping out-of-pattern weights at exactly zero, files and explicit weights that break a pattern.
 */
import { describe, it, expect } from "vitest";
import fc from "fast-check";
import {
  buildNetwork,
  createRule,
  finiteDifferenceGradient,
  gradientAgreement,
  modelFromData,
  modelToData,
  parseNetwork,
  patternViolation,
  recurrentGradient,
  Optimizer,
  optimizerSchema,
  type Network,
  type NetworkSpecInput,
  type ParameterDelta,
  type PatternSpec,
} from "../../src/index.js";
import { check } from "../helpers/property.js";
import { relativeError } from "../helpers/tolerance.js";
import { thrown } from "../helpers/errors.js";

/** Every parameter of a change or gradient in one list (weights, feedback, biases). */
const flat = (d: ParameterDelta): number[] => [...d.weights, ...d.feedback.filter((f) => f !== null), ...d.biases].flatMap((a) => Array.from(a));
const errorOf = thrown;

/** Every connection's weights respect its pattern exactly (zeros outside, tied shared positions, W = Wᵀ). */
function expectInPattern(net: Network): void {
  for (const c of net.connections) {
    expect(patternViolation(c.pattern, c.weights), c.label).toBeNull();
    for (let k = 0; k < c.weights.length; k++) if (c.pattern.mask[k] === 0) expect(c.weights[k] === 0, `${c.label}[${k}] = ${c.weights[k]}`).toBe(true); // −0 counts (an inhibitory sign constraint writes −|0|)
    if (c.feedback.kind === "separate") {
      const { rows, cols, mask } = c.pattern;
      for (let k = 0; k < rows * cols; k++) if (mask[k] === 0) expect(c.feedback.weights[(k % cols) * rows + Math.floor(k / cols)] === 0, `${c.label} feedback`).toBe(true);
    }
  }
}

describe("pattern geometry", () => {
  it("a layer's shape gives its size; size and shape must agree", () => {
    const spec = parseNetwork({ layers: [{ name: "s", shape: [4, 5, 2], role: "input" }, { name: "o", size: 3, role: "output" }], connections: [{ from: "s", to: "o" }] });
    expect(spec.layers[0]!.size).toBe(40);
    const e = errorOf(() => parseNetwork({ layers: [{ name: "s", shape: [4, 5], size: 21, role: "input" }, { name: "o", size: 3, role: "output" }], connections: [{ from: "s", to: "o" }] }));
    expect(e.path).toBe("layers[0].size");
    expect(errorOf(() => parseNetwork({ layers: [{ name: "s", role: "input" }, { name: "o", size: 3, role: "output" }], connections: [{ from: "s", to: "o" }] })).path).toBe("layers[0].size");
  });

  it("convolution output sizes follow o = ⌊(i + 2p − k)/s⌋ + 1 (Dumoulin & Visin 2016, arXiv:1603.07285, relationship 6); a wrong receiving shape is refused with the expected one", () => {
    check(
      fc.property(fc.integer({ min: 3, max: 9 }), fc.integer({ min: 3, max: 9 }), fc.integer({ min: 1, max: 3 }), fc.integer({ min: 1, max: 2 }), fc.integer({ min: 0, max: 1 }), (h, w, k, s, p) => {
        const oh = Math.floor((h + 2 * p - k) / s) + 1;
        const ow = Math.floor((w + 2 * p - k) / s) + 1;
        const mk = (shape: number[]) => ({ layers: [{ name: "a", shape: [h, w], role: "input" as const }, { name: "b", shape, role: "output" as const }], connections: [{ from: "a", to: "b", pattern: { kind: "convolution" as const, kernel: k, stride: s, padding: p } }] });
        const net = buildNetwork(mk([oh, ow, 2]));
        const c = net.connections[0]!;
        expect(c.pattern.shared!.count).toBe(2 * k * k);
        // every in-sheet window position of every output is stored
        for (let r = 0; r < oh; r++)
          for (let q = 0; q < ow; q++)
            for (let oc = 0; oc < 2; oc++)
              for (let a = 0; a < k; a++)
                for (let b = 0; b < k; b++) {
                  const ri = r * s - p + a;
                  const ci = q * s - p + b;
                  const row = (r * ow + q) * 2 + oc;
                  if (ri < 0 || ri >= h || ci < 0 || ci >= w) continue;
                  expect(c.pattern.mask[row * h * w + ri * w + ci]).toBe(1);
                }
        let stored = 0;
        for (let r = 0; r < oh; r++) for (let q = 0; q < ow; q++) for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) {
          const ri = r * s - p + a;
          const ci = q * s - p + b;
          if (ri >= 0 && ri < h && ci >= 0 && ci < w) stored += 2;
        }
        expect(c.pattern.stored).toBe(stored);
        expect(errorOf(() => buildNetwork(mk([oh + 1, ow, 2]))).expected).toMatch(`[${oh}, ${ow}`);
      }),
      40,
    );
  });

  it("a convolution computes the cross-correlation of its input with one kernel (definition written out)", () => {
    const net = buildNetwork({ seed: 4, layers: [{ name: "a", shape: [5, 4, 2], role: "input" }, { name: "b", shape: [4, 3, 3], role: "output" }], connections: [{ from: "a", to: "b", pattern: { kind: "convolution", kernel: 2 }, init: { kind: "normal", std: 1 } }] });
    const c = net.connections[0]!;
    const x = Array.from({ length: 40 }, (_, i) => Math.sin(i * 1.3));
    // kernel K[oc][a][b][ic] read at output (0,0), whose window lies inside the sheet
    const K = (oc: number, a: number, b: number, ic: number) => c.weights[oc * 40 + (a * 4 + b) * 2 + ic] as number;
    for (let r = 0; r < 4; r++)
      for (let q = 0; q < 3; q++)
        for (let oc = 0; oc < 3; oc++) {
          let want = 0;
          for (let a = 0; a < 2; a++) for (let b = 0; b < 2; b++) for (let ic = 0; ic < 2; ic++) want += K(oc, a, b, ic) * (x[((r + a) * 4 + (q + b)) * 2 + ic] as number);
          const row = (r * 3 + q) * 3 + oc;
          let got = 0;
          for (let j = 0; j < 40; j++) got += (c.weights[row * 40 + j] as number) * (x[j] as number);
          expect(got).toBeCloseTo(want, 12);
        }
  });

  it("a lateral radius-1 pattern without self-connections on a 4×4 sheet is the 4-neighbourhood: 2·(2·4·3) = 48 weights, symmetric, 24 pairs", () => {
    const net = buildNetwork({ layers: [{ name: "in", size: 16, role: "input" }, { name: "m", shape: [4, 4], role: "output" }], connections: [{ from: "in", to: "m" }, { from: "m", to: "m", pattern: { kind: "local", radius: 1, selfConnections: false, symmetric: true } }] });
    const p = net.connections[1]!.pattern;
    expect(p.stored).toBe(48);
    expect(p.parameters).toBe(24);
    for (let i = 0; i < 16; i++) expect(p.mask[i * 16 + i]).toBe(0);
    // with wrap-around every unit has exactly 4 neighbours (a torus)
    const torus = buildNetwork({ layers: [{ name: "in", size: 16, role: "input" }, { name: "m", shape: [4, 4], role: "output" }], connections: [{ from: "in", to: "m" }, { from: "m", to: "m", pattern: { kind: "local", radius: 1, wrap: true, selfConnections: false } }] });
    expect(torus.connections[1]!.pattern.stored).toBe(64);
  });

  it("random patterns: exactly fanIn sending units per row; the same seed draws the same pattern, another seed another", () => {
    const mk = (seed: number, pattern: PatternSpec | Record<string, unknown>) => buildNetwork({ seed, layers: [{ name: "a", size: 30, role: "input" }, { name: "b", size: 20, role: "output" }], connections: [{ from: "a", to: "b", pattern: pattern as PatternSpec }] }).connections[0]!.pattern;
    const p = mk(1, { kind: "random", fanIn: 7 });
    for (let i = 0; i < 20; i++) expect(p.rowStart[i + 1]! - p.rowStart[i]!).toBe(7);
    expect(Array.from(mk(1, { kind: "random", fanIn: 7 }).mask)).toEqual(Array.from(p.mask));
    expect(Array.from(mk(2, { kind: "random", fanIn: 7 }).mask)).not.toEqual(Array.from(p.mask));
    // probability 0.3 over 600 entries: the count is Binomial(600, 0.3), mean 180, sd 11.2; 5 sd either side
    const q = mk(3, { kind: "random", probability: 0.3 });
    expect(q.stored).toBeGreaterThan(180 - 56);
    expect(q.stored).toBeLessThan(180 + 56);
  });

  it("refuses patterns its layers cannot take, with their paths", () => {
    const two = (pattern: unknown, shapes: [number[], number[]] = [[3], [3]]) => errorOf(() => buildNetwork({ layers: [{ name: "a", shape: shapes[0], role: "input" }, { name: "b", shape: shapes[1], role: "output" }], connections: [{ from: "a", to: "b", pattern: pattern as PatternSpec }] }));
    expect(two({ kind: "one-to-one" }, [[3], [4]]).path).toBe("connections[0].pattern.kind");
    expect(two({ kind: "random" }).path).toBe("connections[0].pattern");
    expect(two({ kind: "random", fanIn: 4 }).path).toBe("connections[0].pattern.fanIn");
    expect(two({ kind: "full", symmetric: true }).path).toBe("connections[0].pattern.symmetric");
    expect(two({ kind: "local", radius: 1, kernel: 3 }).path).toBe("connections[0].pattern");
    expect(two({ kind: "local" }).path).toBe("connections[0].pattern");
    expect(two({ kind: "convolution", kernel: 2 }, [[3, 3], [3]]).path).toBe("connections[0].pattern");
    expect(two({ kind: "tiled" }).path).toBe("connections[0].pattern.kind");
  });
});

/** A small random network of rate units with patterned connections (pattern choices drawn by the property). */
function patternedNet(seed: number, forward: number, lateral: number, kind: "rate" | "energy"): Network {
  const forwardPatterns: (PatternSpec | undefined)[] = [
    undefined,
    { kind: "convolution", kernel: 2, stride: 1, padding: 0, wrap: false },
    { kind: "local", kernel: 2, stride: 1, padding: 0, wrap: false },
    { kind: "random", fanIn: 3 },
    { kind: "random", probability: 0.4 },
    { kind: "local", radius: 1.2, stride: 1, padding: 0, wrap: false },
  ];
  const lateralPatterns: (PatternSpec | null)[] = [
    null,
    { kind: "local", radius: 1, stride: 1, padding: 0, wrap: false, selfConnections: false, symmetric: true },
    { kind: "full", selfConnections: false, symmetric: true },
    { kind: "random", probability: 0.5, symmetric: true },
    { kind: "one-to-one" },
    { kind: "local", radius: 1.5, stride: 1, padding: 0, wrap: true, symmetric: true },
  ];
  const unit = kind === "energy" ? { kind: "logistic" as const, gain: 4, offset: 0.5 } : { kind: "tanh" as const };
  const lat = lateralPatterns[lateral % lateralPatterns.length];
  const spec: NetworkSpecInput = {
    seed,
    dtype: "float64",
    layers: [
      { name: "in", shape: [3, 3], role: "input" },
      { name: "h", shape: [2, 2, 2], role: "hidden", unit, bias: 0.1 },
      { name: "out", size: 2, role: "output", unit: kind === "energy" ? unit : { kind: "logistic" }, bias: -0.1 },
    ],
    connections: [
      { from: "in", to: "h", init: { kind: "normal", std: 0.6 }, pattern: forwardPatterns[forward % forwardPatterns.length], feedback: kind === "energy" ? { kind: "tied", gain: 1 } : { kind: "none" } },
      { from: "h", to: "out", init: { kind: "normal", std: 0.6 }, feedback: { kind: "tied", gain: kind === "energy" ? 1 : 0.5 } },
      ...(lat === null ? [] : [{ from: "h", to: "h", init: { kind: "normal" as const, std: 0.25 }, pattern: lat }]),
    ],
    dynamics: { kind, dt: kind === "energy" ? 0.2 : 0.5, maxSteps: 100000, tolerance: 1e-14 },
  };
  return buildNetwork(spec);
}

const inputs = { in: [0.3, -0.5, 0.8, 0.9, 0.1, -0.4, 0.2, 0.7, -0.6, 0.5, 0.5, -0.1, 0.0, 0.4, -0.8, 0.6, 0.3, 0.9] };
const targets = { out: [0.2, 0.7, 0.8, 0.1] };

describe("gradients of patterned networks", () => {
  it("recurrent backprop equals finite differences that move each free parameter's positions together, for every pattern (shared and symmetric included), float64, 1e-7 relative", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 0, max: 5 }), fc.integer({ min: 0, max: 5 }), (seed, f, l) => {
        const net = patternedNet(seed, f, l, "rate");
        const batch = { inputs, targets };
        const rbp = recurrentGradient(net, batch);
        const fd = finiteDifferenceGradient(net, batch, { step: 1e-6 });
        expect(relativeError(flat(rbp), flat(fd))).toBeLessThan(1e-7);
        // the gradient lives in the pattern: zero outside, one value per shared parameter, symmetric where tied
        net.connections.forEach((c) => expect(patternViolation(c.pattern, rbp.weights[c.index]!), c.label).toBeNull());
      }),
      20,
    );
  });

  it("the same under energy dynamics (tied feedback, gain 1; symmetric lateral), 1e-6 relative", () => {
    check(
      fc.property(fc.integer({ min: 0, max: 1e6 }), fc.integer({ min: 0, max: 5 }), fc.integer({ min: 0, max: 3 }), (seed, f, l) => {
        const net = patternedNet(seed, f, [0, 1, 2, 5][l]!, "energy");
        const batch = { inputs: { in: inputs.in.slice(0, 9) }, targets: { out: [0.3, 0.6] } };
        expect(relativeError(flat(recurrentGradient(net, batch)), flat(finiteDifferenceGradient(net, batch, { step: 1e-6 })))).toBeLessThan(1e-6);
      }),
      10,
    );
  });

  it("gradientAgreement reports a symmetric lateral connection against the symmetrised gradient: EqProp (symmetric nudging, small β) agrees to cosine > 0.9999", () => {
    const net = patternedNet(7, 1, 2, "energy");
    const batch = { inputs: { in: inputs.in.slice(0, 9) }, targets: { out: [0.3, 0.6] } };
    const report = gradientAgreement(net, { rule: "eqprop", beta: 1e-3, mode: "symmetric", rate: 1 }, batch);
    const row = report.rows.find((r) => r.parameter === "h->h")!;
    expect(row.cosine).toBeGreaterThan(0.9999);
    expect(row.relativeError).toBeLessThan(1e-3);
    // and the shared convolution weights against the summed gradient of each kernel entry
    expect(report.rows.find((r) => r.parameter === "in->h")!.cosine).toBeGreaterThan(0.9999);
  });
});

/** Rule configs that settle phases (they accept lateral connections) and those built on the feedforward pass (no lateral connections). */
const settlingRules = [
  { rule: "chl", rate: 0.3 },
  { rule: "generec", rate: 0.3 },
  { rule: "generec", variant: "symmetric", rate: 0.3 },
  { rule: "xie-seung", rate: 0.3, gamma: 0.5 },
  { rule: "eqprop", beta: 0.5, rate: 0.3 },
  { rule: "eqprop", beta: 0.5, mode: "symmetric", rate: 0.3 },
  { rule: "eqprop", beta: 0.5, mode: "random-sign", rate: 0.3 },
  { rule: "calcium", rate: 0.3, freeSteps: 20, clampedSteps: 5 },
  { rule: "bcm", rate: 0.3 },
];
const feedforwardRules = [
  { rule: "backprop", rate: 0.3 },
  { rule: "feedback-alignment", rate: 0.3 },
  { rule: "direct-feedback-alignment", rate: 0.3 },
  { rule: "predictive-coding", rate: 0.3 },
];

describe("every rule keeps its network in the pattern", () => {
  it("after training under any rule, pattern, constraint and optimizer, every out-of-pattern weight is exactly 0, shared positions hold one value and tied matrices stay symmetric", () => {
    check(
      fc.property(
        fc.integer({ min: 0, max: 1e6 }),
        fc.integer({ min: 0, max: 5 }),
        fc.integer({ min: 0, max: 5 }),
        fc.integer({ min: 0, max: settlingRules.length + feedforwardRules.length - 1 }),
        fc.constantFrom("any", "excitatory", "inhibitory"),
        fc.constantFrom("none", "soft"),
        fc.constantFrom(null, "sgd", "momentum", "adam"),
        fc.boolean(),
        (seed, f, l, r, sign, bounds, optimizer, separate) => {
          const feedforward = r >= settlingRules.length;
          const config = feedforward ? feedforwardRules[r - settlingRules.length]! : settlingRules[r]!;
          const base = patternedNet(seed, f, feedforward ? 0 : l, "rate");
          // with `separate`: learned separate feedback matrices (settling rules) or fixed ones (feedback alignment), and a random pattern on h->out
          const feedbackOf = (c: (typeof base.spec.connections)[number]) => {
            if (c.from === c.to || (feedforward && !separate)) return { kind: "none" as const };
            if (separate) return { kind: "separate" as const, learned: !feedforward, init: { kind: "normal" as const, std: 0.3 } };
            return feedforward ? { kind: "none" as const } : c.feedback.kind === "none" ? { kind: "tied" as const, gain: 0.5 } : c.feedback;
          };
          const connections = base.spec.connections.map((c, i) => ({ ...c, sign: i === 0 ? sign : c.sign, bounds: i === 0 ? bounds : c.bounds, feedback: feedbackOf(c), ...(i === 1 && separate ? { pattern: { kind: "random" as const, fanIn: 5 } } : {}) }));
          // predictive coding reads its prediction from linear output units
          const layers = config.rule === "predictive-coding" ? base.spec.layers.map((l) => (l.role === "output" ? { ...l, unit: { kind: "linear" } } : l)) : base.spec.layers;
          const spec = { ...base.spec, layers, connections, dynamics: { ...base.spec.dynamics, tolerance: 1e-6, maxSteps: 400 } };
          const net = buildNetwork(spec);
          expectInPattern(net);
          const rule = createRule(net, config as never);
          const opt = optimizer === null ? null : new Optimizer(net, rule, optimizerSchema.parse({ kind: optimizer }));
          const batch = { inputs, targets };
          const before = net.connections.map((c) => Array.from(c.weights));
          for (let k = 0; k < 3; k++) {
            opt?.before();
            rule.step(batch);
            opt?.after(1);
          }
          expectInPattern(net);
          // the rule did learn (the property is not met by standing still)
          expect(net.connections.some((c, i) => c.weights.some((w, k) => w !== before[i]![k]))).toBe(true);
        },
      ),
      60,
    );
  });
});

describe("explicit weights and files", () => {
  const spec = (weights?: number[]): NetworkSpecInput => ({
    layers: [{ name: "a", shape: [3], role: "input" }, { name: "b", shape: [2], role: "output" }],
    connections: [{ from: "a", to: "b", pattern: { kind: "convolution", kernel: 2 }, ...(weights !== undefined ? { weights } : {}) }],
  });

  it("explicit weights must respect the pattern: zero outside, equal on a shared parameter's positions", () => {
    expect(buildNetwork(spec([0.5, -1, 0, 0, 0.5, -1])).connections[0]!.weights[4]).toBe(0.5);
    expect(errorOf(() => buildNetwork(spec([0.5, -1, 0.2, 0, 0.5, -1]))).path).toBe("connections[0].weights[2]");
    expect(errorOf(() => buildNetwork(spec([0.5, -1, 0, 0, 0.4, -1]))).path).toBe("connections[0].weights[4]");
  });

  it("a model file keeps the pattern through a round trip; a file whose weights break it is refused (parse_error naming the entry)", () => {
    const net = patternedNet(11, 1, 1, "rate");
    const data = modelToData(net);
    const back = modelFromData(data);
    back.connections.forEach((c, i) => expect(Array.from(c.weights)).toEqual(Array.from(net.connections[i]!.weights)));
    const bad = net.clone();
    const c = bad.connections[2]!;
    const outside = c.pattern.mask.indexOf(0);
    c.weights[outside] = 0.25;
    const e = errorOf(() => modelFromData(modelToData(bad)));
    expect(e.code).toBe("parse_error");
    expect(e.path).toBe(`parameters.weights["h->h"][${outside}]`);
  });
});

describe("Equilibrium Propagation on a convolutional network", () => {
  it("follows the gradient with the published order in β: error O(β) one-sided, O(β²) symmetric (Scellier & Bengio 2017; Laborieux et al. 2021, Front. Neurosci. 15:633674)", () => {
    const net = buildNetwork({
      seed: 5,
      layers: [
        { name: "in", shape: [4, 4], role: "input" },
        { name: "f", shape: [3, 3, 2], role: "hidden", unit: { kind: "logistic", gain: 4, offset: 0.5 } },
        { name: "out", size: 2, role: "output", unit: { kind: "logistic", gain: 4, offset: 0.5 } },
      ],
      connections: [
        { from: "in", to: "f", pattern: { kind: "convolution", kernel: 2 }, init: { kind: "normal", std: 0.5 }, feedback: { kind: "tied", gain: 1 } },
        { from: "f", to: "out", init: { kind: "normal", std: 0.5 }, feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: { kind: "energy", dt: 0.2, maxSteps: 100000, tolerance: 1e-14 },
    });
    const batch = { inputs: { in: Array.from({ length: 16 }, (_, i) => ((i * 7) % 5) / 5) }, targets: { out: [0.9, 0.1] } };
    const err = (mode: string, beta: number) => {
      const report = gradientAgreement(net, { rule: "eqprop", beta, mode, rate: 1, freeSteps: 100000, nudgedSteps: 100000 } as never, batch);
      return report.rows.find((r) => r.parameter === "in->f")!.relativeError;
    };
    // measured here: relative errors 0.060 / 0.031 one-sided, 0.0054 / 0.0013 symmetric at β = 0.005 / 0.0025
    const one = [err("one-sided", 0.005), err("one-sided", 0.0025)];
    const sym = [err("symmetric", 0.005), err("symmetric", 0.0025)];
    // halving β halves the one-sided error and divides the symmetric one by four
    expect(one[0]! / one[1]!).toBeGreaterThan(1.8);
    expect(one[0]! / one[1]!).toBeLessThan(2.2);
    expect(sym[0]! / sym[1]!).toBeGreaterThan(3.6);
    expect(sym[0]! / sym[1]!).toBeLessThan(4.4);
    expect(sym[1]!).toBeLessThan(one[1]!);
  });
});
