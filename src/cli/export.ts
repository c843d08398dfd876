/**
 * `ebbflow export`: a saved model's parameters as NumPy `.npy` files, one `.npz` archive, or CSV files.
 * @module
 */
import path from "node:path";
import { Option, type Command } from "commander";
import { loadModel } from "../node/files.js";
import { exportModel, type ExportFormat } from "../node/export.js";
import { guard } from "./output.js";

/** Options of `ebbflow export`. */
interface ExportCommandOptions {
  readonly format: ExportFormat;
  readonly out?: string;
  readonly json?: boolean;
}

async function exportCommand(model: string, o: ExportCommandOptions): Promise<void> {
  const net = await loadModel(model);
  const out = o.out ?? path.dirname(model);
  const written = await exportModel(net, { format: o.format, out, name: path.basename(model).replace(/\.json$/i, "") });
  if (o.json) process.stdout.write(JSON.stringify({ written }) + "\n");
  else for (const w of written) process.stdout.write(`wrote ${w}\n`);
}

/** Adds `ebbflow export` to the program. */
export function registerExport(program: Command): void {
  program
    .command("export")
    .description("write a saved model's weights and biases for NumPy and other tools (.npy files, one .npz archive, or CSV)")
    .argument("<model>", "MODEL.json (a saved model)")
    .addOption(new Option("--format <format>", "npy (one file per array), npz (one archive with the declaration) or csv").choices(["npy", "npz", "csv"]).default("npz"))
    .option("--out <dir>", "folder to write into (default: the model's folder)")
    .option("--json", "machine-readable output")
    .action(guard(exportCommand));
}
