/**
 * The schema of a fixed train/test split in experiment files (`data.split`); reading the split is in
 * `ebbflow/node`.
 * @module
 */
import { z } from "zod";

/**
 * A fixed split: `{ "train": "train.idx", "test": "test.idx" }` (index files: 0-based row numbers, as a
 * JSON array or separated by white space or commas), or `{ "column": "set" }` (a column of the CSV file
 * holding `train` or `test` on every row; it is not an input), or `{ "first": 8000, "last": 2000 }` (the
 * first rows of the source's fixed order for training and the last rows for testing, e.g. the 8,000 / 2,000
 * digits split; the two parts may not overlap).
 * @category Files
 */
export type FixedSplit = { readonly train: string; readonly test: string } | { readonly column: string | number } | { readonly first: number; readonly last: number };

/** Schema of a fixed split (experiment files, `data.split`). @category Files */
export const fixedSplitSchema = z.union(
  [
    z.object({ train: z.string().min(1), test: z.string().min(1) }).strict(), z.object({ column: z.union([z.string().min(1), z.number().int().min(0)]) }).strict(),
    z.object({ first: z.number().int().min(1), last: z.number().int().min(1) }).strict(),
  ],
  { error: 'index files { "train": file, "test": file }, a column { "column": name or index } or row counts { "first": n, "last": m }' },
);
