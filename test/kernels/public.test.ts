/** The `ebbflow/kernels` entry: the package's export map points at it, and it holds the kernels and the backends. */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import * as kernels from "../../src/kernels/public.js";

describe("ebbflow/kernels", () => {
  it("is in the package's export map, with its types, built from src/kernels/public.ts", () => {
    const pkg = JSON.parse(readFileSync(new URL("../../package.json", import.meta.url), "utf8")) as { exports: Record<string, { types: string; import: string }> };
    expect(pkg.exports["./kernels"]).toEqual({ types: "./dist/kernels/public.d.ts", import: "./dist/kernels/public.js" });
  });

  it("exports the BLAS-style kernels, the backends and backend selection", () => {
    for (const name of ["gemm", "gemv", "ger", "axpy", "axpby", "scale", "fill", "copy", "add", "sub", "mul", "dot", "maxAbs", "sumRows", "addRowVector", "kernelsChecked"]) {
      expect(typeof (kernels as Record<string, unknown>)[name], name).toBe(name === "kernelsChecked" ? "object" : "function");
    }
    expect(kernels.typescriptBackend.name).toBe("typescript");
    expect(typeof kernels.selectBackend).toBe("function");
    expect(typeof kernels.loadWasmKernelsSync).toBe("function");
    expect(typeof kernels.fillUnit).toBe("function");
  });
});
