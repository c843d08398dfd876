/**
 * The core in a real browser: test/browser/page.ts and scenarios.ts bundled with vite (from the built package,
 * dist/, as an application would bundle it), served on localhost with and without cross-origin isolation
 * (COOP/COEP headers), and run in headless Chromium (the Debian package) driven by playwright-core. Checks:
 * build, settle and XOR training with two rules on the TypeScript and both WebAssembly kernels, training after a
 * memory growth (same bits, arrays still on the fast path), the typed error when shared memory is refused, the
 * build Chromium picks (relaxed SIMD, on by default since Chrome 114), that the bundle's entry carries no
 * WebAssembly build and a page fetches a build's chunk only when it loads that build — and that the page computes
 * the same bits as Node for the TypeScript and the plain-SIMD kernels.
 *
 * Without Chromium (/usr/bin/chromium, or EBBFLOW_CHROMIUM) the test is skipped with a note, unless
 * EBBFLOW_REQUIRE_BROWSER=1 (set by .ci/run), which turns the absence into a failure.
 */
import { existsSync, mkdtempSync, readdirSync, readFileSync } from "node:fs";
import http from "node:http";
import { tmpdir } from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { RELAXED_WASM_BASE64 } from "../../src/kernels/wasm/generated/relaxed.js";
import { SIMD_WASM_BASE64 } from "../../src/kernels/wasm/generated/simd.js";
import { loadWasmKernels, typescriptBackend } from "../../dist/index.js";
import { runBackend, type BackendReport } from "./scenarios.js";

const chromium = process.env.EBBFLOW_CHROMIUM ?? "/usr/bin/chromium";
const present = existsSync(chromium);
const required = process.env.EBBFLOW_REQUIRE_BROWSER === "1";
if (!present && !required) console.log(`browser test skipped: no Chromium at ${chromium} (apt-get install chromium, or set EBBFLOW_CHROMIUM)`);

/** What page.ts leaves on globalThis.__ebbflow. */
interface PageResult {
  readonly crossOriginIsolated: boolean;
  readonly sharedArrayBufferGlobal: string;
  readonly first: string;
  readonly scripts: { readonly atStart: string[]; readonly afterFirstLoad: string[]; readonly atEnd: string[] };
  readonly reports: BackendReport[];
  readonly auto: string;
  readonly refused: { readonly wasm: string; readonly auto: string };
}

const here = import.meta.dirname;

