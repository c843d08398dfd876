/**
 * `ebbflow plot`: SVG learning curves from results files, and weight matrices or receptive fields
 * from saved models.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { fail } from "../errors/index.js";
import { loadModel } from "../node/files.js";
import { connectionFieldsSvg, learningCurveSvg, readResults, receptiveFieldsSvg, weightMatrixSvg, writeSvg } from "../node/plot.js";

/** Options of `ebbflow plot`. */
export interface PlotCommandOptions {
  readonly out?: string;
  readonly metric?: string;
  readonly split?: "train" | "test" | "both";
  readonly weights?: string;
  readonly connection?: string;
  readonly image?: string;
  readonly title?: string;
  readonly json?: boolean;
}

/** Runs `ebbflow plot RESULTS.jsonl... [--weights MODEL.json]`. */
export async function plotCommand(files: string[], o: PlotCommandOptions): Promise<void> {
  const written: string[] = [];
  if (files.length > 0) {
    const runs = [];
    for (const f of files) {
      let text: string;
      try {
        text = await fs.readFile(f, "utf8");
      } catch (e) {
        return fail("io_error", f, "a readable results file", (e as NodeJS.ErrnoException).code ?? (e as Error).message);
      }
      runs.push({ label: path.basename(path.dirname(path.resolve(f))), results: readResults(text, f) });
    }
    const metric = o.metric ?? "sse";
    const out = o.out ?? path.join(path.dirname(files[0]!), `${metric}.svg`);
    const hasTest = runs.some((r) => r.results.epochs.some((e) => e.test !== undefined));
    await writeSvg(out, await learningCurveSvg(runs, { metric, split: o.split ?? (hasTest ? "both" : "train"), title: o.title ?? `${metric} per epoch` }));
    written.push(out);
  }
  if (o.weights !== undefined) {
    const net = await loadModel(o.weights);
    const c = o.connection !== undefined ? net.connections.find((x) => x.label === o.connection) : net.connections[0];
    if (c === undefined) fail("unknown_name", "--connection", `a connection label (${net.connections.map((x) => x.label).join(", ")})`, o.connection);
    const rows = net.layers[c.to]!.size;
    const cols = net.layers[c.from]!.size;
    const base = o.out !== undefined && files.length === 0 ? o.out : path.join(path.dirname(o.weights), `${c.label.replace(/[^A-Za-z0-9_-]+/g, "_")}.svg`);
    if (o.image !== undefined) {
      const [w, h] = o.image.split("x").map(Number);
      if (!w || !h || w * h !== cols) fail("invalid_parameter", "--image", `WIDTHxHEIGHT with WIDTH*HEIGHT = ${cols} (the sending layer's size)`, o.image);
      await writeSvg(base, await receptiveFieldsSvg(c.weights, rows, cols, w, h, { title: o.title ?? `receptive fields of ${c.label}` }));
    } else if (net.layers[c.from]!.geometry[0] > 1) {
      // a sending layer with a 2-D shape: fields drawn as images of it, in a grid that follows the receiving layer
      await writeSvg(base, await connectionFieldsSvg(net, c, { title: o.title ?? `receptive fields of ${c.label}` }));
    } else await writeSvg(base, await weightMatrixSvg(c.weights, rows, cols, { title: o.title ?? `weights ${c.label}`, rowLabel: net.layers[c.to]!.name, colLabel: net.layers[c.from]!.name }));
    written.push(base);
  }
  if (written.length === 0) fail("invalid_parameter", "RESULTS", "at least one results file or --weights MODEL.json", "nothing");
  if (o.json) process.stdout.write(JSON.stringify({ written }) + "\n");
  else for (const w of written) process.stdout.write(`wrote ${w}\n`);
}
