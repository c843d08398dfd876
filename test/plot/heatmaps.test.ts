import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { weightMatrixSvg, receptiveFieldsSvg } from "../../src/node/plot.js";
import { check } from "../helpers/property.js";
import { cells, flatGroups, xmlProblems } from "./svg.js";

/** The cells of every heat map (rect mark group) in an SVG, group by group. */
const heatMaps = (svg: string) => flatGroups(svg, "mark-rect role-mark").map(cells);

/** Fill of the cell at grid position (r, c) of a heat map with square cells of side `size`. */
function fillAt(map: ReturnType<typeof cells>, r: number, c: number, size: number): string {
  const hit = map.filter((k) => Math.abs(k.x - c * size) < 1e-6 && Math.abs(k.y - r * size) < 1e-6);
  if (hit.length !== 1) throw new Error(`${hit.length} cells at row ${r}, column ${c}`);
  return hit[0]!.fill;
}

const matrix = fc
  .tuple(fc.integer({ min: 1, max: 5 }), fc.integer({ min: 1, max: 6 }))
  .chain(([rows, cols]) => {
    // weights of ordinary size (or exactly 0): scaling by 2^±30 stays exact, no subnormals
    const weight = fc.oneof(fc.constant(0), fc.double({ min: 1e-6, max: 10, noNaN: true }), fc.double({ min: -10, max: -1e-6, noNaN: true }));
    return fc.tuple(fc.constant(rows), fc.constant(cols), fc.array(weight, { minLength: rows * cols, maxLength: rows * cols }));
  });

describe("weightMatrixSvg", () => {
  it("draws one cell per weight (rows × cols rect marks) tiling the grid, with title and axis titles", async () => {
    const w = Float64Array.from({ length: 15 }, (_, i) => Math.sin(i + 1));
    const svg = await weightMatrixSvg(w, 3, 5, { title: "hidden <- input", rowLabel: "post", colLabel: "pre", cellSize: 10 });
    expect(svg.startsWith("<svg")).toBe(true);
    expect(xmlProblems(svg)).toEqual([]);
    expect(svg).toContain(">hidden &lt;- input</text>");
    expect(svg).toContain(">post</text>");
    expect(svg).toContain(">pre</text>");
    const maps = heatMaps(svg);
    expect(maps).toHaveLength(1);
    expect(maps[0]).toHaveLength(15);
    const positions = maps[0]!.map((k) => `${k.x},${k.y},${k.w},${k.h}`).sort();
    const grid: string[] = [];
    for (let r = 0; r < 3; r++) for (let c = 0; c < 5; c++) grid.push(`${c * 10},${r * 10},10,10`);
    expect(positions).toEqual(grid.sort());
  });

  it("puts weight (r, c) at row r from the top and column c from the left (row-major input)", async () => {
    for (const [r, c] of [[0, 0], [1, 3], [2, 4]] as const) {
      const w = new Float32Array(15);
      w[r * 5 + c] = 0.7;
      const map = heatMaps(await weightMatrixSvg(w, 3, 5, { cellSize: 8 }))[0]!;
      const hot = fillAt(map, r, c, 8);
      expect(map.filter((k) => k.fill === hot)).toHaveLength(1);
    }
  });

  it("centres the diverging colours on 0: a zero weight has the same colour whatever the other weights", async () => {
    const a = heatMaps(await weightMatrixSvg(new Float64Array([0, 1, -0.2, 0.5]), 2, 2, { cellSize: 4 }))[0]!;
    const b = heatMaps(await weightMatrixSvg(new Float64Array([-30, 0, 2, 7]), 2, 2, { cellSize: 4 }))[0]!;
    expect(fillAt(a, 0, 0, 4)).toBe(fillAt(b, 0, 1, 4));
    // the extremes -m and +m differ from each other and from the centre
    const ends = heatMaps(await weightMatrixSvg(new Float64Array([-2, 0, 2]), 1, 3, { cellSize: 4 }))[0]!;
    const [neg, mid, pos] = [0, 1, 2].map((c) => fillAt(ends, 0, c, 4));
    expect(new Set([neg, mid, pos]).size).toBe(3);
    expect(mid).toBe(fillAt(a, 0, 0, 4));
  });

  it("colours by w / max|w|: scaling all weights by c > 0 leaves every colour unchanged", async () => {
    // c a power of two, so c·w and c·w / (c·max|w|) = w / max|w| are exact in floating point
    await check(
      fc.asyncProperty(matrix, fc.integer({ min: -30, max: 30 }), async ([rows, cols, values], k) => {
        const w = Float64Array.from(values);
        const scaled = w.map((x) => x * 2 ** k);
        const p = heatMaps(await weightMatrixSvg(w, rows, cols, { cellSize: 4 }))[0]!;
        const q = heatMaps(await weightMatrixSvg(scaled, rows, cols, { cellSize: 4 }))[0]!;
        expect(p).toHaveLength(rows * cols);
        for (let r = 0; r < rows; r++) for (let k = 0; k < cols; k++) expect(fillAt(q, r, k, 4)).toBe(fillAt(p, r, k, 4));
      }),
      8,
    );
  });

  it("with a fixed limit, clamps weights beyond it to the end colours", async () => {
    const map = heatMaps(await weightMatrixSvg(new Float64Array([1, 5, -1, -5]), 1, 4, { limit: 1, cellSize: 4 }))[0]!;
    expect(fillAt(map, 0, 1, 4)).toBe(fillAt(map, 0, 0, 4));
    expect(fillAt(map, 0, 3, 4)).toBe(fillAt(map, 0, 2, 4));
  });

  it("rejects a wrong length, non-finite weights, bad sizes and bad options with the path of the problem", async () => {
    const cases: [() => Promise<string>, string, string][] = [
      [() => weightMatrixSvg(new Float64Array(5), 2, 3), "shape_mismatch", "weights"],
      [() => weightMatrixSvg(new Float64Array([0, Number.NaN, 1, 2]), 2, 2), "invalid_parameter", "weights[1]"],
      [() => weightMatrixSvg(new Float32Array([0, 1, Infinity, 2]), 2, 2), "invalid_parameter", "weights[2]"],
      [() => weightMatrixSvg([1, 2] as unknown as Float64Array, 1, 2), "invalid_parameter", "weights"],
      [() => weightMatrixSvg(new Float64Array(0), 0, 3), "invalid_parameter", "rows"],
      [() => weightMatrixSvg(new Float64Array(2), 1, 2.5), "invalid_parameter", "cols"],
      [() => weightMatrixSvg(new Float64Array(2), 1, 2, { limit: 0 }), "invalid_parameter", "options.limit"],
      [() => weightMatrixSvg(new Float64Array(2), 1, 2, { cellSize: -3 }), "invalid_parameter", "options.cellSize"],
      [() => weightMatrixSvg(new Float64Array(2), 1, 2, { title: 3 as unknown as string }), "invalid_parameter", "options.title"],
    ];
    for (const [call, code, path] of cases) await expect(call()).rejects.toMatchObject({ code, path });
  });
});

