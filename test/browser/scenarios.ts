/**
 * What the browser test runs, in a page (bundled by vite) and in Node alike: build a network, settle it, train
 * XOR with two rules on a kernel backend, grow the WebAssembly memory mid-way, and try the WebAssembly kernels
 * where shared memory is refused. Imports the built core (dist/), as an application's bundler sees the package.
 * Results are plain JSON so the page can hand them to the test.
 */
import {
  buildNetwork, EbbflowError, loadWasmKernels, selectBackendAsync, Settler, Trainer, typescriptBackend, xorDataset,
  type KernelBackend, type WasmKernelBackend,
} from "../../dist/index.js";

/** One rule's training run. */
export interface RuleRun {
  readonly rule: string;
  readonly solved: boolean;
  readonly epochs: number;
  readonly sse: number;
  /** The trained parameters' bits (hex of the float64 bytes), to compare runs bit for bit. */
  readonly bits: string;
}

/** What one backend did. */
export interface BackendReport {
  readonly backend: string;
  readonly settle: { readonly converged: boolean; readonly steps: number; readonly output: number[] };
  readonly runs: RuleRun[];
  /** WebAssembly only: training after the memory grew (arrays allocated before it). */
  readonly growth?: { readonly generations: number; readonly fastPathKept: boolean; readonly sameAsWithoutGrowth: boolean } | undefined;
}

const RULES = [
  { rule: "generec", rate: 0.5 },
  { rule: "chl", rate: 0.5 },
] as const;

function network(backend: KernelBackend) {
  return buildNetwork(
    {
      seed: 5,
      layers: [
        { name: "in", size: 2, role: "input" },
        { name: "hidden", size: 4, role: "hidden" },
        { name: "out", size: 1, role: "output" },
      ],
      connections: [
        { from: "in", to: "hidden", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
        { from: "hidden", to: "out", init: { kind: "uniform", low: -1, high: 1 }, feedback: { kind: "tied", gain: 1 } },
      ],
      dynamics: { dt: 0.5, maxSteps: 300, tolerance: 1e-6 },
    },
    { backend },
  );
}

function hex(arrays: readonly Float64Array[]): string {
  let s = "";
  for (const a of arrays) for (const b of new Uint8Array(a.buffer, a.byteOffset, a.byteLength)) s += b.toString(16).padStart(2, "0");
  return s;
}

function train(backend: KernelBackend, config: (typeof RULES)[number], grow?: WasmKernelBackend): RuleRun & { net: ReturnType<typeof network> } {
  const net = network(backend);
  if (grow !== undefined) grow.allocate("float64", 256 * 1024); // 2 MiB: past the arena, so the memory grows
  const trainer = new Trainer(net, config, xorDataset(), { epochs: 2000, batchSize: 4, shuffle: false, stopWhen: { metric: "accuracy", atLeast: 1 } }, { seed: 5 });
  const { reason, epochs } = trainer.run();
  const params = [...net.connections.map((c) => c.weights), ...net.layers.map((l) => l.bias)] as Float64Array[];
  return { rule: config.rule, solved: reason === "target-reached", epochs, sse: trainer.history.at(-1)?.train?.sse ?? Number.NaN, bits: hex(params), net };
}

/** Builds, settles and trains on one backend. */
export function runBackend(backend: KernelBackend): BackendReport {
  const net = network(backend);
  const settler = new Settler(net, 4);
  const snap = settler.settle({ phase: "free", inputs: { in: [0, 0, 0, 1, 1, 0, 1, 1] } });
  const runs = RULES.map((r) => {
    const { net: _n, ...run } = train(backend, r);
    return run;
  });
  let growth: BackendReport["growth"];
  if (backend.name !== "typescript") {
    const wasm = backend as WasmKernelBackend;
    const before = wasm.generation;
    const grown = train(wasm, RULES[0], wasm);
    growth = {
      generations: wasm.generation - before,
      fastPathKept: grown.net.connections.every((c) => wasm.isArenaView(c.weights)),
      sameAsWithoutGrowth: grown.bits === runs[0]!.bits,
    };
  }
  return { backend: backend.name, settle: { converged: snap.converged, steps: snap.steps, output: Array.from(snap.activity[2]!) }, runs, growth };
}

/** Every scenario: the TypeScript kernels, the WebAssembly kernels ("auto" and plain SIMD), and a refused shared memory. */
export async function runAll(): Promise<{ reports: BackendReport[]; auto: string; refused: { wasm: string; auto: string } }> {
  const wasm = await selectBackendAsync("wasm", { arenaBytes: 64 * 1024, scratchBytes: 64 * 1024 });
  const simd = await loadWasmKernels({ relaxed: false, arenaBytes: 64 * 1024, scratchBytes: 64 * 1024 });
  const reports = [runBackend(typescriptBackend), runBackend(wasm), runBackend(simd)];
  const auto = (await selectBackendAsync("auto")).name;
  // an engine that refuses shared memory (as some do on pages without cross-origin isolation)
  const wa = (globalThis as unknown as { WebAssembly: Record<string, unknown> }).WebAssembly;
  const Memory = wa.Memory as new (d: { shared?: boolean }) => unknown;
  const refused = { wasm: "no error", auto: "" };
  wa.Memory = function RefusingMemory(d: { shared?: boolean }) {
    if (d.shared === true) throw new TypeError("WebAssembly.Memory(): shared memory refused (simulated)");
    return new Memory(d);
  };
  try {
    await selectBackendAsync("wasm");
  } catch (e) {
    refused.wasm = e instanceof EbbflowError ? `${e.name} ${e.code} ${e.path}` : `raw ${String(e)}`;
  }
  refused.auto = (await selectBackendAsync("auto")).name;
  wa.Memory = Memory;
  return { reports, auto, refused };
}
