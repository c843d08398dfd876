import { describe, it, expect } from "vitest";
import { buildNetwork } from "../../src/index.js";
import { connectionFieldLayout, connectionFieldsSvg } from "../../src/node/plot.js";
import { cells, flatGroups, xmlProblems } from "./svg.js";

describe("receptive fields laid out by layer shapes", () => {
  const net = buildNetwork({
    seed: 2,
    layers: [
      { name: "sheet", shape: [4, 5, 2], role: "input" },
      { name: "map", shape: [3, 4], role: "output" },
    ],
    connections: [{ from: "sheet", to: "map", pattern: { kind: "local", kernel: 2 } }],
  });

  it("each field is an image of the sending sheet (channel planes stacked), the grid follows the receiving sheet", () => {
    const l = connectionFieldLayout(net, "sheet->map");
    expect([l.imageWidth, l.imageHeight, l.columns, l.rows, l.cols]).toEqual([5, 8, 4, 12, 40]);
    const w = net.connections[0]!.weights;
    // unit (r, c) of the map: weight from sheet (row, col, channel) sits in plane `channel`, at (row, col)
    for (let u = 0; u < 12; u++)
      for (let row = 0; row < 4; row++)
        for (let col = 0; col < 5; col++) for (let k = 0; k < 2; k++) expect(l.weights[u * 40 + (k * 4 + row) * 5 + col]).toBe(w[u * 40 + (row * 5 + col) * 2 + k]);
    // map unit (1, 2) sees sheet rows 1-2, columns 2-3 only
    const u = 1 * 4 + 2;
    for (let row = 0; row < 4; row++) for (let col = 0; col < 5; col++) if (row < 1 || row > 2 || col < 2 || col > 3) expect(l.weights[u * 40 + row * 5 + col]).toBe(0);
  });

  it("draws one heat map per receiving unit, each of sheet width × (rows × channels) cells", async () => {
    const svg = await connectionFieldsSvg(net, "sheet->map", { pixelSize: 4 });
    expect(xmlProblems(svg)).toEqual([]);
    const maps = flatGroups(svg, "mark-rect role-mark").map(cells);
    expect(maps.length).toBe(12);
    for (const m of maps) expect(m.length).toBe(40);
  });
});
