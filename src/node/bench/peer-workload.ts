/**
 * The workload the benchmark's peers (NumPy, TF.js) can run like for like: the model's network when it is a
 * chain of dense layers with tied feedback and units the peers implement, trained by the benchmark's rule
 * (one-sided Equilibrium Propagation, Scellier & Bengio 2017). Every contender reports the same description
 * of what it ran; the benchmark prints a ratio only between figures whose descriptions are equal.
 * @module
 */
import type { NetworkSpec } from "../../network/spec.js";

/** Unit kinds both peers implement (with the definitions of `createUnit`; logistic with gain 1, offset 0 only). */
const PEER_UNITS = ["logistic", "hard-sigmoid", "relu", "tanh", "linear"] as const;

/**
 * What a peer runs: a chain input → hidden… → output, each layer sending to the next through a dense weight
 * matrix with tied feedback (gain 1), rate dynamics, the input drive once per training step.
 * @category Benchmarks
 */
export interface PeerWorkload {
  /** Layer sizes, input first, output last. */
  readonly sizes: readonly number[];
  /** Unit kind of each layer after the input. */
  readonly units: readonly string[];
  readonly dt: number;
  readonly freeSteps: number;
  readonly nudgedSteps: number;
  readonly beta: number;
  readonly rate: number;
  readonly dtype: "float32" | "float64";
}

/** A number as both peers print it: integers without a fraction, others in the shortest round-trip form. */
function num(v: number): string {
  return String(v);
}

/**
 * The one-line description every contender reports for a workload (the NumPy peer builds the same line in
 * Python from the arrays it ran; test/cli/bench-peers.test.ts compares them).
 * @category Benchmarks
 */
export function describePeerWorkload(w: PeerWorkload): string {
  return `eqprop one-sided; layers ${w.sizes.join("-")}; units ${w.units.join(",")}; tied feedback gain 1; rate dynamics dt ${num(w.dt)}; ${w.freeSteps} free + ${w.nudgedSteps} nudged steps; beta ${num(w.beta)}; rate ${num(w.rate)}; ${w.dtype}; input drive once per training step`;
}

/**
 * The peers' workload for a network trained by the benchmark's rule, or why the peers cannot run it.
 * @category Benchmarks
 */
export function peerWorkload(spec: NetworkSpec, rule: { readonly freeSteps: number; readonly nudgedSteps: number; readonly beta: number; readonly rate: number }): { workload: PeerWorkload } | { refused: string } {
  const L = spec.layers;
  if (L.length < 2) return { refused: "fewer than two layers" };
  for (const [i, l] of L.entries()) {
    const want = i === 0 ? "input" : i === L.length - 1 ? "output" : "hidden";
    if (l.role !== want) return { refused: `layer ${JSON.stringify(l.name)} is ${l.role}; the peers run input, hidden…, output in declaration order` };
    if (l.inhibition.kind !== "none") return { refused: `layer ${JSON.stringify(l.name)} has ${l.inhibition.kind} inhibition` };
    if (l.adaptation !== undefined) return { refused: `layer ${JSON.stringify(l.name)} has adaptation` };
    if (l.tau !== undefined && l.tau !== 1) return { refused: `layer ${JSON.stringify(l.name)} has its own time constant` };
    if (i === 0) continue;
    const u = l.unit as { kind: string; gain?: number; offset?: number };
    if (!(PEER_UNITS as readonly string[]).includes(u.kind)) return { refused: `layer ${JSON.stringify(l.name)} has ${u.kind} units` };
    if (u.kind === "logistic" && ((u.gain ?? 1) !== 1 || (u.offset ?? 0) !== 0)) return { refused: `layer ${JSON.stringify(l.name)} has a logistic gain or offset` };
  }
  if (spec.connections.length !== L.length - 1) return { refused: "the connections are not one chain from each layer to the next" };
  for (const [i, c] of spec.connections.entries()) {
    if (c.from !== L[i]!.name || c.to !== L[i + 1]!.name) return { refused: "the connections are not one chain from each layer to the next, in declaration order" };
    if (c.feedback.kind !== "tied" || c.feedback.gain !== 1) return { refused: `connection ${c.from}->${c.to} has feedback other than tied with gain 1` };
    if (c.pattern !== undefined || c.depression !== undefined || c.sign !== "any" || c.bounds !== "none" || c.frozen || c.rate !== undefined || (c.storage !== undefined && c.storage !== "dense" && c.storage !== "auto")) {
      return { refused: `connection ${c.from}->${c.to} is not a plain dense matrix (pattern, depression, sign, bounds, frozen or its own rate)` };
    }
  }
  if (spec.dynamics.kind !== "rate") return { refused: `${spec.dynamics.kind} dynamics (the peers run rate dynamics)` };
  return {
    workload: {
      sizes: L.map((l) => l.size),
      units: L.slice(1).map((l) => (l.unit as { kind: string }).kind),
      dt: spec.dynamics.dt,
      freeSteps: rule.freeSteps,
      nudgedSteps: rule.nudgedSteps,
      beta: rule.beta,
      rate: rule.rate,
      dtype: spec.dtype,
    },
  };
}
