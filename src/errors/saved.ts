/**
 * Problems of a saved file's content found by a schema, as `parse_error` issues: the one conversion used
 * by checkpoints, trainer states, random-stream states and sweep plans (a damaged saved file is a parse
 * problem at the field's path, not a config problem).
 * @module
 */
import { describeValue, formatPath, issueText, valueAt, type Issue } from "./index.js";

/** The parts of a zod issue this conversion reads (structural, so this module needs no zod import). */
interface SchemaIssue {
  readonly code: string;
  readonly path: readonly PropertyKey[];
  readonly message: string;
  readonly keys?: readonly string[];
}

/**
 * `parse_error` issues for a schema's problems with saved data, each at `prefix` + its path (the first 20).
 * @param issues - The schema's issues (`error.issues` of a failed `safeParse`).
 * @param data - The data that was checked (to describe what was found).
 * @param prefix - Path of the data, e.g. `trainer` (default: the root).
 * @returns The issues.
 * @category Errors
 */
export function savedDataIssues(issues: readonly SchemaIssue[], data: unknown, prefix: readonly PropertyKey[] = []): Issue[] {
  return issues.slice(0, 20).map((zi) => {
    if (zi.code === "unrecognized_keys") return issueText("parse_error", formatPath([...prefix, ...zi.path, zi.keys?.[0] ?? ""]), "no such field (unknown key)", (zi.keys ?? []).join(", "));
    return issueText("parse_error", formatPath([...prefix, ...zi.path]) || "(root)", zi.message.replace(/^Invalid input: expected /, "").replace(/, received \w+$/, ""), describeValue(valueAt(data, zi.path)));
  });
}
