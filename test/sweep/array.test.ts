import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { spawnSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { arraySpec, batchScript, parseArraySpec } from "../../src/node/sweep/slurm.js";
import { EbbflowError } from "../../src/errors/index.js";
import { submitSweep } from "../../src/node/sweep/slurm.js";
import { runSweepLocally } from "../../src/node/sweep/local.js";
import { expandSweep } from "../../src/sweep/expand.js";
import { check } from "../helpers/property.js";
import { stripExperiment as base } from "./fixtures.js";

describe("Slurm array specs and the batch script (no cluster needed)", () => {
  it("writes runs of consecutive indices as ranges, with an optional %K throttle", () => {
    expect(arraySpec([0, 1, 2, 3, 4, 5, 6, 7])).toBe("0-7");
    expect(arraySpec([0, 1, 2, 3, 4, 5, 6, 7], 2)).toBe("0-7%2");
    expect(arraySpec([7, 1, 3, 4, 5])).toBe("1,3-5,7");
    expect(parseArraySpec("0-3%1")).toEqual([0, 1, 2, 3]);
    // Slurm's step syntax (sbatch(1): --array=0-15:4 is 0, 4, 8, 12)
    expect(parseArraySpec("0-15:4")).toEqual([0, 4, 8, 12]);
  });

  it("reads its own specs back to the same indices", () => {
    check(
      fc.property(fc.uniqueArray(fc.nat(300), { minLength: 1, maxLength: 40 }), fc.option(fc.integer({ min: 1, max: 9 }), { nil: undefined }), (indices, k) => {
        expect(parseArraySpec(arraySpec(indices, k))).toEqual([...indices].sort((a, b) => a - b));
      }),
    );
  });

  it("quotes paths in the batch script so that bash passes them through unchanged", () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow it's a dir "));
    const script = batchScript(dir, "strip sweep", { cli: "/opt/my tools/it's/main.js", node: "/bin/echo", partition: "short", time: "00:10:00", cpusPerTask: 2 });
    expect(script).toMatch(/^#!\/bin\/bash\n#SBATCH --job-name=ebbflow-strip_sweep\n/);
    expect(script).toContain("#SBATCH --partition=short\n");
    expect(script).toContain("#SBATCH --cpus-per-task=2\n");
    const file = path.join(dir, "task.sh");
    writeFileSync(file, script);
    const r = spawnSync("bash", [file], { encoding: "utf8", env: { ...process.env, SLURM_ARRAY_TASK_ID: "5" } });
    expect(r.stdout).toBe(`/opt/my tools/it's/main.js sweep task ${dir} --index 5\n`);
  });

  it("rejects bad batch options and worker counts before anything runs", async () => {
    const plan = expandSweep({ base, seeds: [1] }, base);
    const out = mkdtempSync(path.join(tmpdir(), "ebbflow-slurm-options-"));
    await expect(submitSweep(plan, out, { cli: "relative/main.js" })).rejects.toThrow(expect.objectContaining({ path: "cli" }));
    await expect(submitSweep(plan, out, { cli: "/x/main.js", time: "ten minutes" })).rejects.toThrow(expect.objectContaining({ path: "time" }));
    await expect(submitSweep(plan, out, { cli: "/x/main.js", throttle: 0 })).rejects.toThrow(EbbflowError);
    for (const workers of [-1, 1.5, Number.NaN]) await expect(runSweepLocally(plan, { out, workers })).rejects.toThrow(expect.objectContaining({ code: "invalid_parameter", path: "workers" }));
  });
});
