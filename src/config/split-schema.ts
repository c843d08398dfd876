/**
 * The schema of a fixed train/test split in experiment files (`data.split`); reading the split is in
 * `ebbflow/node`.
 * @module
 */
import { z } from "zod";

/**
 * A fixed split: `{ "train": "train.idx", "test": "test.idx" }` (index files: 0-based row numbers, as a
 * JSON array or separated by white space or commas), or `{ "column": "set" }` (a column of the CSV file
 * holding `train` or `test` on every row; it is not an input).
 * @category Files
 */
export type FixedSplit = { readonly train: string; readonly test: string } | { readonly column: string | number };

/** Schema of a fixed split (experiment files, `data.split`). @category Files */
export const fixedSplitSchema = z.union(
  [z.object({ train: z.string().min(1), test: z.string().min(1) }).strict(), z.object({ column: z.union([z.string().min(1), z.number().int().min(0)]) }).strict()],
  { error: 'index files { "train": file, "test": file } or a column { "column": name or index }' },
);
