/**
 * Refusing option keys a function does not know: a misspelt option must be an error, never silently
 * ignored.
 * @module
 */
import { fail } from "./index.js";

/**
 * Refuses keys of an options object that a function does not know.
 * @throws {@link EbbflowError} `invalid_parameter` at `<path>.<key>`, listing the known options.
 * @category Errors
 */
export function refuseUnknownOptions(options: object | undefined | null, known: readonly string[], path = "options"): void {
  if (options === undefined || options === null || typeof options !== "object") return;
  for (const key of Object.keys(options)) if (!known.includes(key)) fail("invalid_parameter", `${path}.${key}`, `one of the options ${known.join(", ")}`, key);
}
