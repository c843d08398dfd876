/**
 * A run's epoch records live once, in `results.jsonl`; its checkpoints refer to them by a hash chain instead
 * of carrying the whole history (which made every checkpoint, and so a run, grow with its length). The chain
 * over the first N epoch lines is `h_0 = 64 zeros`, `h_k = SHA-256(h_{k-1} + "\n" + line_k)` (NIST FIPS
 * 180-4): it costs one small hash per epoch, and a resume checks the lines it reads against it byte for byte.
 * @module
 */
import { EbbflowError, issueText } from "../../errors/index.js";
import { sha256Hex } from "../../sweep/hash.js";
import type { EpochRecord } from "../../train/loop.js";

/** The chain of an empty history. @category Files */
export const HISTORY_CHAIN_START = "0".repeat(64);

/**
 * One step of the history chain.
 * @param previous - The chain so far.
 * @param line - The next epoch line as written (JSON text, no newline).
 * @returns The new chain value.
 * @category Files
 */
export function chainHistory(previous: string, line: string): string {
  return sha256Hex(`${previous}\n${line}`);
}

/** Where a checkpoint's history is: the first `epochs` epoch lines of `file` (beside the checkpoint), with their chain. @category Files */
export interface HistoryReference {
  readonly file: string;
  readonly epochs: number;
  readonly chain: string;
}

/**
 * Reads the first `ref.epochs` epoch records of a results file's text and checks them against the chain.
 * Lines after them (epochs run after the checkpoint, a torn last line, an end line) are ignored.
 * @param text - The results file's text.
 * @param ref - The checkpoint's reference.
 * @param where - The results file's name, for errors.
 * @returns The records.
 * @throws `EbbflowError` `parse_error` when lines are missing, unreadable or differ from the chain.
 * @category Files
 */
export function historyFromResults(text: string, ref: HistoryReference, where: string): EpochRecord[] {
  const out: EpochRecord[] = [];
  let chain = HISTORY_CHAIN_START;
  let start = 0;
  let lineNo = 0;
  while (out.length < ref.epochs) {
    const end = text.indexOf("\n", start);
    if (end < 0) break;
    const line = text.slice(start, end);
    start = end + 1;
    lineNo++;
    if (lineNo === 1) continue; // the header
    let value: unknown;
    try {
      value = JSON.parse(line);
    } catch (e) {
      throw new EbbflowError(issueText("parse_error", `${where}:line ${lineNo}`, `epoch ${out.length + 1} of the checkpoint's history`, `unreadable JSON (${(e as Error).message})`));
    }
    if (value === null || typeof value !== "object" || (value as { kind?: unknown }).kind !== "epoch") {
      throw new EbbflowError(issueText("parse_error", `${where}:line ${lineNo}`, `epoch ${out.length + 1} of the checkpoint's history`, "another kind of line"));
    }
    chain = chainHistory(chain, line);
    out.push(value as EpochRecord);
  }
  if (out.length < ref.epochs) throw new EbbflowError(issueText("parse_error", where, `${ref.epochs} epoch lines (the checkpoint's history)`, `${out.length} complete epoch lines`));
  if (chain !== ref.chain) throw new EbbflowError(issueText("parse_error", where, `epoch lines 1 to ${ref.epochs} as the checkpoint recorded them (history chain ${ref.chain.slice(0, 12)}...)`, `lines that differ (chain ${chain.slice(0, 12)}...)`));
  return out;
}