describe.runIf(present || required)("the core in headless Chromium", () => {
  let outDir = "";
  let server: http.Server | undefined;
  let base = "";
  const results = new Map<string, PageResult>();
  /** Which emitted script holds which WebAssembly build (by a 100-character piece of its base64 the other build lacks). */
  const holder: Record<"simd" | "relaxed", string[]> = { simd: [], relaxed: [] };
  let entry = "";

  beforeAll(async () => {
    if (!present) throw new Error(`EBBFLOW_REQUIRE_BROWSER=1 but there is no Chromium at ${chromium}: install the Debian package chromium`);
    const { build } = await import("vite");
    outDir = mkdtempSync(path.join(tmpdir(), "ebbflow-browser-"));
    await build({ configFile: false, root: here, base: "./", logLevel: "silent", build: { outDir, emptyOutDir: true, minify: true } });
    const assets = path.join(outDir, "assets");
    const marker = (own: string, other: string) => own.match(/.{100}/g)!.find((piece) => !other.includes(piece))!;
    const simdMarker = marker(SIMD_WASM_BASE64, RELAXED_WASM_BASE64);
    const relaxedMarker = marker(RELAXED_WASM_BASE64, SIMD_WASM_BASE64);
    for (const f of readdirSync(assets).filter((n) => n.endsWith(".js"))) {
      const text = readFileSync(path.join(assets, f), "utf8");
      if (text.includes(simdMarker)) holder.simd.push(f);
      if (text.includes(relaxedMarker)) holder.relaxed.push(f);
    }
    entry = /src="\/?(?:\.\/)?assets\/([^"]+\.js)"/.exec(readFileSync(path.join(outDir, "index.html"), "utf8"))?.[1] ?? "";

    // /coi/... with COOP/COEP (cross-origin isolated), /plain/... without
    server = http.createServer((req, res) => {
      const [, mode, ...rest] = (req.url ?? "/").split("?")[0]!.split("/");
      const file = path.join(outDir, ...rest);
      if (!file.startsWith(outDir) || !existsSync(file) || (mode !== "coi" && mode !== "plain")) {
        res.writeHead(404).end();
        return;
      }
      const type = file.endsWith(".html") ? "text/html" : file.endsWith(".js") ? "text/javascript" : "application/octet-stream";
      const headers: Record<string, string> = { "content-type": type, "cache-control": "no-store" };
      if (mode === "coi") Object.assign(headers, { "cross-origin-opener-policy": "same-origin", "cross-origin-embedder-policy": "require-corp" });
      res.writeHead(200, headers).end(readFileSync(file));
    });
    await new Promise<void>((resolve) => server!.listen(0, "127.0.0.1", resolve));
    base = `http://127.0.0.1:${(server.address() as { port: number }).port}`;

    const { chromium: launcher } = await import("playwright-core");
    const context = await launcher.launchPersistentContext(mkdtempSync(path.join(tmpdir(), "ebbflow-chromium-")), {
      executablePath: chromium,
      headless: true,
      // the flags this machine kind needs (closed network: no background connections)
      args: ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync"],
    });
    try {
      for (const mode of ["coi", "plain"]) {
        const page = await context.newPage();
        const errors: string[] = [];
        page.on("pageerror", (e) => errors.push(String(e)));
        page.on("console", (m) => (m.type() === "error" ? errors.push(m.text()) : undefined));
        page.on("response", (res) => (res.status() >= 400 ? errors.push(`${res.status()} ${res.url()}`) : undefined));
        await page.goto(`${base}/${mode}/index.html`);
        try {
          await page.waitForFunction(() => (globalThis as { __ebbflow?: unknown }).__ebbflow !== undefined, undefined, { timeout: 120_000 });
        } catch (e) {
          throw new Error(`page ${mode} never reported: ${String(e)}\n${errors.join("\n")}`);
        }
        const out = (await page.evaluate(() => (globalThis as { __ebbflow?: unknown }).__ebbflow)) as { ok: boolean; result?: PageResult; error?: string };
        if (!out.ok) throw new Error(`page ${mode} failed: ${out.error}\n${errors.join("\n")}`);
        results.set(mode, out.result!);
        await page.close();
      }
    } finally {
      await context.close();
    }
  }, 240_000);

  afterAll(() => {
    server?.close();
  });

  it("the bundle's entry carries no WebAssembly build; each build is a chunk of its own", () => {
    expect(holder.simd).toHaveLength(1);
    expect(holder.relaxed).toHaveLength(1);
    expect(holder.simd[0]).not.toBe(holder.relaxed[0]);
    expect(entry).not.toBe("");
    expect([...holder.simd, ...holder.relaxed]).not.toContain(entry);
  });

  for (const mode of ["coi", "plain"] as const) {
    describe(mode === "coi" ? "cross-origin isolated (COOP/COEP)" : "not cross-origin isolated", () => {
      const r = () => results.get(mode)!;

      it("the page is (or is not) isolated, and the SharedArrayBuffer global is hidden without isolation", () => {
        expect(r().crossOriginIsolated).toBe(mode === "coi");
        expect(r().sharedArrayBufferGlobal).toBe(mode === "coi" ? "function" : "undefined");
      });

      it("Chromium runs the relaxed-SIMD build; its chunk is fetched when loaded, the plain-SIMD chunk only when asked for", () => {
        expect([r().first, r().auto]).toEqual(["wasm-relaxed-simd", "wasm-relaxed-simd"]);
        const { atStart, afterFirstLoad, atEnd } = r().scripts;
        expect(atStart).not.toContain(holder.relaxed[0]);
        expect(afterFirstLoad).toContain(holder.relaxed[0]);
        expect(afterFirstLoad).not.toContain(holder.simd[0]);
        expect(atEnd).toContain(holder.simd[0]); // runAll loads the plain-SIMD build explicitly
      });

      it("builds, settles and learns XOR with GeneRec and CHL on the TypeScript, relaxed-SIMD and SIMD kernels", () => {
        expect(r().reports.map((x) => x.backend)).toEqual(["typescript", "wasm-relaxed-simd", "wasm-simd"]);
        for (const rep of r().reports) {
          expect(rep.settle.converged, rep.backend).toBe(true);
          expect(rep.runs.map((x) => [x.rule, x.solved]), rep.backend).toEqual([["generec", true], ["chl", true]]);
        }
      });

      it("training after a memory growth gives the same bits, and arrays allocated before it stay on the fast path", () => {
        for (const rep of r().reports.slice(1)) {
          expect(rep.growth!.generations, rep.backend).toBeGreaterThan(0);
          expect(rep.growth, rep.backend).toMatchObject({ fastPathKept: true, sameAsWithoutGrowth: true });
        }
      });

      it("refused shared memory: \"wasm\" throws the typed unsupported error, \"auto\" falls back to TypeScript", () => {
        expect(r().refused).toEqual({ wasm: "EbbflowError unsupported memory", auto: "typescript" });
      });

      it("the page computes Node's bits on the TypeScript and plain-SIMD kernels", async () => {
        const node = [runBackend(typescriptBackend), runBackend(await loadWasmKernels({ relaxed: false, arenaBytes: 64 * 1024, scratchBytes: 64 * 1024 }))];
        expect(r().reports[0]).toEqual(node[0]);
        expect(r().reports[2]).toEqual(node[1]);
      });
    });
  }
});
