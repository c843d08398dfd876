/**
 * Per-phase checks of a rule's settling for `gradientAgreement`: did each phase converge, in how many
 * steps, how far each phase moved from the free state, and did a phase carry the network into the basin
 * of another fixed point (a basin jump).
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { Settler, type Snapshot } from "../network/settle.js";
import type { Batch, LearningRule } from "../rules/base.js";

/** What one of a rule's phases did on the checked batch. @category Verification */
export interface PhaseReport {
  /** The phase's name as the rule reports it (`free`, `clamped`, `nudged +β`, ...). */
  readonly phase: string;
  /** Whether its largest state change fell below the tolerance within its step limit. */
  readonly converged: boolean;
  /** Steps it settled. */
  readonly steps: number;
  /** Its largest state change in the last step. */
  readonly lastChange: number;
  /**
   * Distance from the rule's own free state: the largest over patterns of the Euclidean norm of the
   * state difference over all non-input units (0 for the free phase itself).
   */
  readonly distanceFromFree: number;
  /**
   * Distance of the fixed point that the network settles to when the phase's state is released (a free
   * phase started from it) from the reference free fixed point, largest over patterns (same norm).
   */
  readonly releasedDistance: number;
  /** Patterns whose released state settled to another fixed point (`releasedDistance` > `basinTolerance`). */
  readonly jumpedPatterns: readonly number[];
  /** True when any pattern jumped. */
  readonly basinJump: boolean;
}

/** Per-pattern Euclidean distances between two snapshots' states over the non-input layers. */
function distances(net: Network, a: Snapshot, b: Snapshot): Float64Array {
  const B = a.batch;
  const d = new Float64Array(B);
  for (const l of net.layers) {
    if (l.role === "input") continue;
    const x = a.state[l.index] as FloatArray;
    const y = b.state[l.index] as FloatArray;
    for (let p = 0; p < B; p++)
      for (let i = 0; i < l.size; i++) {
        const k = p * l.size + i;
        d[p] = (d[p] as number) + ((x[k] as number) - (y[k] as number)) ** 2;
      }
  }
  return d.map(Math.sqrt);
}

const largest = (d: Float64Array): number => d.reduce((m, v) => Math.max(m, v), 0);

/**
 * Reports the phases the rule settled for its last batch (`rule.lastPhases`): convergence, steps,
 * distance from its free state, and basin jumps. A phase *jumps basin* when the network, released from
 * its state (a free phase started there, settled with the verification tolerance), settles to a fixed
 * point farther than `basinTolerance` from the reference free fixed point `reference` (the one whose
 * gradient is the reference): the clamping or nudging has moved it into the basin of another attractor,
 * and its contrast with the free phase no longer measures the gradient at `reference`. The free phase is
 * checked the same way (a rule's free phase started elsewhere, or cut short, may sit in another basin).
 * @category Verification
 */
export function phaseReports(net: Network, rule: LearningRule, batch: Batch, reference: Snapshot, settling: { tolerance: number; maxSteps: number; basinTolerance: number }): PhaseReport[] {
  const phases = rule.lastPhases ?? [];
  if (phases.length === 0) return [];
  const free = phases[0] as Snapshot;
  const settler = new Settler(net, reference.batch);
  return phases.map((snap, k) => {
    const released = settler.settle({ phase: "free", inputs: batch.inputs, start: snap, tolerance: settling.tolerance, maxSteps: settling.maxSteps });
    const away = distances(net, released, reference);
    const jumped: number[] = [];
    away.forEach((v, p) => {
      if (!(v <= settling.basinTolerance)) jumped.push(p);
    });
    return {
      phase: rule.phases.length === phases.length ? (rule.phases[k] as string) : snap.phase,
      converged: snap.converged,
      steps: snap.steps,
      lastChange: snap.lastChange,
      distanceFromFree: k === 0 ? 0 : largest(distances(net, snap, free)),
      releasedDistance: largest(away),
      jumpedPatterns: jumped,
      basinJump: jumped.length > 0,
    };
  });
}
