/**
 * Strict number parsing for command-line options: decimal notation only, so that `0x3`, `1_000`, `""`,
 * ` 5`, `Infinity` or `3abc` are refused instead of being read as some other number (`Number("0x3")` is 3,
 * `Number("")` is 0), and each option's range is checked where it is parsed.
 * @module
 */
import { InvalidArgumentError } from "commander";

const INTEGER = /^[+-]?\d+$/;
const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/**
 * Reads a whole number written in decimal digits.
 * @param text - The option's value.
 * @returns The number, or null when the text is not a safe integer in decimal notation.
 */
export function strictInteger(text: string): number | null {
  if (typeof text !== "string" || !INTEGER.test(text)) return null;
  const n = Number(text);
  return Number.isSafeInteger(n) ? n : null;
}

/**
 * Reads a finite number in decimal notation (digits, an optional point and exponent).
 * @param text - The option's value.
 * @returns The number, or null when the text is not one.
 */
export function strictNumber(text: string): number | null {
  if (typeof text !== "string" || !DECIMAL.test(text)) return null;
  const n = Number(text);
  return Number.isFinite(n) ? n : null;
}

/** A commander parser for an integer option >= `min` (and <= `max`). */
export const intOption =
  (name: string, min = 1, max = Number.MAX_SAFE_INTEGER) =>
  (v: string): number => {
    const n = strictInteger(v);
    if (n === null || n < min || n > max) throw new InvalidArgumentError(`${name} must be an integer ${max === Number.MAX_SAFE_INTEGER ? `>= ${min}` : `from ${min} to ${max}`} in decimal digits, got ${JSON.stringify(v)}`);
    return n;
  };

/** A commander parser for a finite number option in [min, max] (open at an end when `open` says so). */
export const numberOption =
  (name: string, range: { min?: number; max?: number; openMin?: boolean; openMax?: boolean; what?: string } = {}) =>
  (v: string): number => {
    const n = strictNumber(v);
    const { min = -Infinity, max = Infinity, openMin = false, openMax = false } = range;
    const ok = n !== null && (openMin ? n > min : n >= min) && (openMax ? n < max : n <= max);
    if (!ok) {
      const what = range.what ?? (min === -Infinity && max === Infinity ? "a finite number" : `a number in ${openMin ? "(" : "["}${min}, ${max}${openMax ? ")" : "]"}`);
      throw new InvalidArgumentError(`${name} must be ${what} in decimal notation, got ${JSON.stringify(v)}`);
    }
    return n as number;
  };
