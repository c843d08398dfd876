/** Machine fingerprint printed beside every benchmark figure (the same one `ebbflow bench` writes). */
import { machineFingerprint } from "../src/node/bench/machine.js";

export function printMachine(): void {
  const m = machineFingerprint();
  console.log(`machine: ${m.cpu} | ${m.cores} cores | ${m.mhz ?? "?"} MHz | ${m.flags.join(" ")} | Node ${m.node} | ${m.platform} | ${m.memoryGiB} GiB`);
}

/** Keeps a value alive so the optimizer cannot drop the work that produced it. */
export let sink = 0;
export function consume(x: ArrayLike<number> | number): void {
  sink += typeof x === "number" ? x : (x[0] ?? 0);
}
