/**
 * Resource limits checked before anything large is allocated: the bytes of a network's parameters, of the
 * settling states of a batch, of persistent per-example states, and the number of runs of a sweep. A
 * request over a limit is a typed `resource_limit` error that states what it needs and how to raise the
 * limit, instead of an engine `RangeError` after gigabytes were allocated (or a loop that never returns).
 *
 * Limits are read from `setResourceLimits`, else from the environment variables `EBBFLOW_MAX_BYTES` and
 * `EBBFLOW_MAX_RUNS` where a `process` object exists (Node), else the defaults.
 * @module
 */
import { fail } from "../errors/index.js";

/** Resource limits. @category Errors */
export interface ResourceLimits {
  /** Largest single block of memory ebbflow asks for (parameters, a batch's states, persistent states), in bytes. */
  readonly maxBytes: number;
  /** Largest number of runs a sweep may expand to. */
  readonly maxRuns: number;
}

/** The defaults: 2 GiB per block, 100,000 runs per sweep. @category Errors */
export const DEFAULT_RESOURCE_LIMITS: ResourceLimits = { maxBytes: 2 * 1024 ** 3, maxRuns: 100_000 };

let override: Partial<ResourceLimits> = {};

function fromEnvironment(name: string): number | undefined {
  const env = (globalThis as { process?: { env?: Record<string, string | undefined> } }).process?.env;
  const text = env?.[name];
  if (text === undefined || text === "") return undefined;
  if (!/^\d+$/.test(text.trim())) fail("invalid_parameter", name, "a whole number (environment variable)", text);
  return Number(text.trim());
}

/**
 * The limits in force (see the module notes for where they come from).
 * @returns The limits.
 * @category Errors
 */
export function resourceLimits(): ResourceLimits {
  return {
    maxBytes: override.maxBytes ?? fromEnvironment("EBBFLOW_MAX_BYTES") ?? DEFAULT_RESOURCE_LIMITS.maxBytes,
    maxRuns: override.maxRuns ?? fromEnvironment("EBBFLOW_MAX_RUNS") ?? DEFAULT_RESOURCE_LIMITS.maxRuns,
  };
}

/**
 * Sets limits for this process (or thread); fields left out fall back to the environment and the defaults.
 * @param limits - New limits; `{}` resets.
 * @category Errors
 * @example
 * ```ts
 * setResourceLimits({ maxBytes: 16 * 1024 ** 3 }); // allow 16 GiB per block
 * ```
 */
export function setResourceLimits(limits: Partial<ResourceLimits>): void {
  for (const [k, v] of Object.entries(limits)) {
    if (v !== undefined && (typeof v !== "number" || !Number.isSafeInteger(v) || v < 1)) fail("invalid_parameter", k, "a whole number >= 1", v);
  }
  override = { ...limits };
}

/** Renders a byte count for messages: `8.0 GB (8000000000 bytes)`. */
function bytesText(bytes: number): string {
  const units = ["bytes", "kB", "MB", "GB", "TB", "PB"];
  let v = bytes;
  let u = 0;
  while (v >= 1000 && u < units.length - 1) {
    v /= 1000;
    u++;
  }
  return u === 0 ? `${bytes} bytes` : `${v.toPrecision(3)} ${units[u]} (${bytes.toExponential(3)} bytes)`;
}

/**
 * Requires that a block of `bytes` fits the byte limit; call before allocating it.
 * @param path - What the block is for, as a config path (e.g. `layers`, `training.batchSize`).
 * @param what - The block in words (e.g. `the network's parameters`).
 * @param bytes - Bytes needed (may be non-finite or above 2^53 for absurd requests).
 * @throws {@link EbbflowError} `resource_limit` stating the bytes needed and how to raise the limit.
 * @category Errors
 */
export function requireBytes(path: string, what: string, bytes: number): void {
  const { maxBytes } = resourceLimits();
  if (!(bytes <= maxBytes)) {
    fail("resource_limit", path, `at most ${bytesText(maxBytes)} for ${what} (raise with EBBFLOW_MAX_BYTES=<bytes> or setResourceLimits({ maxBytes }))`, `${bytesText(bytes)} needed`);
  }
}

/**
 * Requires that a sweep of `runs` runs fits the run limit; call before expanding it.
 * @param path - Where the count comes from (e.g. `grid`).
 * @param runs - Runs the sweep would have (may be above 2^53).
 * @throws {@link EbbflowError} `resource_limit`.
 * @category Errors
 */
export function requireRuns(path: string, runs: number): void {
  const { maxRuns } = resourceLimits();
  if (!(runs <= maxRuns)) fail("resource_limit", path, `at most ${maxRuns} runs in one sweep (raise with EBBFLOW_MAX_RUNS=<runs> or setResourceLimits({ maxRuns }))`, `${runs.toPrecision(4)} runs`);
}
