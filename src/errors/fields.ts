/**
 * Number fields of config schemas (zod), each with its requirement in words as the error message,
 * so that a problem reads `expected a finite number > 0, received -1`.
 * @module
 */
import { z } from "zod";

/** A finite number. @category Errors */
export const finiteField = (what = "a finite number") => z.number({ error: what }).refine(Number.isFinite, { error: what });

/** A finite number > 0. @category Errors */
export const positiveField = (what = "a finite number > 0") => z.number({ error: what }).refine((v) => Number.isFinite(v) && v > 0, { error: what });

/** A finite number >= 0. @category Errors */
export const nonNegativeField = (what = "a finite number >= 0") => z.number({ error: what }).refine((v) => Number.isFinite(v) && v >= 0, { error: what });

/** An integer >= `min` (default 1). @category Errors */
export const integerField = (what?: string, min = 1) => {
  const text = what ?? `an integer >= ${min}`;
  return z.number({ error: text }).int({ error: text }).min(min, { error: text });
};
