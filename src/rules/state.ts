/**
 * Validation of saved rule states (checkpoints): a damaged state is a typed error naming the field,
 * never a different run.
 * @module
 */
import { z } from "zod";
import { fail } from "../errors/index.js";
import type { Network } from "../network/network.js";

/** Schema of a state holding one array of finite numbers per layer and a `started` flag. */
export function layerArraysSchema(key: string): z.ZodType<unknown, unknown> {
  return z.object({ started: z.boolean(), [key]: z.array(z.array(z.number().refine(Number.isFinite, { error: "a finite number" }))) }).strict();
}

/**
 * Reads `{ started, [key]: number[][] }` from a saved rule state, checking one finite array of the
 * layer's size per layer of `net`.
 * @throws {@link EbbflowError} `invalid_config` at `rule.<key>[i]` (or `rule.started`) naming what is wrong.
 */
export function layerArraysState(net: Network, state: Readonly<Record<string, unknown>>, key: string, what: string): { started: boolean; values: number[][] } {
  const values = state[key];
  if (typeof state.started !== "boolean") fail("invalid_config", "rule.started", "true or false", state.started);
  if (!Array.isArray(values) || values.length !== net.layers.length) fail("invalid_config", `rule.${key}`, `${what}: one array per layer (${net.layers.length})`, values);
  (values as unknown[]).forEach((a, i) => {
    const size = net.layers[i]!.size;
    if (!Array.isArray(a) || a.length !== size) fail("invalid_config", `rule.${key}[${i}]`, `${size} numbers (layer ${JSON.stringify(net.layers[i]!.name)})`, a);
    (a as unknown[]).forEach((v, j) => {
      if (typeof v !== "number" || !Number.isFinite(v)) fail("invalid_config", `rule.${key}[${i}][${j}]`, "a finite number", v);
    });
  });
  return { started: state.started as boolean, values: values as number[][] };
}