describe("receptiveFieldsSvg", () => {
  /** Unit u has a single positive weight at image pixel (x = u + 1, y = 2 - u) of a 4 × 3 image. */
  function hotPixels(units: number): Float64Array {
    const w = new Float64Array(units * 12);
    for (let u = 0; u < units; u++) w[u * 12 + (2 - u) * 4 + (u + 1)] = 1 + u;
    return w;
  }

  it("draws one small heat map of imageWidth × imageHeight cells per unit, labelled by unit", async () => {
    const svg = await receptiveFieldsSvg(hotPixels(3), 3, 12, 4, 3, { title: "fields", pixelSize: 5 });
    expect(svg.startsWith("<svg")).toBe(true);
    expect(xmlProblems(svg)).toEqual([]);
    expect(svg).toContain(">fields</text>");
    const maps = heatMaps(svg);
    expect(maps.map((m) => m.length)).toEqual([12, 12, 12]);
    for (let u = 0; u < 3; u++) expect(svg).toContain(`>unit ${u}</text>`);
  });

  it("reshapes each row row-major: input y × width + x lands at column x, row y of its unit's image", async () => {
    const maps = heatMaps(await receptiveFieldsSvg(hotPixels(3), 3, 12, 4, 3, { pixelSize: 5 }));
    maps.forEach((map, u) => {
      const hot = fillAt(map, 2 - u, u + 1, 5);
      expect(map.filter((k) => k.fill === hot), `unit ${u}`).toHaveLength(1);
      expect(fillAt(map, 0, 0, 5)).not.toBe(hot);
    });
  });

  it("shares one colour range by default, and with scaling 'unit' gives every unit's largest weight the end colour", async () => {
    const shared = heatMaps(await receptiveFieldsSvg(hotPixels(2), 2, 12, 4, 3, { pixelSize: 5 }));
    expect(fillAt(shared[0]!, 2, 1, 5)).not.toBe(fillAt(shared[1]!, 1, 2, 5));
    const own = heatMaps(await receptiveFieldsSvg(hotPixels(2), 2, 12, 4, 3, { pixelSize: 5, scaling: "unit" }));
    expect(fillAt(own[0]!, 2, 1, 5)).toBe(fillAt(own[1]!, 1, 2, 5));
  });

  it("draws at most the requested number of units, or the listed ones in the listed order", async () => {
    const w = hotPixels(3);
    expect(heatMaps(await receptiveFieldsSvg(w, 3, 12, 4, 3, { units: 2 }))).toHaveLength(2);
    expect(heatMaps(await receptiveFieldsSvg(w, 3, 12, 4, 3, { units: 10 }))).toHaveLength(3);
    const svg = await receptiveFieldsSvg(w, 3, 12, 4, 3, { units: [2, 0], columns: 2 });
    const labels = [...svg.matchAll(/>unit (\d+)<\/text>/g)].map((m) => Number(m[1]));
    expect(labels).toEqual([2, 0]);
  });

  it("handles digit-sized inputs: 2 units of 28 × 28 give 1568 cells", async () => {
    const w = Float32Array.from({ length: 2 * 784 }, (_, i) => Math.cos(i / 17));
    const maps = heatMaps(await receptiveFieldsSvg(w, 2, 784, 28, 28));
    expect(maps.map((m) => m.length)).toEqual([784, 784]);
  });

  it("rejects an image size that does not match the columns, bad unit lists and a limit with per-unit scaling", async () => {
    const w = hotPixels(2);
    const cases: [() => Promise<string>, string, string][] = [
      [() => receptiveFieldsSvg(w, 2, 12, 5, 3), "shape_mismatch", "cols"],
      [() => receptiveFieldsSvg(w, 2, 12, 0, 3), "invalid_parameter", "imageWidth"],
      [() => receptiveFieldsSvg(w, 3, 12, 4, 3), "shape_mismatch", "weights"],
      [() => receptiveFieldsSvg(w, 2, 12, 4, 3, { units: [0, 2] }), "invalid_parameter", "options.units[1]"],
      [() => receptiveFieldsSvg(w, 2, 12, 4, 3, { units: [1, 1] }), "invalid_parameter", "options.units[1]"],
      [() => receptiveFieldsSvg(w, 2, 12, 4, 3, { units: 0 }), "invalid_parameter", "options.units"],
      [() => receptiveFieldsSvg(w, 2, 12, 4, 3, { units: [] }), "invalid_parameter", "options.units"],
      [() => receptiveFieldsSvg(w, 2, 12, 4, 3, { scaling: "unit", limit: 2 }), "invalid_parameter", "options.limit"],
      [() => receptiveFieldsSvg(w, 2, 12, 4, 3, { scaling: "row" as "unit" }), "invalid_parameter", "options.scaling"],
      [() => receptiveFieldsSvg(w, 2, 12, 4, 3, { columns: 0 }), "invalid_parameter", "options.columns"],
    ];
    for (const [call, code, path] of cases) await expect(call()).rejects.toMatchObject({ code, path });
  });
});

describe("heat maps at extreme magnitudes", () => {
  it("render any finite weights without failing", async () => {
    await check(
      fc.asyncProperty(fc.array(fc.double({ noNaN: true, noDefaultInfinity: true }), { minLength: 1, maxLength: 6 }), async (values) => {
        expect(heatMaps(await weightMatrixSvg(Float64Array.from(values), 1, values.length, { cellSize: 4 }))[0]).toHaveLength(values.length);
      }),
      10,
    );
  });

  it("render weights from the smallest subnormal to the largest double, and a tiny fixed limit, without failing", async () => {
    for (const w of [[5e-324, 0], [-1e-310, 2e-311], [Number.MAX_VALUE, -Number.MAX_VALUE]]) {
      const map = heatMaps(await weightMatrixSvg(Float64Array.from(w), 1, 2, { cellSize: 4 }))[0]!;
      expect(map).toHaveLength(2);
    }
    const map = heatMaps(await weightMatrixSvg(new Float64Array([1, 1e-320]), 1, 2, { limit: 1e-310, cellSize: 4 }))[0]!;
    expect(fillAt(map, 0, 0, 4)).not.toBe(fillAt(map, 0, 1, 4));
  });
});
