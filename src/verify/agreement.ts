/**
 * Gradient agreement: how closely a rule's update follows the negative
 * gradient, per connection, as data and as a printed table.
 * @module
 */
import type { FloatArray } from "../types/index.js";
import type { Network } from "../network/network.js";
import { createRule } from "../rules/index.js";
import { ruleDisplayName } from "../rules/names.js";
import { ParameterDelta } from "../rules/delta.js";
import { connectionRate, type Batch } from "../rules/base.js";
import type { RuleConfigInput } from "../rules/config.js";
import { feedforwardGradient } from "../rules/feedforward.js";
import { finiteDifferenceGradient, parameterArrays, recurrentGradient, type VerifySettling } from "./gradient.js";

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
  readonly rows: readonly AgreementRow[];
  /** The same measures over all parameters together. */
  readonly overall: Omit<AgreementRow, "parameter" | "kind">;
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

/**
 * Compares a rule's update on `batch` with the exact negative gradient of the squared error at
 * the free fixed point, per connection (and per learned feedback matrix and bias), and overall.
 * The network is not changed. Rules whose rate differs per connection are divided by that rate.
 * @category Verification
 * @example
 * ```ts
 * const report = gradientAgreement(net, { rule: "eqprop", beta: 0.05, rate: 1 }, batch);
 * console.log(formatAgreement(report));
 * ```
 */
export function gradientAgreement(net: Network, rule: RuleConfigInput, batch: Batch, options: VerifySettling & { readonly reference?: GradientReference | undefined } = {}): AgreementReport {
  const reference = options.reference ?? "recurrent";
  const r = createRule(net, rule);
  const update = r.computeDelta(batch, new ParameterDelta(net));
  const grad = reference === "recurrent" ? recurrentGradient(net, batch, options) : reference === "finite-difference" ? finiteDifferenceGradient(net, batch, options) : feedforwardGradient(net, batch);
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
  return { rule: ruleDisplayName(r.config), reference, rows, overall: measures(Float64Array.from(uAll), Float64Array.from(gAll), 1) };
}

/** Renders a report as a fixed-width text table. @category Verification */
export function formatAgreement(report: AgreementReport): string {
  const head = ["parameter", "cosine", "rel. error", "|update|/rate", "|gradient|"];
  const fmt = (v: number) => (Number.isFinite(v) ? (Math.abs(v) >= 1e-3 && Math.abs(v) < 1e4 ? v.toFixed(4) : v.toExponential(2)) : String(v));
  const lines = report.rows.map((r) => [r.parameter, fmt(r.cosine), fmt(r.relativeError), fmt(r.updateNorm), fmt(r.gradientNorm)]);
  lines.push(["(all parameters)", fmt(report.overall.cosine), fmt(report.overall.relativeError), fmt(report.overall.updateNorm), fmt(report.overall.gradientNorm)]);
  const widths = head.map((h, i) => Math.max(h.length, ...lines.map((l) => (l[i] as string).length)));
  const row = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i] as number) : c.padStart(widths[i] as number))).join("  ");
  return [`${report.rule} vs ${report.reference} gradient`, row(head), widths.map((w) => "-".repeat(w)).join("  "), ...lines.map(row)].join("\n");
}
