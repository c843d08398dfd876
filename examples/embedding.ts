/**
 * Embedding ebbflow in your own model code: a worked example (run by test/examples.test.ts).
 *
 * A small "odour–valence" model of our own invention: 6 receptor inputs, a hidden layer, 2 valence units
 * (approach, avoid). We build the network in code, verify that Equilibrium Propagation follows the
 * gradient on it, train it with our own loop around `rule.step`, and read out a trace of the hidden
 * layer's activity with a running-average filter, as a model of a slow neuromodulatory signal.
 */
import { buildNetwork, createRule, gradientAgreement, Settler, vectorTrace, type FloatArray } from "../src/index.js";

export function runEmbeddingExample(): { cosine: number; before: number; after: number; traceMean: number } {
  const net = buildNetwork({
    seed: 7,
    layers: [
      { name: "receptors", size: 6, role: "input" },
      { name: "glomeruli", size: 5, role: "hidden" },
      { name: "valence", size: 2, role: "output" },
    ],
    connections: [
      { from: "receptors", to: "glomeruli", feedback: { kind: "tied", gain: 1 } },
      { from: "glomeruli", to: "valence", feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.5, maxSteps: 200, tolerance: 1e-7 },
  });
  // four odours: receptor patterns and their valence (approach, avoid)
  const odours = [1, 1, 0, 0, 0, 0, 0, 0, 1, 1, 0, 0, 0, 0, 0, 0, 1, 1, 1, 0, 0, 0, 0, 1];
  const valence = [1, 0, 0, 1, 1, 0, 0, 1];
  const batch = { inputs: { receptors: odours }, targets: { valence } };

  // 1. prove the local rule follows the gradient on this network before trusting it
  const report = gradientAgreement(net.withDynamics({ tolerance: 1e-12, maxSteps: 100000 }), { rule: "eqprop", beta: 0.01, rate: 1, mode: "symmetric" }, batch);

  // 2. train with our own loop
  const settler = new Settler(net, 4);
  const error = (): number => {
    const y = settler.settle({ phase: "free", inputs: batch.inputs }).activity[2] as FloatArray;
    let sse = 0;
    for (let i = 0; i < y.length; i++) sse += ((y[i] as number) - (valence[i] as number)) ** 2;
    return sse;
  };
  const before = error();
  const rule = createRule(net, { rule: "eqprop", beta: 0.5, rate: 0.5 });
  for (let epoch = 0; epoch < 300; epoch++) rule.step(batch);
  const after = error();

  // 3. a running average of the hidden layer over the settling steps of one odour
  const trace = vectorTrace({ tau: 5, dt: 1, n: 5 });
  const one = new Settler(net, 1);
  one.settle({ phase: "free", inputs: { receptors: odours.slice(0, 6) }, onStep: (snap) => void trace.update(snap.activity[1] as FloatArray) });
  const traceMean = Array.from(trace.value).reduce((a, b) => a + b, 0) / 5;
  return { cosine: report.overall.cosine, before, after, traceMean };
}
