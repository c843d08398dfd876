/** Machine fingerprint printed beside every benchmark figure. */
import os from "node:os";

export interface MachineInfo {
  readonly cpu: string;
  readonly cores: number;
  readonly node: string;
  readonly platform: string;
  readonly memoryGiB: number;
}

export function machineInfo(): MachineInfo {
  const cpus = os.cpus();
  return {
    cpu: cpus[0]?.model.trim() ?? "unknown",
    cores: cpus.length,
    node: process.version,
    platform: `${os.platform()} ${os.arch()}`,
    memoryGiB: Math.round((os.totalmem() / 2 ** 30) * 10) / 10,
  };
}

export function printMachine(): void {
  const m = machineInfo();
  console.log(`machine: ${m.cpu} | ${m.cores} cores | Node ${m.node} | ${m.platform} | ${m.memoryGiB} GiB`);
}

/** Keeps a value alive so the optimiser cannot drop the work that produced it. */
export let sink = 0;
export function consume(x: ArrayLike<number> | number): void {
  sink += typeof x === "number" ? x : (x[0] ?? 0);
}
