/**
 * Run-folder writing cost: a small XOR network trained for 1,000, 2,000 and 4,000 epochs through the epoch
 * driver (results appended per epoch, a checkpoint every 10 epochs, as `ebbflow train` does). Linear cost
 * shows as a constant time per epoch; the figure to compare is the ratio of the 4,000- to the 1,000-epoch
 * run (about 4 when linear; it was 8.4 when the results file was rewritten every epoch).
 */
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { buildNetwork, Trainer, xorDataset } from "../src/index.js";
import { claimRunFolder, driveRun } from "../src/node/index.js";

const network = {
  seed: 1,
  layers: [
    { name: "in", size: 2, role: "input" as const },
    { name: "hid", size: 4, role: "hidden" as const },
    { name: "out", size: 1, role: "output" as const },
  ],
  connections: [
    { from: "in", to: "hid", feedback: { kind: "tied" as const, gain: 1 } },
    { from: "hid", to: "out", feedback: { kind: "tied" as const, gain: 1 } },
  ],
};

async function once(epochs: number): Promise<number> {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-bench-runs-"));
  const config = { network, rule: { rule: "generec", rate: 0.2 }, training: { epochs, batchSize: 4 }, data: { source: "xor" }, seed: 1 };
  const t0 = performance.now();
  const { files, lock } = await claimRunFolder(dir, "new");
  const trainer = new Trainer(buildNetwork(network), config.rule as never, xorDataset(), config.training, { seed: 1 });
  await driveRun({ trainer, files, config, seed: 1, checkpointEvery: 10 });
  await lock.release();
  const s = (performance.now() - t0) / 1000;
  rmSync(dir, { recursive: true, force: true });
  return s;
}

export async function run(): Promise<void> {
  const rows: [number, number][] = [];
  for (const epochs of [1000, 2000, 4000]) rows.push([epochs, await once(epochs)]);
  console.log("| epochs | seconds | ms per epoch |\n| ---: | ---: | ---: |");
  for (const [e, s] of rows) console.log(`| ${e} | ${s.toFixed(2)} | ${((1000 * s) / e).toFixed(2)} |`);
  console.log(`4,000 / 1,000 epochs: ${(rows[2]![1] / rows[0]![1]).toFixed(2)} (linear: 4)`);
}
