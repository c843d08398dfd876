/**
 * Gradient agreement: how closely a rule's update follows the negative
 * gradient, per connection, as data and as a printed table.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { fail } from "../errors/index.js";
import { builtinRegistry, type Registry } from "../rules/registry.js";
import { ParameterDelta, projectDelta } from "../rules/delta.js";
import { connectionRate, type Batch, type LearningRule } from "../rules/base.js";
import type { RuleConfigInput } from "../rules/config.js";
import { feedforwardGradient } from "../rules/feedforward.js";
import { finiteDifferenceGradient, parameterArrays, recurrentGradient, settleFree, type VerifySettling } from "./gradient.js";
import { phaseReports, type PhaseReport } from "./phases.js";
import { batchSizeOf } from "../rules/base.js";
import { flatBatch, type BatchInput } from "../interop/ndarray.js";
import { configWithLoss, ruleObjective } from "../rules/loss-config.js";
import { requireLoss, type LossName, type Objective } from "../train/loss.js";

/** The exact reference a rule is compared against. @category Verification */
export type GradientReference = "recurrent" | "finite-difference" | "feedforward";

/** One row of a gradient-agreement report. @category Verification */
export interface AgreementRow {
  /** Connection label (`from->to`), `... feedback`, or `layer bias`. */
  readonly parameter: string;
  readonly kind: "weights" | "feedback" | "bias";
  /** Cosine between the rule's update and the negative gradient (NaN-free: 0 when a norm is 0). */
  readonly cosine: number;
  /** `‖u/ε + g‖ / ‖g‖`, u the update, ε its learning rate, g the gradient. */
  readonly relativeError: number;
  /** `‖u/ε‖`. */
  readonly updateNorm: number;
  /** `‖g‖`. */
  readonly gradientNorm: number;
}

/** A gradient-agreement report. @category Verification */
export interface AgreementReport {
  /** The rule's display name ({@link ruleDisplayName}: id, with variant or mode). */
  readonly rule: string;
  readonly reference: GradientReference;
  /** The loss whose gradient is the reference (the rule's own for rules that take a loss). */
  readonly loss: Objective;
  readonly rows: readonly AgreementRow[];
  /** The same measures over all parameters together. */
  readonly overall: Omit<AgreementRow, "parameter" | "kind">;
  /**
   * The rule's phases on this batch (free first): convergence, steps, distance from the free state and
   * basin jumps (see {@link phaseReports}); empty for rules on the feedforward pass.
   */
  readonly phases: readonly PhaseReport[];
  /** True when any phase did not converge or jumped basin: the rows then say little about the rule. */
  readonly warning: boolean;
}

function measures(u: FloatArray | Float64Array, g: FloatArray | Float64Array, scale: number): Omit<AgreementRow, "parameter" | "kind"> {
  let uu = 0;
  let gg = 0;
  let ug = 0;
  let ee = 0;
  for (let k = 0; k < g.length; k++) {
    const a = (u[k] as number) / scale;
    const b = -(g[k] as number);
    uu += a * a;
    gg += b * b;
    ug += a * b;
    ee += (a - b) ** 2;
  }
  const un = Math.sqrt(uu);
  const gn = Math.sqrt(gg);
  return {
    cosine: un > 0 && gn > 0 ? ug / (un * gn) : 0,
    relativeError: gn > 0 ? Math.sqrt(ee) / gn : un > 0 ? Number.POSITIVE_INFINITY : 0,
    updateNorm: un,
    gradientNorm: gn,
  };
}

/** Options of {@link gradientAgreement}. @category Verification */
export interface AgreementOptions extends VerifySettling {
  /** The exact reference (default `"recurrent"`). */
  readonly reference?: GradientReference | undefined;
  /** Where the rule is looked up by name (default: the built-in rules). */
  readonly registry?: Registry | undefined;
  /**
   * The loss (default: the squared error). A rule that takes a loss (EqProp, backprop, the feedback
   * alignments) is configured with it and compared with the gradient of its own cost (EqProp's `cost`
   * and `squaredHalf` included); for the others the reference is this loss on the output state.
   */
  readonly loss?: LossName | undefined;
  /**
   * Largest distance (Euclidean over the non-input units of a pattern) between the fixed point a
   * released phase settles to and the reference free fixed point before the phase counts as a basin
   * jump (default 1e-6).
   */
  readonly basinTolerance?: number | undefined;
}

const AGREEMENT_OPTIONS = ["reference", "registry", "tolerance", "maxSteps", "loss", "basinTolerance"];

/**
 * Compares a rule's update on `batch` with the exact negative gradient of the loss (`options.loss`,
 * default the squared error; see {@link AgreementOptions.loss}) at the free fixed point, per connection (and per learned feedback matrix and bias), and overall.
 * Targets not observed (NaN rows, or `observed`) take no loss: the reference is the gradient of the loss over the observed entries.
 * The network is not changed. Rules whose rate differs per connection are divided by that rate.
 * `rule` is a config (looked up in `options.registry`) or a rule instance bound to `net`.
 * @throws {@link EbbflowError} `invalid_parameter` for an option it does not know.
 * @category Verification
 * @example
 * ```ts
 * const report = gradientAgreement(net, { rule: "eqprop", beta: 0.05, rate: 1 }, batch);
 * console.log(formatAgreement(report));
 * ```
 */
