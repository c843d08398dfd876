import type { NetworkSpecInput } from "../../src/index.js";

/**
 * The greenhouse: a scenario of our own invention for networks with two input and two output layers.
 * Inputs: `sky` (2 units: sun, cloud; each on or off) and `soil` (1 unit: 1 wet, 0 dry).
 * Outputs: `valve` (1 unit: open the water valve when the soil is dry and the sun is out) and `lamp`
 * (2 units, one-hot: grow lamp on when there is cloud, off otherwise). The lamp's setting is recorded only
 * on every other example (the gardener notes it on alternate visits): on the others it is not observed.
 */
export const greenhouse = (() => {
  const sky: number[][] = [];
  const soil: number[][] = [];
  const valve: number[][] = [];
  const lamp: (number[] | null)[] = [];
  let k = 0;
  for (const sun of [0, 1])
    for (const cloud of [0, 1])
      for (const wet of [0, 1]) {
        sky.push([sun, cloud]);
        soil.push([wet]);
        valve.push([sun === 1 && wet === 0 ? 1 : 0]);
        lamp.push(k % 2 === 0 ? (cloud === 1 ? [1, 0] : [0, 1]) : null);
        k++;
      }
  return { inputs: { sky, soil }, targets: { valve, lamp } };
})();

/** A 2-input, 2-output network for the greenhouse (hidden layer of 6 logistic units, tied feedback). */
export const greenhouseNetwork: NetworkSpecInput = {
  seed: 5,
  layers: [
    { name: "sky", size: 2, role: "input" },
    { name: "soil", size: 1, role: "input" },
    { name: "hidden", size: 6, role: "hidden" },
    { name: "valve", size: 1, role: "output" },
    { name: "lamp", size: 2, role: "output" },
  ],
  connections: [
    { from: "sky", to: "hidden", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
    { from: "soil", to: "hidden", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
    { from: "hidden", to: "valve", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
    { from: "hidden", to: "lamp", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
  ],
  dynamics: { dt: 0.5, maxSteps: 300, tolerance: 1e-6 },
};
