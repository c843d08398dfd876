/**
 * The machine's fingerprint, written beside every benchmark figure.
 * @module
 */
import os from "node:os";
import { readFileSync } from "node:fs";

/** What a benchmark ran on. @category Benchmarks */
export interface MachineFingerprint {
  readonly cpu: string;
  readonly cores: number;
  readonly mhz: number | null;
  readonly flags: readonly string[];
  readonly node: string;
  readonly platform: string;
  readonly memoryGiB: number;
}

/** Reads the CPU model, core count, clock, SIMD flags, Node version and platform. @category Benchmarks */
export function machineFingerprint(): MachineFingerprint {
  const cpus = os.cpus();
  let flags: string[] = [];
  let mhz: number | null = cpus[0]?.speed ?? null;
  try {
    const info = readFileSync("/proc/cpuinfo", "utf8");
    const f = /^flags\s*:\s*(.*)$/m.exec(info)?.[1] ?? "";
    flags = f.split(/\s+/).filter((x) => ["avx", "avx2", "fma", "avx512f", "sse4_2", "neon", "asimd"].includes(x));
    const m = /^cpu MHz\s*:\s*([\d.]+)/m.exec(info)?.[1];
    if (m !== undefined) mhz = Number(m);
  } catch {
    // not Linux: keep what os.cpus() says
  }
  return {
    cpu: cpus[0]?.model.trim() ?? "unknown",
    cores: cpus.length,
    mhz,
    flags,
    node: process.version,
    platform: `${os.platform()} ${os.arch()}`,
    memoryGiB: Math.round((os.totalmem() / 2 ** 30) * 10) / 10,
  };
}

/**
 * Estimated single-core float32 peak in GFLOP/s: clock × 32 FLOP/cycle with AVX2 and FMA (two 8-lane
 * FMA units, common practice for recent x86 cores), × 16 with AVX only, × 8 otherwise. An estimate, printed as such.
 * @category Benchmarks
 */
export function estimatedPeakGflops(m: MachineFingerprint): number | null {
  if (m.mhz === null || m.mhz <= 0) return null;
  const perCycle = m.flags.includes("avx2") && m.flags.includes("fma") ? 32 : m.flags.includes("avx") ? 16 : 8;
  return (m.mhz / 1000) * perCycle;
}
