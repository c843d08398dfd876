import { describe, it, expect } from "vitest";
import fc from "fast-check";
import { parseCsvDataset } from "../../src/train/data/index.js";
import { check } from "../helpers/property.js";
import { expectError } from "./errors.js";

// The CSV grammar checked here is RFC 4180 (Shafranovich 2005, "Common Format and MIME Type for
// Comma-Separated Values (CSV) Files"): fields in double quotes may hold commas, line breaks and
// doubled quotes; records end with CRLF (LF and CR accepted as well, common practice).

// Invented data: three measurements of imaginary pebbles and their colour.
const PEBBLES = "width,height,weight,colour\n1.5,2,10,grey\n3,1.25,12.5,red\n0.5,0.75,3,grey\n";

describe("parseCsvDataset: reading", () => {
  it("reads a header, numeric inputs and one-hot class labels in order of first appearance", () => {
    const ds = parseCsvDataset(PEBBLES, { source: "pebbles.csv", targetColumns: ["colour"], oneHot: true });
    expect(ds.name).toBe("pebbles.csv");
    expect([ds.size, ds.inputSize, ds.targetSize]).toEqual([3, 3, 2]);
    expect(Array.from(ds.inputs)).toEqual([1.5, 2, 10, 3, 1.25, 12.5, 0.5, 0.75, 3]);
    expect(Array.from(ds.targets)).toEqual([1, 0, 0, 1, 1, 0]);
    expect(Array.from(ds.labels!)).toEqual([0, 1, 0]);
    expect(ds.classNames).toEqual(["grey", "red"]);
    expect(ds.inputNames).toEqual(["width", "height", "weight"]);
  });

  it("fixes the class order with classNames", () => {
    const ds = parseCsvDataset(PEBBLES, { source: "p.csv", targetColumns: ["colour"], oneHot: true, classNames: ["red", "blue", "grey"] });
    expect(Array.from(ds.labels!)).toEqual([2, 0, 2]);
    expect(ds.targetSize).toBe(3);
  });

  it("reads numeric targets by index without a header; negative indices count from the end", () => {
    const text = "1,2,3\n4,5,6\n";
    const a = parseCsvDataset(text, { source: "n.csv", targetColumns: [-1] });
    const b = parseCsvDataset(text, { source: "n.csv", targetColumns: [2], header: false });
    expect(Array.from(a.inputs)).toEqual([1, 2, 4, 5]);
    expect(Array.from(a.targets)).toEqual([3, 6]);
    expect(Array.from(b.targets)).toEqual(Array.from(a.targets));
    expect(a.labels).toBeUndefined();
    expect(a.inputNames).toBeUndefined();
    const two = parseCsvDataset(text, { source: "n.csv", targetColumns: [0, 2] });
    expect([two.inputSize, two.targetSize]).toEqual([1, 2]);
    expect(Array.from(two.targets)).toEqual([1, 3, 4, 6]);
  });

  it("skips ignored columns", () => {
    const ds = parseCsvDataset("id,x,y\nA7,1,0\nB2,2,1\n", { source: "i.csv", targetColumns: ["y"], ignoreColumns: ["id"] });
    expect(Array.from(ds.inputs)).toEqual([1, 2]);
    expect(ds.inputNames).toEqual(["x"]);
  });

  it("handles quoted fields: delimiters, doubled quotes and line breaks inside quotes", () => {
    const text = 'x,"y, z",label\n1,"2","a ""quoted"" name"\n3,4,"two\nlines"\n5,6,"a ""quoted"" name"\n';
    const ds = parseCsvDataset(text, { source: "q.csv", targetColumns: ["label"], oneHot: true });
    expect(ds.classNames).toEqual(['a "quoted" name', "two\nlines"]);
    expect(Array.from(ds.inputs)).toEqual([1, 2, 3, 4, 5, 6]);
    expect(ds.inputNames).toEqual(["x", "y, z"]);
  });

  it("accepts CRLF, LF and CR line ends, a byte-order mark and a missing final line break", () => {
    const lf = parseCsvDataset("a,b\n1,2\n3,4", { source: "e.csv", targetColumns: ["b"] });
    const crlf = parseCsvDataset("\ufeffa,b\r\n1,2\r\n3,4\r\n", { source: "e.csv", targetColumns: ["b"] });
    const cr = parseCsvDataset("a,b\r1,2\r3,4\r", { source: "e.csv", targetColumns: ["b"] });
    for (const ds of [crlf, cr]) {
      expect(Array.from(ds.inputs)).toEqual(Array.from(lf.inputs));
      expect(Array.from(ds.targets)).toEqual(Array.from(lf.targets));
      expect(ds.inputNames).toEqual(["a"]);
    }
  });

  it("skips blank lines (empty or spaces) and ignores spaces around cells", () => {
    const ds = parseCsvDataset("\na,b\n\n 1 , 2\n   \n\t3,\t4 \n\n", { source: "b.csv", targetColumns: ["b"] });
    expect(Array.from(ds.inputs)).toEqual([1, 3]);
    expect(Array.from(ds.targets)).toEqual([2, 4]);
  });

  it("accepts other one-character delimiters", () => {
    const semi = parseCsvDataset("a;b\n1.5;2\n", { source: "s.csv", targetColumns: ["b"], delimiter: ";" });
    const tab = parseCsvDataset("a\tb\n1.5\t2\n", { source: "t.tsv", targetColumns: ["b"], delimiter: "\t" });
    expect(Array.from(semi.inputs)).toEqual([1.5]);
    expect(Array.from(tab.inputs)).toEqual([1.5]);
  });

  it("reads back any finite matrix written with random quoting, spacing, line ends and blank lines", () => {
    const cell = fc.double({ noNaN: true, noDefaultInfinity: true });
    const layout = fc.record({ quote: fc.boolean(), pad: fc.constantFrom("", " ", "\t "), blankAfter: fc.boolean() });
    check(
      fc.property(
        fc.integer({ min: 1, max: 6 }).chain((w) => fc.array(fc.array(fc.tuple(cell, layout), { minLength: w + 1, maxLength: w + 1 }), { minLength: 1, maxLength: 8 })),
        fc.constantFrom("\n", "\r\n", "\r"),
        fc.boolean(),
        (rows, eol, finalBreak) => {
          const lines = rows.map((r) =>
            r.map(([v, l]) => {
              const text = `${l.pad}${String(v)}${l.pad}`;
              return l.quote ? `"${text}"` : text;
            }).join(",") + (r[0]![1].blankAfter ? eol : ""),
          );
          const text = lines.join(eol) + (finalBreak ? eol : "");
          const ds = parseCsvDataset(text, { source: "r.csv", targetColumns: [-1] });
          expect(ds.size).toBe(rows.length);
          rows.forEach((r, i) => {
            const w = r.length - 1;
            for (let j = 0; j < w; j++) expect(ds.inputs[i * w + j]).toBe(r[j]![0] === 0 ? 0 : r[j]![0]);
            expect(ds.targets[i]).toBe(r[w]![0] === 0 ? 0 : r[w]![0]);
          });
        },
      ),
    );
  });
});

