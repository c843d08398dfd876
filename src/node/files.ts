/**
 * Node-only file helpers: atomic writes (temporary file, flush, rename) and
 * model files on disk.
 * @module
 */
import { promises as fs } from "node:fs";
import path from "node:path";
import { randomBytes } from "node:crypto";
import { ioFail } from "./io.js";
import type { Network } from "../network/network.js";
import { modelFromData, modelToJson } from "../config/modelFile.js";

/**
 * Writes `data` to `file` atomically: a temporary file in the same folder is
 * written and flushed, then renamed over the target, so a reader (or a crash)
 * never sees a half-written file. The previous file stays intact until the rename.
 * @category Files
 */
export async function writeFileAtomic(file: string, data: string | Uint8Array): Promise<void> {
  const dir = path.dirname(file);
  const tmp = path.join(dir, `.${path.basename(file)}.${process.pid}.${randomBytes(6).toString("hex")}.tmp`);
  let handle: fs.FileHandle | undefined;
  try {
    handle = await fs.open(tmp, "w");
    await handle.writeFile(data);
    await handle.sync();
    await handle.close();
    handle = undefined;
    await fs.rename(tmp, file);
  } catch (e) {
    if (handle !== undefined) await handle.close().catch(() => undefined);
    await fs.rm(tmp, { force: true }).catch(() => undefined);
    ioFail(e, file, "a writable path");
  }
}

/** Saves a network and its parameters as a model file, atomically. @category Files */
export async function saveModel(file: string, net: Network): Promise<void> {
  await writeFileAtomic(file, modelToJson(net));
}

/** Loads a model file written by {@link saveModel} (bit-exact). @category Files */
export async function loadModel(file: string): Promise<Network> {
  let text: string;
  try {
    text = await fs.readFile(file, "utf8");
  } catch (e) {
    return ioFail(e, file, "a readable model file");
  }
  return modelFromData(text);
}
