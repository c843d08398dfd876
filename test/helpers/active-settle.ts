/** Shared by the whole-settling tests of the activity-sparse products: one free and one nudged phase, as bits. */
import { Settler, Snapshot, type Network } from "../../src/index.js";

/**
 * Settles `net` on mostly-zero random inputs into layer "in" (a fraction `zeros` exactly 0, from `seed`) in a
 * free phase, then a nudged phase (beta 0.5) towards 0/1 targets of layer "out", each time with the crossovers
 * `configure(on)` sets for `on` = true and false, and returns per setting every state and activity as strings
 * (−0 told apart from +0).
 */
export function settleBothWays(net: Network, batch: number, seed: number, zeros: number, configure: (on: boolean) => void): string[][] {
  const nIn = net.layers.find((l) => l.name === "in")!.size;
  const nOut = net.layers.find((l) => l.name === "out")!.size;
  let s = seed;
  const next = () => (s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32;
  const x = Array.from({ length: batch * nIn }, () => (next() < zeros ? 0 : next() * 2 - 0.5));
  const y = Array.from({ length: batch * nOut }, () => (next() < 0.5 ? 1 : 0));
  const out: string[][] = [];
  for (const on of [true, false]) {
    configure(on);
    const settler = new Settler(net, batch);
    const a = new Snapshot(net, batch);
    const b = new Snapshot(net, batch, a);
    settler.settle({ phase: "free", inputs: { in: x } }, a);
    settler.settle({ phase: "nudged", beta: 0.5, reuseDrive: true, inputs: { in: x }, targets: { out: y }, start: a }, b);
    out.push([...a.state, ...a.activity, ...b.state, ...b.activity].flatMap((v) => Array.from(v, (e) => (Object.is(e, -0) ? "-0" : String(e)))));
  }
  return out;
}
