import { describe, it, expect } from "vitest";
import { mkdtempSync, readFileSync, readdirSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { renderSvg, writeSvg, weightMatrixSvg } from "../../src/node/plot.js";
import { xmlProblems } from "./svg.js";

describe("renderSvg and writeSvg", () => {
  it("renders any vega-lite chart headless to well-formed SVG", async () => {
    const svg = await renderSvg({
      title: "points",
      data: { values: [{ x: 1, y: 2 }, { x: 2, y: 3 }] },
      mark: "point",
      encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } },
    });
    expect(svg.startsWith("<svg")).toBe(true);
    expect(xmlProblems(svg)).toEqual([]);
    expect(svg.match(/aria-roledescription="point"/g)).toHaveLength(2);
  });

  it("writes the SVG text unchanged and leaves no temporary file behind", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-svg-"));
    const file = path.join(dir, "w.svg");
    const svg = await weightMatrixSvg(new Float64Array([1, -1]), 1, 2);
    await writeSvg(file, svg);
    expect(readFileSync(file, "utf8")).toBe(svg);
    expect(readdirSync(dir)).toEqual(["w.svg"]);
  });

  it("refuses text that is not SVG and reports an unwritable path as io_error", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-svg-"));
    await expect(writeSvg(path.join(dir, "x.svg"), "<html></html>")).rejects.toMatchObject({ code: "invalid_parameter", path: "svg" });
    await expect(writeSvg(path.join(dir, "missing", "x.svg"), "<svg/>")).rejects.toMatchObject({ code: "io_error" });
    expect(readdirSync(dir)).toEqual([]);
  });
});
