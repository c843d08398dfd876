/**
 * Writing a model's parameters for other tools: one `.npy` or CSV file per
 * array, or one `.npz` archive of the whole model (see the interop module for
 * the names and layouts).
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { fail } from "../errors/index.js";
import type { Network } from "../network/network.js";
import { arrayToCsv, modelArrays, modelToNpz } from "../interop/model.js";
import { encodeNpy } from "../interop/npy.js";
import { writeFileAtomic } from "./files.js";

/** File formats of {@link exportModel}. @category Interop */
export type ExportFormat = "npy" | "npz" | "csv";

/** Options of {@link exportModel}. @category Interop */
export interface ExportOptions {
  /** `npy`: one `.npy` per array; `npz`: one archive with the declaration; `csv`: one CSV per array. */
  readonly format: ExportFormat;
  /** Folder to write into (created if missing). */
  readonly out: string;
  /** Archive name for `npz`, without extension (default `model`). */
  readonly name?: string | undefined;
}

/**
 * Writes a network's parameters into a folder, each file atomically.
 * @param net - The network.
 * @param options - Format, folder and (for `npz`) the archive's name.
 * @returns The files written, in order.
 * @throws `EbbflowError` `invalid_parameter` (path `format` or `out`); `io_error` when the folder cannot be written.
 * @category Interop
 * @example
 * ```ts
 * await exportModel(await loadModel("runs/a/model.json"), { format: "npz", out: "runs/a" }); // runs/a/model.npz
 * ```
 */
export async function exportModel(net: Network, options: ExportOptions): Promise<string[]> {
  const { format, out } = options;
  if (format !== "npy" && format !== "npz" && format !== "csv") return fail("invalid_parameter", "format", '"npy", "npz" or "csv"', format);
  if (typeof out !== "string" || out === "") return fail("invalid_parameter", "out", "a folder path", out);
  try {
    await fs.mkdir(out, { recursive: true });
  } catch (e) {
    return fail("io_error", out, "a folder that can be created", (e as Error).message);
  }
  if (format === "npz") {
    const name = options.name ?? "model";
    if (typeof name !== "string" || name === "" || /[/\\]/.test(name)) fail("invalid_parameter", "name", "a file name without folders", name);
    const file = path.join(out, `${name}.npz`);
    await writeFileAtomic(file, modelToNpz(net));
    return [file];
  }
  const written: string[] = [];
  for (const a of modelArrays(net)) {
    const file = path.join(out, `${a.key}.${format}`);
    await writeFileAtomic(file, format === "npy" ? encodeNpy(a.view) : arrayToCsv(a.view));
    written.push(file);
  }
  return written;
}
