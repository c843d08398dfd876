/**
 * The page of the browser test: loads the WebAssembly kernels the asynchronous way (as a page must), then runs
 * every scenario and leaves the results (and which scripts were fetched when) on `globalThis.__ebbflow`.
 */
import { selectBackendAsync } from "../../dist/index.js";
import { runAll } from "./scenarios.js";

interface PageGlobals {
  __ebbflow?: unknown;
  crossOriginIsolated?: boolean;
  performance: { getEntriesByType(type: string): { name: string }[] };
}
const g = globalThis as unknown as PageGlobals;
const scripts = () => g.performance.getEntriesByType("resource").map((e) => e.name.replace(/^.*\//, "")).filter((n) => n.endsWith(".js"));

async function main(): Promise<unknown> {
  const atStart = scripts();
  const first = await selectBackendAsync("wasm");
  const afterFirstLoad = scripts();
  const result = await runAll();
  return {
    crossOriginIsolated: g.crossOriginIsolated === true,
    sharedArrayBufferGlobal: typeof (globalThis as { SharedArrayBuffer?: unknown }).SharedArrayBuffer,
    first: first.name,
    scripts: { atStart, afterFirstLoad, atEnd: scripts() },
    ...result,
  };
}

main().then(
  (result) => (g.__ebbflow = { ok: true, result }),
  (e: unknown) => (g.__ebbflow = { ok: false, error: e instanceof Error ? `${e.name}: ${e.message}\n${e.stack ?? ""}` : String(e) }),
);