describe("parseCsvDataset: errors name the file, the row and the column", () => {
  it("a non-numeric cell: parse_error at 'file:row R, column C', with the header name as detail", () => {
    const err = expectError(
      () => parseCsvDataset("width,height,colour\n1,2,grey\n3,tall,red\n", { source: "pebbles.csv", targetColumns: ["colour"], oneHot: true }),
      "parse_error",
      "pebbles.csv:row 3, column 2",
    );
    expect(err.received).toBe('"tall"');
    expect(err.issues[0]!.detail).toBe('column "height"');
  });

  it("rejects NaN, infinities, overflow, hexadecimal, decimal commas and empty cells", () => {
    for (const bad of ["NaN", "nan", "inf", "-inf", "Infinity", "-Infinity", "1e999", "0x10", '"1,5"', "", "1.2.3", "--1", "e5", "1e", "+"]) {
      expectError(() => parseCsvDataset(`a,b\n1,2\n${bad},3\n`, { source: "v.csv", targetColumns: ["b"] }), "parse_error", "v.csv:row 3, column 1");
    }
  });

  it("a record of the wrong width: shape_mismatch at 'file:row R'", () => {
    const err = expectError(() => parseCsvDataset("a,b,c\n1,2,3\n4,5\n", { source: "w.csv", targetColumns: ["c"] }), "shape_mismatch", "w.csv:row 3");
    expect(err.received).toBe("2 fields");
    expectError(() => parseCsvDataset("1,2\n3,4,5\n", { source: "w.csv", targetColumns: [1] }), "shape_mismatch", "w.csv:row 2");
  });

  it("row numbers are the lines where records start: blank lines count, quoted line breaks do not start rows", () => {
    expectError(() => parseCsvDataset("a,b\n\n1,2\n\n\nx,4\n", { source: "r.csv", targetColumns: ["b"] }), "parse_error", "r.csv:row 6, column 1");
    expectError(() => parseCsvDataset('a,b,c\n1,2,"one\ntwo"\n3,bad,x\n', { source: "r.csv", targetColumns: ["c"], oneHot: true }), "parse_error", "r.csv:row 4, column 2");
    expectError(() => parseCsvDataset("a,b\r\n1,2\r\n3,?\r\n", { source: "r.csv", targetColumns: ["b"] }), "parse_error", "r.csv:row 3, column 2");
  });

  it("reports every bad cell at once, at most 20", () => {
    const err = expectError(() => parseCsvDataset("a,b\nx,1\n2,y\n3,4\n", { source: "m.csv", targetColumns: ["b"] }), "parse_error", "m.csv:row 2, column 1");
    expect(err.issues.map((i) => i.path)).toEqual(["m.csv:row 2, column 1", "m.csv:row 3, column 2"]);
    const many = "a,b\n" + Array.from({ length: 50 }, () => "x,y").join("\n");
    expect(expectError(() => parseCsvDataset(many, { source: "m.csv", targetColumns: ["b"] }), "parse_error", "m.csv:row 2, column 1").issues).toHaveLength(20);
  });

  it("malformed quoting is a parse_error at the field", () => {
    expectError(() => parseCsvDataset('a,b\n1,2"3\n', { source: "q.csv", targetColumns: ["b"] }), "parse_error", "q.csv:row 2, column 2");
    expectError(() => parseCsvDataset('a,b\n"1"x,2\n', { source: "q.csv", targetColumns: ["b"] }), "parse_error", "q.csv:row 2, column 1");
    expectError(() => parseCsvDataset('a,b\n1,2\n3,"4\n', { source: "q.csv", targetColumns: ["b"] }), "parse_error", "q.csv:row 3, column 2");
  });

  it("empty labels and labels outside classNames are parse errors", () => {
    expectError(() => parseCsvDataset("a,k\n1,x\n2,\n", { source: "l.csv", targetColumns: ["k"], oneHot: true }), "parse_error", "l.csv:row 3, column 2");
    expectError(() => parseCsvDataset("a,k\n1,x\n2,z\n", { source: "l.csv", targetColumns: ["k"], oneHot: true, classNames: ["x", "y"] }), "parse_error", "l.csv:row 3, column 2");
  });

  it("text without data rows is a parse_error naming the source", () => {
    expectError(() => parseCsvDataset("a,b\n", { source: "h.csv", targetColumns: ["b"] }), "parse_error", "h.csv");
    expectError(() => parseCsvDataset("", { source: "h.csv", targetColumns: [0] }), "parse_error", "h.csv");
    expectError(() => parseCsvDataset("\n\n  \n", { source: "h.csv", targetColumns: [0] }), "parse_error", "h.csv");
  });

  it("bad options throw invalid_parameter with the option's name", () => {
    const text = "a,b,c\n1,2,3\n";
    expectError(() => parseCsvDataset(text, { source: "", targetColumns: [0] }), "invalid_parameter", "source");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [] }), "invalid_parameter", "targetColumns");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [3] }), "invalid_parameter", "targetColumns[0]");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [-4] }), "invalid_parameter", "targetColumns[0]");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [1, -2] }), "invalid_parameter", "targetColumns[1]");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: ["d"] }), "invalid_parameter", "targetColumns[0]");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: ["c"], header: false }), "invalid_parameter", "targetColumns[0]");
    expectError(() => parseCsvDataset("a,a,b\n1,2,3\n", { source: "o.csv", targetColumns: ["a"] }), "invalid_parameter", "targetColumns[0]");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [0, 1, 2] }), "invalid_parameter", "targetColumns");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [0], ignoreColumns: [0] }), "invalid_parameter", "ignoreColumns[0]");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [0, 1], oneHot: true }), "invalid_parameter", "targetColumns");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [0], delimiter: '"' }), "invalid_parameter", "delimiter");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [0], delimiter: ",," }), "invalid_parameter", "delimiter");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [0], classNames: ["x"] }), "invalid_parameter", "classNames");
    expectError(() => parseCsvDataset(text, { source: "o.csv", targetColumns: [0], oneHot: true, classNames: ["x", "x"] }), "invalid_parameter", "classNames[1]");
  });

  it("any bad cell placed anywhere is reported at its own row and column", () => {
    const bad = fc.constantFrom("NaN", "inf", "abc", "1,5", "", "0x1F", "1e400", "∞");
    check(
      fc.property(fc.integer({ min: 1, max: 6 }), fc.integer({ min: 2, max: 5 }), fc.nat(), fc.nat(), bad, (rows, width, r0, c0, token) => {
        const r = r0 % rows;
        const c = c0 % width;
        const lines = Array.from({ length: rows }, (_, i) => Array.from({ length: width }, (_, j) => (i === r && j === c ? `"${token}"` : String(i + j))).join(","));
        const text = "h" + Array.from({ length: width - 1 }, (_, j) => `,h${j}`).join("") + "\n" + lines.join("\n");
        expectError(() => parseCsvDataset(text, { source: "any.csv", targetColumns: [-1], header: true }), "parse_error", `any.csv:row ${r + 2}, column ${c + 1}`);
      }),
    );
  });
});
