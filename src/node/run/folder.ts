/**
 * Run folders: creating them safely, holding an exclusive lock for the run, cleaning temporary files that a
 * crash left behind, and refusing to mix two runs in one folder.
 *
 * - The folder is created one level at a time below its nearest existing ancestor (never with a recursive
 *   `mkdir`, which loops forever under `/proc` and reports a read-only file system as `ENOENT`); a path
 *   through a file, a read-only or unwritable place, or a name too long is a typed `io_error`.
 * - The lock is the file `.lock`, created exclusively (`O_EXCL`) and holding the owner's process id, host
 *   name and a random token. A lock whose process is gone (same host, no such process id) is stale and is
 *   taken over; a lock held by a live process, or by another host, refuses the second writer.
 * - Temporary files of atomic writes (`.NAME.PID.HEX.tmp`) are removed once the lock is held: every writer
 *   of a run folder holds its lock, so they can only be left over from a crash.
 * @module
 */
import { promises as fs, constants as fsConstants } from "node:fs";
import os from "node:os";
import path from "node:path";
import { randomBytes } from "node:crypto";
import { threadId } from "node:worker_threads";
import { EbbflowError, fail } from "../../errors/index.js";
import { ioErrorText, ioFail } from "../io.js";

/** The files of a run folder. @category Files */
export interface RunFolderFiles {
  readonly dir: string;
  /** `results.jsonl`: header, one line per epoch, end line. */
  readonly results: string;
  /** `model.json`: the final model (written before the end line). */
  readonly model: string;
  /** `checkpoint.json`: model, trainer state, config identity and stop reason. */
  readonly checkpoint: string;
  /** `.lock`: held while a process writes the folder. */
  readonly lock: string;
}

/**
 * The files of a run folder.
 * @param dir - The folder.
 * @returns Absolute paths.
 * @category Files
 */
export function runFolderFiles(dir: string): RunFolderFiles {
  const d = path.resolve(dir);
  return { dir: d, results: path.join(d, "results.jsonl"), model: path.join(d, "model.json"), checkpoint: path.join(d, "checkpoint.json"), lock: path.join(d, ".lock") };
}

/** Longest file name most file systems take, in bytes (POSIX NAME_MAX on Linux, macOS, Windows). */
const NAME_MAX = 255;
/** Longest path Linux takes, in bytes (PATH_MAX). */
const PATH_MAX = 4096;

/** Whether an error of `fs.stat` means "there is nothing here". */
const missing = (e: unknown) => (e as NodeJS.ErrnoException).code === "ENOENT";

/**
 * Creates a folder (and its missing parents, one level at a time) and checks that it is a writable folder.
 * @param dir - The folder.
 * @param what - How to name it in errors (e.g. `--out`).
 * @returns The absolute path.
 * @throws `EbbflowError` `io_error` for a path through a file, a read-only or unwritable place, a name
 *   too long, or any other failure, in words.
 * @category Files
 */
export async function ensureFolder(dir: string, what = dir): Promise<string> {
  if (typeof dir !== "string" || dir.length === 0 || dir.includes("\0")) fail("io_error", what, "a folder path", dir);
  const abs = path.resolve(dir);
  if (Buffer.byteLength(abs) > PATH_MAX) fail("io_error", what, `a path of at most ${PATH_MAX} bytes`, `${Buffer.byteLength(abs)} bytes`);
  for (const part of abs.split(path.sep)) if (Buffer.byteLength(part) > NAME_MAX) fail("io_error", what, `folder names of at most ${NAME_MAX} bytes`, `a name of ${Buffer.byteLength(part)} bytes`);
  // the nearest existing ancestor, then each missing level below it
  const toCreate: string[] = [];
  let cur = abs;
  for (;;) {
    const st = await fs.stat(cur).catch((e: unknown) => (missing(e) ? null : ioFail(e, what, `a folder path (at ${cur})`)));
    if (st !== null) {
      if (!st.isDirectory()) fail("io_error", what, "a folder path", `${cur} is a file, not a folder`);
      break;
    }
    const parent = path.dirname(cur);
    if (parent === cur) fail("io_error", what, "a folder path", `no such root ${cur}`);
    toCreate.push(cur);
    cur = parent;
  }
  for (const d of toCreate.reverse()) {
    try {
      await fs.mkdir(d);
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code !== "EEXIST") ioFail(e, what, `a folder that can be created (at ${d})`);
    }
  }
  try {
    await fs.access(abs, fsConstants.W_OK);
  } catch (e) {
    ioFail(e, what, "a writable folder");
  }
  return abs;
}

