/**
 * File-system errors in words: an operating-system error code (EROFS, ENOSPC, ...) becomes a typed
 * `io_error` that says what went wrong, instead of a bare code or a misleading one.
 * @module
 */
import { fail } from "../errors/index.js";

const WORDS: Readonly<Record<string, string>> = {
  EROFS: "a read-only file system",
  EACCES: "permission denied",
  EPERM: "operation not permitted",
  ENOSPC: "no space left on the device",
  EDQUOT: "disk quota exceeded",
  EFBIG: "the file size limit was reached (ulimit -f)",
  ENAMETOOLONG: "a name too long for the file system",
  ENOTDIR: "a path through something that is not a folder",
  EISDIR: "a folder where a file was expected",
  ENOENT: "no such file or folder",
  EEXIST: "something that already exists",
  EMFILE: "too many open files",
  EIO: "an input/output error of the device",
  ELOOP: "too many symbolic links",
  EBUSY: "a busy file or device",
  EXDEV: "a rename across file systems",
};

/**
 * Words for a Node file-system error: `a read-only file system (EROFS)`.
 * @param e - The caught error.
 * @returns A short description.
 * @category Files
 */
export function ioErrorText(e: unknown): string {
  const code = (e as NodeJS.ErrnoException | null)?.code;
  if (typeof code === "string") return WORDS[code] !== undefined ? `${WORDS[code]} (${code})` : code;
  return (e as Error | null)?.message ?? String(e);
}

/**
 * Throws an `io_error` for a failed file-system operation.
 * @param e - The caught error.
 * @param path - The file or folder.
 * @param expected - What was needed, e.g. `a writable folder`.
 * @throws `EbbflowError` `io_error`, always.
 * @category Files
 */
export function ioFail(e: unknown, path: string, expected: string): never {
  return fail("io_error", path, expected, ioErrorText(e));
}