export function gradientAgreement(net: Network, rule: RuleConfigInput | Readonly<Record<string, unknown>> | LearningRule, given: Batch | BatchInput, options: AgreementOptions = {}): AgreementReport {
  // ndarray-like values read flat; an `observed` mask written into the targets as NaN rows
  const batch: Batch = flatBatch(net, given);
  for (const key of Object.keys(options)) if (!AGREEMENT_OPTIONS.includes(key)) fail("invalid_parameter", `options.${key}`, `one of the options ${AGREEMENT_OPTIONS.join(", ")}`, key);
  const reference = options.reference ?? "recurrent";
  if (!(["recurrent", "finite-difference", "feedforward"] as unknown[]).includes(reference)) fail("invalid_parameter", "options.reference", "recurrent, finite-difference or feedforward", reference);
  const registry = options.registry ?? builtinRegistry;
  const lossName = options.loss === undefined ? undefined : requireLoss("options.loss", options.loss);
  const r = typeof (rule as LearningRule).computeDelta === "function" ? (rule as LearningRule) : registry.createRule(net, configWithLoss(registry, rule, lossName));
  if (r.net !== net) fail("invalid_config", "rule", "a rule bound to the network checked", "a rule bound to another network");
  const descriptor = registry.rules.get(r.config.rule);
  const loss = ruleObjective(registry, r.config, lossName);
  if (lossName !== undefined && loss.loss !== lossName) fail("invalid_config", "rule.loss", `a rule following the loss ${lossName} (options.loss)`, loss.loss);
  const basinTolerance = options.basinTolerance ?? 1e-6;
  if (typeof basinTolerance !== "number" || !(basinTolerance > 0)) fail("invalid_parameter", "options.basinTolerance", "a number > 0", basinTolerance);
  // the change the rule applies: projected onto the connections' patterns (shared positions summed, symmetric changes symmetrised)
  const update = r.computeDelta(batch, new ParameterDelta(net));
  projectDelta(net, update, "sum");
  const settling = { tolerance: options.tolerance, maxSteps: options.maxSteps, loss };
  const tight = { tolerance: options.tolerance ?? 1e-13, maxSteps: options.maxSteps ?? 100000, basinTolerance };
  const phases = (r.lastPhases?.length ?? 0) > 0 ? phaseReports(net, r, batch, settleFree(net, batch.inputs, batchSizeOf(net, batch), tight), tight) : [];
  const grad = reference === "recurrent" ? recurrentGradient(net, batch, settling) : reference === "finite-difference" ? finiteDifferenceGradient(net, batch, settling) : feedforwardGradient(net, batch, undefined, loss.loss);
  symmetrisedReference(net, grad);
  const rows: AgreementRow[] = [];
  const uAll: number[] = [];
  const gAll: number[] = [];
  const gArrays = parameterArrays(net, grad);
  parameterArrays(net, update).forEach((entry, idx) => {
    const g = (gArrays[idx] as { delta: FloatArray }).delta;
    const c = net.connections.find((x) => x.label === entry.name.replace(/ feedback$/, ""));
    const scale = entry.kind === "bias" || c === undefined ? r.config.rate : connectionRate(r.config, c);
    if (c?.spec.frozen) return;
    rows.push({ parameter: entry.name, kind: entry.kind, ...measures(entry.delta, g, scale) });
    for (let k = 0; k < g.length; k++) {
      uAll.push((entry.delta[k] as number) / scale);
      gAll.push(g[k] as number);
    }
  });
  const warning = phases.some((p) => !p.converged || p.basinJump);
  return { rule: descriptor?.label(r.config) ?? r.config.rule, reference, loss, rows, overall: measures(Float64Array.from(uAll), Float64Array.from(gAll), 1), phases, warning };
}

/**
 * A symmetric lateral connection is reported against the symmetrised gradient `G + Gᵀ`: the pattern's
 * parameter gradient holds `g_ij + g_ji` off the diagonal; its diagonal is doubled here, since the
 * energy's lateral term `½ ρᵀWρ` gives each self-weight half of the per-entry contrast that EqProp and
 * CHL apply (Scellier & Bengio 2017, Front. Comput. Neurosci. 11:24, Eq. 1 with a symmetric W).
 */
function symmetrisedReference(net: Network, grad: ParameterDelta): void {
  for (const c of net.connections) {
    if (!c.pattern.symmetric) continue;
    const g = grad.weights[c.index] as FloatArray;
    const n = c.pattern.rows;
    for (let i = 0; i < n; i++) g[i * n + i] = 2 * (g[i * n + i] as number);
  }
}

/** Renders a report as a fixed-width text table. @category Verification */
export function formatAgreement(report: AgreementReport): string {
  const head = ["parameter", "cosine", "rel. error", "|update|/rate", "|gradient|"];
  const fmt = (v: number) => (Number.isFinite(v) ? (Math.abs(v) >= 1e-3 && Math.abs(v) < 1e4 ? v.toFixed(4) : v.toExponential(2)) : String(v));
  const lines = report.rows.map((r) => [r.parameter, fmt(r.cosine), fmt(r.relativeError), fmt(r.updateNorm), fmt(r.gradientNorm)]);
  lines.push(["(all parameters)", fmt(report.overall.cosine), fmt(report.overall.relativeError), fmt(report.overall.updateNorm), fmt(report.overall.gradientNorm)]);
  const widths = head.map((h, i) => Math.max(h.length, ...lines.map((l) => (l[i] as string).length)));
  const row = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i] as number) : c.padStart(widths[i] as number))).join("  ");
  const phaseLines = report.phases.map(
    (p) =>
      `phase ${p.phase}: ${p.converged ? "converged" : "NOT converged"} in ${p.steps} steps (last change ${fmt(p.lastChange)}), distance from free ${fmt(p.distanceFromFree)}` +
      (p.basinJump ? `, BASIN JUMP (patterns ${p.jumpedPatterns.join(", ")} settle ${fmt(p.releasedDistance)} away when released)` : ""),
  );
  return [`${report.rule} vs ${report.reference} gradient`, row(head), widths.map((w) => "-".repeat(w)).join("  "), ...lines.map(row), ...phaseLines].join("\n");
}
