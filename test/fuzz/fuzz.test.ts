/**
 * A fixed-seed slice of the fuzz suite (`npm run fuzz` runs 10,000 cases per kind): every input kind, a few
 * dozen cases each, in this process. Each case must end refused with a typed error or accepted with a result
 * that passes the kind's independent checks: no untyped error, no silently wrong result (a hang fails the
 * test by its time limit).
 */
import { describe, it, expect } from "vitest";
import fc from "fast-check";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { cliKind, kinds, type FuzzKind } from "../../bench/fuzz/kinds.js";

const SEED = 20261201;
const mainUrl = pathToFileURL(path.resolve(import.meta.dirname, "../../dist/cli/main.js")).href;
const CASES: Record<string, number> = { "cli-train": 12, "checkpoint-fields": 20, "sweep-file": 20 };

describe("fuzz slice (fixed seed)", () => {
  for (const kind of [...kinds, cliKind(mainUrl) as FuzzKind]) {
    it(`${kind.name}: ${kind.about}`, async () => {
      const failures: string[] = [];
      const n = CASES[kind.name] ?? 30;
      for (let i = 0; i < n; i++) {
        const c = fc.sample(kind.cases, { seed: SEED + i * 7919, numRuns: 1 })[0];
        const v = await kind.run(c);
        if (v.kind === "untyped" || v.kind === "wrong") failures.push(`case ${i}: ${v.kind}: ${v.detail}`);
      }
      expect(failures).toEqual([]);
    }, 120_000);
  }
});