/** What a locked folder's error expects (see {@link isFolderBusy}). */
const FOLDER_BUSY = "a run folder no other process is writing";

/**
 * Whether an error says that another process holds a folder's lock.
 * @param e - A caught error.
 * @returns True for the lock error of {@link acquireRunLock}.
 * @category Files
 */
export function isFolderBusy(e: unknown): boolean {
  return e instanceof EbbflowError && e.code === "io_error" && e.expected === FOLDER_BUSY;
}

/** What a lock file holds. */
interface LockRecord {
  readonly pid: number;
  readonly host: string;
  readonly thread: number;
  readonly token: string;
  readonly since: string;
}

/** A held run lock. @category Files */
export interface RunLock {
  readonly file: string;
  /** Removes the lock (only if it is still this holder's). */
  release(): Promise<void>;
}

/** Whether a process id is alive on this host (EPERM: it exists but belongs to someone else). */
function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === "EPERM";
  }
}

function parseLock(text: string): LockRecord | null {
  try {
    const v = JSON.parse(text) as Partial<LockRecord> | null;
    if (v === null || typeof v !== "object" || typeof v.pid !== "number" || typeof v.host !== "string" || typeof v.token !== "string") return null;
    return v as LockRecord;
  } catch {
    return null;
  }
}

/** A lock file that does not parse is a crash during its (tiny) write once it is this old, in milliseconds. */
const TORN_LOCK_AGE = 10_000;

/**
 * Takes the exclusive lock of a folder (see the module notes).
 * @param dir - The folder (must exist).
 * @param what - How to name the folder in errors (e.g. `--out`).
 * @returns The lock; release it when the run ends.
 * @throws `EbbflowError` `io_error` when another live process (or another host) holds the lock.
 * @category Files
 */
export async function acquireRunLock(dir: string, what = dir): Promise<RunLock> {
  const file = path.join(path.resolve(dir), ".lock");
  const mine: LockRecord = { pid: process.pid, host: os.hostname(), thread: threadId, token: randomBytes(8).toString("hex"), since: new Date().toISOString() };
  const text = JSON.stringify(mine) + "\n";
  for (let attempt = 0; attempt < 3; attempt++) {
    try {
      const h = await fs.open(file, "wx");
      try {
        await h.writeFile(text);
        await h.sync();
      } finally {
        await h.close();
      }
      return { file, release: () => releaseLock(file, mine.token) };
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code !== "EEXIST") ioFail(e, what, "a folder where a lock file can be created");
    }
    let held: string;
    try {
      held = await fs.readFile(file, "utf8");
    } catch (e) {
      if (missing(e)) continue; // released meanwhile: try again
      return ioFail(e, `${what} (.lock)`, "a readable lock file");
    }
    const owner = parseLock(held);
    let stale = false;
    if (owner === null) {
      const age = await fs.stat(file).then((s) => Date.now() - s.mtimeMs, () => Infinity);
      stale = age > TORN_LOCK_AGE;
      if (!stale) fail("io_error", what, FOLDER_BUSY, "a lock file being written right now");
    } else if (owner.host === os.hostname()) stale = !alive(owner.pid);
    if (!stale) {
      const who = owner === null ? "another process" : `process ${owner.pid} on ${owner.host}${owner.host === os.hostname() ? "" : " (another host: remove .lock by hand if that run is gone)"} since ${owner.since}`;
      fail("io_error", what, FOLDER_BUSY, `it is locked by ${who}`);
    }
    // a stale lock: move it aside (atomic), check that it is the one we judged, and start over
    const aside = `${file}.stale.${process.pid}.${randomBytes(4).toString("hex")}`;
    try {
      await fs.rename(file, aside);
    } catch (e) {
      if (missing(e)) continue;
      ioFail(e, `${what} (.lock)`, "a stale lock file that can be removed");
    }
    const moved = await fs.readFile(aside, "utf8").catch(() => "");
    if (moved !== held) {
      // someone replaced the stale lock with a live one in between: put it back and report it as held
      await fs.link(aside, file).catch(() => undefined);
      await fs.rm(aside, { force: true });
      fail("io_error", what, FOLDER_BUSY, "it was locked by another process just now");
    }
    await fs.rm(aside, { force: true });
  }
  return fail("io_error", what, "a run folder whose lock can be taken", "the lock changed hands repeatedly");
}

