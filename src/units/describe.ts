/**
 * Per-kind facts used by the noisy tabulation: scalar
 * rate and slope, bounds, and where the function changes character.
 * @module
 * @internal
 */
import { hardSigmoid, hardSigmoidSlope } from "./hardSigmoid.js";
import { linear, linearSlope } from "./linear.js";
import { logistic, logisticSlope } from "./logistic.js";
import { relu, reluSlope } from "./relu.js";
import { saturating, saturatingSlope } from "./saturating.js";
import { softplus, softplusSlope } from "./softplus.js";
import type { SmoothingFeature } from "./gaussian.js";
import type { UnitSpec } from "./spec.js";
import { tanh, tanhSlope } from "./tanh.js";

/** Facts about a deterministic (not noisy) unit kind. @internal */
export interface PlainUnitFacts {
  readonly value: (x: number) => number;
  readonly slope: (x: number) => number;
  readonly lower: number;
  readonly upper: number;
  /** Kinks and steep transitions, for Gaussian averaging. */
  readonly features: readonly SmoothingFeature[];
  /**
   * Interval outside which the function is, to double precision, constant or
   * linear (so a Gaussian average equals the function there, up to the
   * documented tail error).
   */
  readonly transition: readonly [number, number];
}

/** Logistic and softplus tails are below 2.4e-16 beyond 36 / gain. */
const EXP_TAIL = 36;
/** tanh is within 6e-17 of ±1 beyond 19.5. */
const TANH_TAIL = 19.5;
/** The saturating rate keeps curving as 2 gain^2 / (gain z)^3; the table covers gain z <= 50. */
const SATURATING_TAIL = 50;

/** Facts for a normalised non-noisy spec. @internal */
export function plainUnitFacts(spec: Exclude<UnitSpec, { kind: "noisy" }>): PlainUnitFacts {
  switch (spec.kind) {
    case "logistic": {
      const g = spec.gain ?? 1;
      const o = spec.offset ?? 0;
      return {
        value: (x) => logistic(x, g, o),
        slope: (x) => logisticSlope(x, g, o),
        lower: 0,
        upper: 1,
        features: [{ at: o, width: 1 / g }],
        transition: [o - EXP_TAIL / g, o + EXP_TAIL / g],
      };
    }
    case "tanh":
      return { value: tanh, slope: tanhSlope, lower: -1, upper: 1, features: [{ at: 0, width: 1 }], transition: [-TANH_TAIL, TANH_TAIL] };
    case "linear":
      return { value: linear, slope: linearSlope, lower: -Infinity, upper: Infinity, features: [], transition: [0, 0] };
    case "relu":
      return { value: relu, slope: reluSlope, lower: 0, upper: Infinity, features: [{ at: 0, width: 0, kink: true }], transition: [0, 0] };
    case "hard-sigmoid":
      return {
        value: hardSigmoid,
        slope: hardSigmoidSlope,
        lower: 0,
        upper: 1,
        features: [
          { at: 0, width: 0, kink: true },
          { at: 1, width: 0, kink: true },
        ],
        transition: [0, 1],
      };
    case "softplus": {
      const g = spec.gain ?? 1;
      return {
        value: (x) => softplus(x, g),
        slope: (x) => softplusSlope(x, g),
        lower: 0,
        upper: Infinity,
        features: [{ at: 0, width: 1 / g }],
        transition: [-EXP_TAIL / g, EXP_TAIL / g],
      };
    }
    case "saturating": {
      const g = spec.gain ?? 1;
      const th = spec.threshold ?? 0;
      return {
        value: (x) => saturating(x, g, th),
        slope: (x) => saturatingSlope(x, g, th),
        lower: 0,
        upper: 1,
        features: [{ at: th, width: 1 / g, kink: true }],
        transition: [th, th + SATURATING_TAIL / g],
      };
    }
  }
}
