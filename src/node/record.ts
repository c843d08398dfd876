/**
 * Writing a {@link Recorder}'s contents to files: JSON Lines, CSV and one NumPy `.npy` array per
 * channel, each written atomically.
 * @module
 */
import path from "node:path";
import { promises as fs } from "node:fs";
import { fail } from "../errors/index.js";
import type { Recorder } from "../record/recorder.js";
import { writeFileAtomic } from "./files.js";
import { ioFail } from "./io.js";

/** The files {@link writeRecording} wrote. @category Recording */
export interface RecordingFiles {
  readonly jsonl: string;
  readonly csv: string;
  /** Per channel name, its `.npy` file (float64, shape patterns × steps × batch × size). */
  readonly npy: Readonly<Record<string, string>>;
  /** Steps recorded per pattern (int32, shape patterns). */
  readonly steps: string;
}

/** A channel name as a file-name part: anything but letters, digits, `.`, `_` and `-` becomes `_` (`in->h` → `in-_h`). */
export function channelFileName(name: string): string {
  return name.replace(/[^A-Za-z0-9._-]/g, "_");
}

/**
 * Writes a recording into folder `dir` (made if missing): `<prefix>.jsonl`, `<prefix>.csv`,
 * `<prefix>.<channel>.npy` per channel and `<prefix>.steps.npy`.
 * @throws EbbflowError `io_error` when a file cannot be written; `invalid_parameter` for a bad prefix.
 * @category Recording
 */
export async function writeRecording(dir: string, recorder: Recorder, prefix = "recording"): Promise<RecordingFiles> {
  if (typeof prefix !== "string" || !/^[A-Za-z0-9._-]+$/.test(prefix)) fail("invalid_parameter", "prefix", "a file-name prefix of letters, digits, '.', '_' and '-'", prefix);
  try {
    await fs.mkdir(dir, { recursive: true });
  } catch (e) {
    ioFail(e, dir, "a folder that can be made");
  }
  const at = (name: string) => path.join(dir, name);
  const jsonl = at(`${prefix}.jsonl`);
  const csv = at(`${prefix}.csv`);
  await writeFileAtomic(jsonl, recorder.toJsonLines());
  await writeFileAtomic(csv, recorder.toCsv());
  const npy: Record<string, string> = {};
  const used = new Set<string>();
  for (const name of recorder.channelNames) {
    let base = channelFileName(name);
    while (used.has(base)) base += "_";
    used.add(base);
    const file = at(`${prefix}.${base}.npy`);
    await writeFileAtomic(file, recorder.toNpy(name));
    npy[name] = file;
  }
  const steps = at(`${prefix}.steps.npy`);
  await writeFileAtomic(steps, recorder.stepsNpy());
  return { jsonl, csv, npy, steps };
}