async function releaseLock(file: string, token: string): Promise<void> {
  const text = await fs.readFile(file, "utf8").catch(() => null);
  if (text !== null && parseLock(text)?.token === token) await fs.rm(file, { force: true }).catch(() => undefined);
}

/** Name of an atomic write's temporary file: `.NAME.PID.HEX.tmp`. */
const TEMP = /^\..+\.(\d+)\.[0-9a-f]+\.tmp$/;

/**
 * Removes the temporary files of atomic writes from a folder. With `deadOnly`, only those whose writer
 * (the process id in the name) is no longer alive on this host: use it for folders several processes write
 * without a lock (a sweep's top folder). Without it, every temporary file: only for a folder whose lock is held.
 * @param dir - The folder.
 * @param options - `deadOnly`.
 * @returns The names removed.
 * @category Files
 */
export async function cleanTemporaryFiles(dir: string, options: { deadOnly?: boolean } = {}): Promise<string[]> {
  const removed: string[] = [];
  let names: string[];
  try {
    names = await fs.readdir(dir);
  } catch {
    return removed;
  }
  for (const name of names) {
    const m = TEMP.exec(name);
    if (m === null) continue;
    if (options.deadOnly && alive(Number(m[1]))) continue;
    await fs.rm(path.join(dir, name), { force: true }).catch(() => undefined);
    removed.push(name);
  }
  return removed;
}

/** How {@link claimRunFolder} treats a folder that already holds files. @category Files */
export type RunFolderMode = "new" | "resume" | "overwrite";

/** Files a run writes into its folder (removed by `overwrite`). */
const RUN_FILE_NAMES = ["results.jsonl", "model.json", "checkpoint.json", "failure.json"];

/**
 * Prepares a run folder: creates it, takes its lock, removes leftover temporary files, and then
 * - `new`: refuses a folder that holds anything (another run's results would be mixed with this one's);
 * - `overwrite`: removes the previous run's files (results, model, checkpoint; other files are kept);
 * - `resume`: keeps everything (the caller resumes from the checkpoint).
 * @param dir - The folder.
 * @param mode - See above.
 * @param what - How to name the folder in errors (default `--out`).
 * @returns The folder's files and the held lock (release it when done, also on failure).
 * @throws `EbbflowError` `io_error` (folder, lock), `invalid_config` (a non-empty folder in `new` mode).
 * @category Files
 */
export async function claimRunFolder(dir: string, mode: RunFolderMode, what = "--out"): Promise<{ files: RunFolderFiles; lock: RunLock }> {
  const abs = await ensureFolder(dir, what);
  const lock = await acquireRunLock(abs, what);
  try {
    await cleanTemporaryFiles(abs);
    const files = runFolderFiles(abs);
    if (mode !== "resume") {
      const present = (await fs.readdir(abs)).filter((n) => n !== ".lock");
      if (mode === "new" && present.length > 0) {
        const shown = present.slice(0, 4).join(", ") + (present.length > 4 ? `, ... (${present.length} entries)` : "");
        fail("invalid_config", what, "an empty or new folder (--resume continues the run in it, --overwrite replaces it)", `a folder holding ${shown}`);
      }
      if (mode === "overwrite") for (const n of RUN_FILE_NAMES) await fs.rm(path.join(abs, n), { force: true }).catch((e: unknown) => ioFail(e, path.join(abs, n), `a removable file (${ioErrorText(e)})`));
    }
    return { files, lock };
  } catch (e) {
    await lock.release();
    throw e;
  }
}
