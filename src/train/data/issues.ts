/**
 * Collects the problems found while reading a data file, so one error reports
 * many bad cells at once (up to a cap, to keep messages readable).
 * @module
 */
import { EbbflowError, issueText, type ErrorCode, type Issue } from "../../errors/index.js";

/** Largest number of problems one parse reports before it stops reading. */
export const MAX_ISSUES = 20;

/** A bounded list of issues. @internal */
export class IssueList {
  readonly issues: Issue[] = [];

  /** Adds an issue (received already in words); returns false once the list is full. */
  add(code: ErrorCode, path: string, expected: string, received: string, detail?: string): boolean {
    if (this.issues.length < MAX_ISSUES) this.issues.push(issueText(code, path, expected, received, detail));
    return this.issues.length < MAX_ISSUES;
  }

  /** True when no more issues are taken. */
  get full(): boolean {
    return this.issues.length >= MAX_ISSUES;
  }

  /** Throws every collected issue as one {@link EbbflowError}. */
  throwIfAny(): void {
    if (this.issues.length > 0) throw new EbbflowError(this.issues);
  }
}

/** Renders a text cell for a message: quoted, or "an empty cell". @internal */
export function describeCell(text: string): string {
  if (text.trim() === "") return "an empty cell";
  const shown = text.length > 40 ? `${text.slice(0, 37)}...` : text;
  return JSON.stringify(shown);
}

/** Strict decimal number grammar: optional sign, digits with optional fraction, optional exponent. */
const DECIMAL = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;

/**
 * Parses a decimal number cell (surrounding spaces and tabs ignored). Returns
 * NaN for anything else: empty cells, `NaN`, `inf`, `Infinity`, hexadecimal,
 * decimal commas, or a value that overflows to ±Infinity.
 * @internal
 */
export function parseDecimal(text: string): number {
  const t = text.trim();
  if (!DECIMAL.test(t)) return Number.NaN;
  const v = Number(t);
  return Number.isFinite(v) ? v : Number.NaN;
}
