/**
 * The identity of a run's experiment: a hash of its resolved config (network, rule, training options, data
 * options and seed), stored in the checkpoint and the results header, so that resuming a run with a
 * different experiment is noticed (and refused unless the change is accepted and recorded).
 * @module
 */
import { canonicalJson, sha256Hex } from "../../sweep/hash.js";
import { formatConfigPath, type PathSegment } from "../../sweep/paths.js";

/**
 * The hash of a config: SHA-256 of its canonical JSON (sorted keys), in hexadecimal.
 * @param config - The resolved config as plain data.
 * @returns 64 hexadecimal digits.
 * @category Files
 */
export function configHashOf(config: unknown): string {
  return sha256Hex(canonicalJson(config));
}

/** A change of experiment accepted when a run was resumed (kept in the checkpoint and the results header). @category Files */
export interface ConfigChange {
  /** Epochs completed when the change took effect. */
  readonly epoch: number;
  /** ISO 8601 time of the resume. */
  readonly at: string;
  /** Config hash before. */
  readonly from: string;
  /** Config hash after. */
  readonly to: string;
  /** Config paths that differ (at most 20). */
  readonly paths: readonly string[];
}

/**
 * The config paths at which two configs differ (a changed, added or removed value), in key order.
 * @param a - One config.
 * @param b - The other.
 * @param limit - Most paths listed (default 20).
 * @returns The paths, e.g. `["rule.rate", "training.epochs"]`.
 * @category Files
 */
export function configDifferences(a: unknown, b: unknown, limit = 20): string[] {
  const out: string[] = [];
  const walk = (x: unknown, y: unknown, at: PathSegment[]): void => {
    if (out.length >= limit) return;
    const xo = x !== null && typeof x === "object";
    const yo = y !== null && typeof y === "object";
    if (xo && yo && Array.isArray(x) === Array.isArray(y)) {
      if (Array.isArray(x) && Array.isArray(y)) {
        if (x.length !== y.length) out.push(formatConfigPath(at) || "(root)");
        else for (let i = 0; i < x.length; i++) walk(x[i], y[i], [...at, i]);
        return;
      }
      const xr = x as Record<string, unknown>;
      const yr = y as Record<string, unknown>;
      const keys = [...new Set([...Object.keys(xr), ...Object.keys(yr)])].sort();
      for (const k of keys) walk(xr[k], yr[k], [...at, k]);
      return;
    }
    if (canonicalOrNull(x) !== canonicalOrNull(y)) out.push(formatConfigPath(at) || "(root)");
  };
  walk(a, b, []);
  return out;
}

function canonicalOrNull(v: unknown): string | null {
  if (v === undefined) return null;
  try {
    return canonicalJson(v);
  } catch {
    return null;
  }
}
