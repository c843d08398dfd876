/** Shared experiment for the sweep tests: the touch-strip task (our own demo data), tiny and fast. */
export const stripExperiment = {
  name: "strip",
  network: {
    seed: 3,
    layers: [
      { name: "sensors", size: 8, role: "input" },
      { name: "hidden", size: 4, role: "hidden" },
      { name: "texture", size: 2, role: "output" },
    ],
    connections: [
      { from: "sensors", to: "hidden", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
      { from: "hidden", to: "texture", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
    ],
    dynamics: { dt: 0.5, maxSteps: 300, tolerance: 1e-6 },
  },
  rules: [{ rule: "generec", rate: 1 }],
  training: { epochs: 12, batchSize: 2 },
  data: { source: "touch-strip" },
};

/** A deep copy with every object's keys in reverse order. */
export function reverseKeys<T>(v: T): T {
  if (Array.isArray(v)) return v.map((x) => reverseKeys(x)) as T;
  if (v !== null && typeof v === "object") {
    const out: Record<string, unknown> = {};
    for (const k of Object.keys(v).reverse()) out[k] = reverseKeys((v as Record<string, unknown>)[k]);
    return out as T;
  }
  return v;
}
