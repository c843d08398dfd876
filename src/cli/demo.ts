/**
 * `ebbflow demo`: the touch-strip scenario. Shows that no single layer of weights can name the texture,
 * that a hidden layer learns it with the rules `generec`, `chl`, `eqprop` and `calcium`, the
 * gradient-agreement table, and writes SVG learning curves.
 * @module
 */
import path from "node:path";
import { EbbflowError } from "../errors/index.js";
import { DEMO_RULES, demoAgreement, demoRun, type DemoRun } from "../demo/run.js";
import { ruleDisplayName } from "../rules/names.js";
import { TOUCH_PATTERNS, touchStripDataset } from "../demo/touchStrip.js";
import { formatAgreement } from "../verify/agreement.js";
import { learningCurveSvg, writeSvg } from "../node/plot.js";
import { loadPlotStack } from "../node/plot/render.js";
import { resultsMetrics } from "../node/plot/results.js";
import { VERSION } from "./version.js";
import { ensureFolder } from "../node/run/folder.js";

/** Options of `ebbflow demo`. */
export interface DemoCommandOptions {
  readonly out?: string;
  readonly seeds?: number;
  readonly epochs?: number;
  readonly json?: boolean;
}

/** Runs the demo. */
export async function demoCommand(o: DemoCommandOptions): Promise<void> {
  const t0 = Date.now();
  const seeds = o.seeds ?? 10;
  const epochs = o.epochs ?? 1500;
  const out = o.out ?? "ebbflow-demo";
  const say = (s = "") => {
    if (!o.json) process.stdout.write(s + "\n");
  };
  const data = touchStripDataset();
  say("ebbflow demo — an 8-sensor touch strip on a robot fingertip");
  say("Two textures, each touching at a left or a right offset; name the texture.");
  TOUCH_PATTERNS.forEach((name, p) => say(`  ${name.padEnd(14)} sensors ${Array.from(data.inputs.subarray(p * 8, p * 8 + 8)).join("")}  -> ${data.classNames?.[data.labels?.[p] ?? 0]}`));
  say("Patterns of one texture share no sensor; each smooth pattern overlaps each striped one.");
  say("");

  say("1. No hidden layer (sensors -> texture), every rule, " + seeds + " seeds:");
  const flat: DemoRun[] = [];
  for (const rule of DEMO_RULES) {
    const runs = Array.from({ length: seeds }, (_, s) => demoRun(rule, s + 1, 0, 300));
    flat.push(...runs);
    say(`   ${ruleDisplayName(rule.config).padEnd(20)} most patterns right in any epoch: ${Math.max(...runs.map((r) => r.bestCorrect))} of 4; solved in ${runs.filter((r) => r.solved).length} of ${seeds} seeds`);
  }
  say("   Why: smooth-left + smooth-right = striped-left + striped-right = every sensor once, so for any");
  say("   weights the two smooth patterns' net inputs sum to the same as the two striped ones'. No threshold");
  say("   (and no arg-max of two output units) can put both smooth patterns on one side and both striped");
  say("   ones on the other: at most three of four can be right.");
  say("");

  say(`2. With a hidden layer of 4 units (symmetric feedback), ${seeds} seeds, up to ${epochs} epochs:`);
  say("   | rule | seeds solved | epochs to solve (median) | final sum squared error (median) |");
  say("   | --- | --- | --- | --- |");
  const hidden: Record<string, DemoRun[]> = {};
  const median = (v: number[]) => (v.length === 0 ? Number.NaN : [...v].sort((a, b) => a - b)[Math.floor((v.length - 1) / 2)]!);
  for (const rule of DEMO_RULES) {
    const runs = Array.from({ length: seeds }, (_, s) => demoRun(rule, s + 1, 4, epochs));
    const name = ruleDisplayName(rule.config);
    hidden[name] = runs;
    const solved = runs.filter((r) => r.solved);
    say(`   | ${name} | ${solved.length}/${seeds} | ${solved.length > 0 ? median(solved.map((r) => r.epochs)) : "-"} | ${median(runs.map((r) => r.finalSse)).toFixed(4)} |`);
  }
  say("");

  say("3. Gradient agreement on the hidden-layer network (seed 1, all four patterns):");
  const reports = demoAgreement(4, 1);
  for (const r of reports) say(formatAgreement(r).split("\n").map((l) => "   " + l).join("\n") + "\n");

  const written: string[] = [];
  let plotSkipped: string | undefined;
  try {
    await loadPlotStack(); // the optional plotting packages; the demo runs without them, minus the curves
  } catch (e) {
    if (!(e instanceof EbbflowError)) throw e;
    plotSkipped = e.message;
  }
  // the folder is made (and checked) only when there are curves to write
  if (plotSkipped === undefined) await ensureFolder(out, "--out");
  for (const rule of plotSkipped === undefined ? DEMO_RULES : []) {
    const name = ruleDisplayName(rule.config);
    const runs = hidden[name] ?? [];
    const svg = await learningCurveSvg(
      runs.map((r) => ({ label: `seed ${r.seed}`, results: { source: `${name} seed ${r.seed}`, header: { kind: "header" as const, ebbflow: VERSION, seed: r.seed, config: { rule: rule.config }, started: new Date(0).toISOString() }, epochs: r.history.map((e) => ({ ...e, train: resultsMetrics(e.train), test: resultsMetrics(e.test) })) } })),
      { metric: "sse", split: "train", title: `${name}: sum squared error per epoch (touch strip)`, logY: true },
    );
    const file = path.join(out, `${name.replace(/[^A-Za-z0-9]+/g, "-").replace(/-$/, "").toLowerCase()}-curves.svg`);
    await writeSvg(file, svg);
    written.push(file);
  }
  if (plotSkipped === undefined) {
    say(`4. Learning curves written to ${path.resolve(out)}:`);
    for (const w of written) say(`   ${path.basename(w)}`);
  } else say(`4. Learning curves not drawn: ${plotSkipped}`);
  say(`\nDone in ${((Date.now() - t0) / 1000).toFixed(1)} s.`);
  if (o.json) {
    process.stdout.write(
      JSON.stringify({
        noHidden: flat.map(({ history: _h, ...r }) => r),
        hidden: Object.fromEntries(Object.entries(hidden).map(([k, v]) => [k, v.map(({ history: _h, ...r }) => r)])),
        agreement: reports,
        written,
      }) + "\n",
    );
  }
}
