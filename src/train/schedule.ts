/**
 * Learning-rate schedules: a factor on the rule's rate per epoch.
 * @module
 */
import { z } from "zod";

/** Schema of a learning-rate schedule. @category Training */
export const scheduleSchema = z.discriminatedUnion(
  "kind",
  [
    z.object({ kind: z.literal("constant") }).strict(),
    z.object({ kind: z.literal("step"), every: z.number().int().min(1), factor: z.number().gt(0) }).strict(),
    z.object({ kind: z.literal("exponential"), decay: z.number().gt(0).max(1) }).strict(),
    z.object({ kind: z.literal("cosine"), epochs: z.number().int().min(1), floor: z.number().min(0).max(1).default(0) }).strict(),
  ],
  { error: "a schedule kind: constant, step, exponential or cosine" },
);

/** A learning-rate schedule. @category Training */
export type Schedule = z.output<typeof scheduleSchema>;

/**
 * The factor on the base rate in epoch `epoch` (1-based): constant 1; step `factor^⌊(epoch−1)/every⌋`;
 * exponential `decay^(epoch−1)`; cosine `floor + (1 − floor)·½(1 + cos(π (epoch−1)/epochs))`
 * (Loshchilov & Hutter 2017, "SGDR", ICLR; without restarts).
 * @category Training
 */
export function scheduleFactor(s: Schedule, epoch: number): number {
  const e = epoch - 1;
  switch (s.kind) {
    case "constant":
      return 1;
    case "step":
      return s.factor ** Math.floor(e / s.every);
    case "exponential":
      return s.decay ** e;
    case "cosine":
      return s.floor + (1 - s.floor) * 0.5 * (1 + Math.cos((Math.PI * Math.min(e, s.epochs)) / s.epochs));
  }
}
