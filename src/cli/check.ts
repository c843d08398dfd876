/**
 * `ebbflow check`: the gradient-agreement table of each configured rule on a batch of the data.
 * @module
 */
import { fail } from "../errors/index.js";
import { gradientAgreement, formatAgreement, type GradientReference } from "../verify/agreement.js";
import { readModelArgument, readRuleArgument, resolveData } from "./inputs.js";
import { datasetBatch } from "../train/loop.js";

/** Options of `ebbflow check`. */
export interface CheckCommandOptions {
  readonly data?: string;
  readonly rule?: string[];
  readonly rate?: number;
  readonly beta?: number;
  readonly examples?: number;
  readonly reference?: GradientReference;
  readonly json?: boolean;
  readonly kernels?: "auto" | "typescript" | "wasm";
  /** Modules defining rules of the user's own. */
  readonly plugin?: string[];
}

/** Runs `ebbflow check MODEL.json ...`. */
export async function checkCommand(modelFile: string, o: CheckCommandOptions): Promise<void> {
  const { experiment, net, registry } = await readModelArgument(modelFile, o.kernels ?? "auto", o.plugin ?? []);
  const rules = o.rule !== undefined && o.rule.length > 0 ? await Promise.all(o.rule.map((r) => readRuleArgument(r, { rate: o.rate ?? 1, beta: o.beta }, registry))) : experiment.rules;
  if (rules.length === 0) fail("invalid_config", "--rule", "at least one rule (on the command line or in the experiment's rules)", "none");
  const source = o.data ?? experiment.data?.source;
  if (source === undefined) fail("invalid_config", "--data", "a data source", "none");
  const d = experiment.data;
  const { train } = await resolveData(source, {
    testFraction: 0,
    seed: experiment.network.seed,
    ...(o.data === undefined || o.data === d?.source ? { targetColumns: d?.targetColumns, oneHot: d?.oneHot, targetLayers: d?.targetLayers, inputLayers: d?.inputLayers } : {}),
  });
  const n = Math.min(o.examples ?? 16, train.size);
  // every input and output layer from its block of the data (by layer name); unobserved targets stay NaN rows
  const batch = datasetBatch(net, train, n);
  const reports = rules.map((rule) => {
    // each rule sees the same weights, with tight settling so that rule and reference compare fixed points
    const tight = net.withDynamics({ tolerance: Math.min(net.spec.dynamics.tolerance, 1e-12), maxSteps: Math.max(net.spec.dynamics.maxSteps, 100000) });
    return gradientAgreement(tight, rule, batch, { reference: o.reference ?? "recurrent", registry });
  });
  if (o.json) process.stdout.write(JSON.stringify(reports) + "\n");
  else process.stdout.write(`${n} examples of ${source}\n\n` + reports.map(formatAgreement).join("\n\n") + "\n");
}
