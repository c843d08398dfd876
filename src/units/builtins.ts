/**
 * The eight built-in unit kinds, as descriptors like any other, and the registry that holds them.
 * This is the one list of the built-in kinds.
 * @module
 */
import { hardSigmoidUnit } from "./hardSigmoid.js";
import { linearUnit } from "./linear.js";
import { logisticUnit } from "./logistic.js";
import { noisyUnit } from "./noisy.js";
import { UnitRegistry } from "./registry.js";
import { reluUnit } from "./relu.js";
import { saturatingUnit } from "./saturating.js";
import { softplusUnit } from "./softplus.js";
import { tanhUnit } from "./tanh.js";

/** The built-in unit descriptors, in documentation order. @category Units */
export const builtinUnitDescriptors = [logisticUnit, tanhUnit, linearUnit, reluUnit, hardSigmoidUnit, softplusUnit, saturatingUnit, noisyUnit] as const;

/**
 * The registry of the built-in unit kinds: the default wherever units are named. Add a kind
 * with `builtinUnits.with(myDescriptor)` and pass the result as `{ units }`.
 * @category Units
 * @example
 * ```ts
 * builtinUnits.get("softplus").summary; // "log(1 + exp(gain x)) / gain; gain > 0 (default 1)"
 * ```
 */
export const builtinUnits: UnitRegistry = UnitRegistry.empty.with(...builtinUnitDescriptors);
