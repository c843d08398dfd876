/**
 * Comma-separated values (RFC 4180) into a {@link Dataset}.
 *
 * Error paths name the source, the row and the column: `iris.csv:row 12, column 3`.
 * Rows and columns count from 1 as a spreadsheet shows them: the row is the
 * line on which the record starts (the header, if any, is row 1; blank lines
 * count), the column is the field's position in the record.
 * @module
 */
import { refuseUnknownOptions } from "../../errors/options.js";
import { fail } from "../../errors/index.js";
import { checkUnobservedRows, makeDataset, type Dataset } from "./dataset.js";
import { requireBytes } from "../../limits/index.js";
import { IssueList, describeCell, parseDecimal } from "./issues.js";

/**
 * Options of {@link parseCsvDataset}.
 * @category Data
 */
export interface CsvDatasetOptions {
  /** Where the text came from (a file name); used in every error path and as the default name. */
  readonly source: string;
  /**
   * Target columns: indices counted from 0 (negative counts from the end, `-1` = last column)
   * or header names. Every other column, except `ignoreColumns`, is an input.
   */
  readonly targetColumns?: readonly (number | string)[] | undefined;
  /**
   * Column groups of the output layers instead of `targetColumns`: layer name → its columns (indices or
   * header names), in the layer's unit order. An example whose cells of one group are all empty has that
   * layer not observed (NaN targets: partial clamping); a group partly empty is an error.
   */
  readonly targetLayers?: Readonly<Record<string, readonly (number | string)[]>> | undefined;
  /**
   * Column groups of the input layers: layer name → its columns. With it, every column must belong to an
   * input group, a target column or `ignoreColumns`. Default: every other column is one input block.
   */
  readonly inputLayers?: Readonly<Record<string, readonly (number | string)[]>> | undefined;
  /** Whether the first non-blank record is a header of column names. Default: true when any of `targetColumns` or `ignoreColumns` is a name, else false. */
  readonly header?: boolean | undefined;
  /**
   * Read the (single) target column as class labels and one-hot encode them:
   * `labels`, `classNames` and one target unit per class. Default false
   * (target columns are numbers).
   */
  readonly oneHot?: boolean | undefined;
  /** Class names in label order for `oneHot`; default: in order of first appearance in the file. A label not in the list is an error. */
  readonly classNames?: readonly string[] | undefined;
  /** Columns to skip (for example an identifier), as indices or names like `targetColumns`. */
  readonly ignoreColumns?: readonly (number | string)[] | undefined;
  /** Field delimiter, one character other than `"`, CR or LF. Default `,`. */
  readonly delimiter?: string | undefined;
  /** Name of the data set; default `source`. */
  readonly name?: string | undefined;
}

/** One record as read by the tokenizer. */
export interface CsvRecord {
  readonly fields: string[];
  /** 1-based line on which the record starts. */
  readonly row: number;
  /** True when the record is blank (one unquoted field of spaces or tabs, or nothing). */
  readonly blank: boolean;
}

const QUOTE = 34; // "
const CR = 13;
const LF = 10;

/** Counts line breaks (CRLF, CR or LF each count once) in text[from, to). */
function countLineBreaks(text: string, from: number, to: number): number {
  let k = 0;
  for (let i = from; i < to; i++) {
    const c = text.charCodeAt(i);
    if (c === LF) k++;
    else if (c === CR) {
      k++;
      if (text.charCodeAt(i + 1) === LF && i + 1 < to) i++;
    }
  }
  return k;
}

/**
 * Splits RFC 4180 text into records and calls `onRecord` for each; stops when it
 * returns false. Quoted fields may hold delimiters, doubled quotes and line
 * breaks; records end at CRLF, LF or CR; a byte-order mark is skipped; a final
 * line break does not start a record. Structural errors (a quote inside an
 * unquoted field, text after a closing quote, an unclosed quote) are added to
 * `issues` and end the reading.
 * @internal
 */
export function tokenize(text: string, delimiter: number, source: string, issues: IssueList, onRecord: (r: CsvRecord) => boolean): void {
  const n = text.length;
  let i = text.charCodeAt(0) === 0xfeff ? 1 : 0;
  let line = 1;
  while (i < n) {
    const row = line;
    const fields: string[] = [];
    let anyQuoted = false;
    for (;;) {
      const column = fields.length + 1;
      let value: string;
      if (text.charCodeAt(i) === QUOTE) {
        anyQuoted = true;
        i++;
        let buf = "";
        let seg = i;
        for (;;) {
          const q = text.indexOf('"', i);
          if (q < 0) {
            issues.add("parse_error", `${source}:row ${row}, column ${column}`, "a closing quote for the quoted field that starts here", "the end of the text");
            return;
          }
          line += countLineBreaks(text, i, q);
          if (text.charCodeAt(q + 1) === QUOTE) {
            buf += text.slice(seg, q + 1);
            i = q + 2;
            seg = i;
            continue;
          }
          buf += text.slice(seg, q);
          i = q + 1;
          break;
        }
        value = buf;
        const c = text.charCodeAt(i);
        if (i < n && c !== delimiter && c !== CR && c !== LF) {
          issues.add("parse_error", `${source}:row ${row}, column ${column}`, "a delimiter or a line break right after the closing quote (RFC 4180)", describeCell(text.slice(i, i + 10)));
          return;
        }
      } else {
        const start = i;
        while (i < n) {
          const c = text.charCodeAt(i);
          if (c === delimiter || c === CR || c === LF) break;
          if (c === QUOTE) {
            issues.add("parse_error", `${source}:row ${row}, column ${column}`, "a quote only at the start of a field; write a quote inside a quoted field as \"\" (RFC 4180)", describeCell(text.slice(start, i + 1)));
            return;
          }
          i++;
        }
        value = text.slice(start, i);
      }
      fields.push(value);
      if (i < n && text.charCodeAt(i) === delimiter) {
        i++;
        continue;
      }
      if (i < n) {
        if (text.charCodeAt(i) === CR && text.charCodeAt(i + 1) === LF) i += 2;
        else i++;
        line++;
      }
      break;
    }
    const blank = !anyQuoted && fields.length === 1 && (fields[0] as string).trim() === "";
    if (!onRecord({ fields, row, blank })) return;
  }
}

/** Column roles. */
const INPUT = 0;
const TARGET = 1;
const IGNORED = 2;

/** Resolves column references (indices from 0, negative from the end, or header names) to indices. @internal */
export function resolveColumns(
  refs: readonly (number | string)[],
  optionName: string,
  width: number,
  headerNames: readonly string[] | undefined,
): number[] {
  if (!Array.isArray(refs)) fail("invalid_parameter", optionName, "an array of column indices or header names", refs);
  const out: number[] = [];
  for (let k = 0; k < refs.length; k++) {
    const ref: unknown = refs[k];
    let index: number;
    if (typeof ref === "number") {
      if (!Number.isInteger(ref) || ref < -width || ref >= width) {
        fail("invalid_parameter", `${optionName}[${k}]`, `a column index in [${-width}, ${width - 1}] (the records have ${width} columns)`, ref);
      }
      index = ref < 0 ? width + ref : ref;
    } else if (typeof ref === "string") {
      if (headerNames === undefined) fail("invalid_parameter", `${optionName}[${k}]`, "a column index (names need header: true)", ref);
      const first = headerNames.indexOf(ref);
      if (first < 0) fail("invalid_parameter", `${optionName}[${k}]`, `one of the header names ${JSON.stringify(headerNames)}`, ref);
      if (headerNames.indexOf(ref, first + 1) >= 0) fail("invalid_parameter", `${optionName}[${k}]`, "a header name that appears once", ref, "the header repeats it");
      index = first;
    } else {
      return fail("invalid_parameter", `${optionName}[${k}]`, "a column index or a header name", ref);
    }
    if (out.includes(index)) fail("invalid_parameter", `${optionName}[${k}]`, "a column not listed before", ref);
    out.push(index);
  }
  return out;
}

/** Checks the options that do not depend on the text. @internal */
export function checkOptions(options: CsvDatasetOptions): { delimiter: number; header: boolean; oneHot: boolean } {
  if (typeof options !== "object" || options === null) fail("invalid_parameter", "options", "an options object with source and targetColumns", options);
  refuseUnknownOptions(options, ["source", "targetColumns", "targetLayers", "inputLayers", "header", "oneHot", "classNames", "ignoreColumns", "delimiter", "name"]);
  if (typeof options.source !== "string" || options.source === "") fail("invalid_parameter", "source", "a non-empty string (a file name)", options.source);
  for (const key of ["targetLayers", "inputLayers"] as const) {
    const g: unknown = options[key];
    if (g === undefined) continue;
    if (g === null || typeof g !== "object" || Array.isArray(g) || Object.keys(g).length === 0) fail("invalid_parameter", key, "an object mapping layer names to their columns", g);
    for (const [layer, cols] of Object.entries(g)) if (!Array.isArray(cols) || cols.length === 0) fail("invalid_parameter", `${key}.${layer}`, "a non-empty array of column indices or header names", cols);
  }
  if (options.targetLayers !== undefined && options.targetColumns !== undefined) fail("invalid_parameter", "targetLayers", "either targetColumns or targetLayers, not both", "both");
  if (options.targetLayers !== undefined && options.oneHot === true) fail("invalid_parameter", "oneHot", "false with targetLayers (targets per layer are numbers)", true);
  if (options.targetLayers === undefined && (!Array.isArray(options.targetColumns) || options.targetColumns.length === 0)) {
    fail("invalid_parameter", "targetColumns", "a non-empty array of column indices or header names", options.targetColumns);
  }
  const d = options.delimiter ?? ",";
  if (typeof d !== "string" || d.length !== 1 || d === '"' || d === "\r" || d === "\n") {
    fail("invalid_parameter", "delimiter", 'one character other than a quote, CR or LF', d);
  }
  const named = (refs: readonly unknown[] | undefined): boolean => Array.isArray(refs) && refs.some((r) => typeof r === "string");
  const groups = (g: Readonly<Record<string, readonly unknown[]>> | undefined): unknown[] => Object.values(g ?? {}).flat();
  const header = options.header ?? (named(options.targetColumns) || named(options.ignoreColumns) || named(groups(options.targetLayers)) || named(groups(options.inputLayers)));
  if (typeof header !== "boolean") fail("invalid_parameter", "header", "true or false", header);
  const oneHotFlag = options.oneHot ?? false;
  if (typeof oneHotFlag !== "boolean") fail("invalid_parameter", "oneHot", "true or false", oneHotFlag);
  if (oneHotFlag && options.targetColumns?.length !== 1) {
    fail("invalid_parameter", "targetColumns", "exactly one column when oneHot is true", `${options.targetColumns?.length ?? 0} columns`);
  }
  if (options.classNames !== undefined) {
    if (!oneHotFlag) fail("invalid_parameter", "classNames", "to be given only with oneHot: true", options.classNames);
    if (!Array.isArray(options.classNames) || options.classNames.length === 0) fail("invalid_parameter", "classNames", "a non-empty array of strings", options.classNames);
    const seen = new Set<string>();
    options.classNames.forEach((c: unknown, k) => {
      if (typeof c !== "string" || c.trim() === "" || c.trim() !== c) fail("invalid_parameter", `classNames[${k}]`, "a non-empty string without surrounding spaces", c);
      if (seen.has(c)) fail("invalid_parameter", `classNames[${k}]`, "a name not used before in the list", c);
      seen.add(c);
    });
  }
  if (options.name !== undefined && (typeof options.name !== "string" || options.name === "")) fail("invalid_parameter", "name", "a non-empty string", options.name);
  return { delimiter: d.charCodeAt(0), header, oneHot: oneHotFlag };
}

/** True if the names are distinct and non-empty. */
function usableNames(names: readonly string[]): boolean {
  return names.every((n) => n !== "") && new Set(names).size === names.length;
}

/**
 * Reads CSV text (RFC 4180) into a {@link Dataset}.
 *
 * Format: fields separated by `delimiter` (default `,`), records by CRLF, LF or
 * CR; a field in double quotes may contain delimiters, line breaks and doubled
 * quotes (`""`). Blank lines are skipped; a byte-order mark is ignored; spaces
 * and tabs around a cell are ignored. Numeric cells must be decimal numbers
 * (`-1.5`, `2e-3`, `.5`): empty cells, `NaN`, `inf`, `Infinity`, hexadecimal and
 * values that overflow are errors, never silently converted. Every record must
 * have as many fields as the first.
 *
 * Error paths: `<source>:row R, column C` (from 1, the row being the line on
 * which the record starts; see the module note), or `<source>:row R` for a
 * record of the wrong width; with a header the column name is added as detail.
 * Up to 20 problems are reported in one error.
 * @category Data
 * @param text - The CSV text.
 * @param options - Source name, target columns, header, one-hot coding, ignored columns, delimiter.
 * @returns The examples in file order.
 * @throws {@link EbbflowError} `parse_error` for malformed quoting, non-numeric or non-finite cells, empty labels,
 *   no data rows; `shape_mismatch` for a record of the wrong width; `invalid_parameter` for bad options
 *   (path = option name, e.g. `targetColumns[0]`).
 * @example
 * ```ts
 * const ds = parseCsvDataset("a,b,kind\n1,2,x\n3,4,y\n", { source: "pairs.csv", targetColumns: ["kind"], oneHot: true });
 * ds.classNames; // ["x", "y"]
 * ds.targets; // Float64Array [1, 0, 0, 1]
 * ```
 */
export function parseCsvDataset(text: string, options: CsvDatasetOptions): Dataset {
  const { delimiter, header, oneHot: oneHotFlag } = checkOptions(options);
  if (typeof text !== "string") fail("invalid_parameter", "text", "a string", text);
  const source = options.source;
  const issues = new IssueList();

  let width = -1;
  let firstRow = 0;
  let headerNames: string[] | undefined;
  let roles: Uint8Array = new Uint8Array(0);
  let targetCols: number[] = [];
  let inputCols: number[] = [];
  const inputs: number[] = [];
  const targets: number[] = [];
  const labels: number[] = [];
  const classIndex = new Map<string, number>();
  const classNames: string[] = [];
  if (options.classNames !== undefined) {
    for (const c of options.classNames) {
      classIndex.set(c, classNames.length);
      classNames.push(c);
    }
  }
  const fixedClasses = options.classNames !== undefined;
  let dataRows = 0;

  // column groups per layer (name, columns), when given
  let targetBlocks: { layer: string; size: number }[] | undefined;
  let inputBlocks: { layer: string; size: number }[] | undefined;
  const targetColumnSet = new Set<number>();
  const setup = (fields: string[]): void => {
    width = fields.length;
    if (header) headerNames = fields.map((f) => f.trim());
    const resolveGroups = (g: Readonly<Record<string, readonly (number | string)[]>>, key: string): { cols: number[]; blocks: { layer: string; size: number }[] } => {
      const cols: number[] = [];
      const blocks: { layer: string; size: number }[] = [];
      for (const [layer, refs] of Object.entries(g)) {
        const c = resolveColumns(refs, `${key}.${layer}`, width, headerNames);
        c.forEach((x, k) => {
          if (cols.includes(x)) fail("invalid_parameter", `${key}.${layer}[${k}]`, "a column not listed for another layer", refs[k]);
        });
        cols.push(...c);
        blocks.push({ layer, size: c.length });
      }
      return { cols, blocks };
    };
    if (options.targetLayers !== undefined) {
      const t = resolveGroups(options.targetLayers, "targetLayers");
      targetCols = t.cols;
      targetBlocks = t.blocks;
      for (const c of targetCols) targetColumnSet.add(c);
    } else targetCols = resolveColumns(options.targetColumns as readonly (number | string)[], "targetColumns", width, headerNames);
    const ignored = options.ignoreColumns === undefined ? [] : resolveColumns(options.ignoreColumns, "ignoreColumns", width, headerNames);
    roles = new Uint8Array(width);
    for (const c of targetCols) roles[c] = TARGET;
    ignored.forEach((c, k) => {
      if (roles[c] === TARGET) fail("invalid_parameter", `ignoreColumns[${k}]`, "a column that is not a target column", (options.ignoreColumns as readonly unknown[])[k]);
      roles[c] = IGNORED;
    });
    inputCols = [];
    if (options.inputLayers !== undefined) {
      const g = resolveGroups(options.inputLayers, "inputLayers");
      g.cols.forEach((c) => {
        if (roles[c] !== INPUT) fail("invalid_parameter", "inputLayers", "input columns that are neither target nor ignored columns", headerNames?.[c] ?? c);
      });
      for (let c = 0; c < width; c++) {
        if (roles[c] === INPUT && !g.cols.includes(c)) fail("invalid_parameter", "inputLayers", "every column in an input layer, a target layer or ignoreColumns", headerNames?.[c] ?? c, `column ${c + 1} belongs to none`);
      }
      inputCols = g.cols;
      inputBlocks = g.blocks;
    } else for (let c = 0; c < width; c++) if (roles[c] === INPUT) inputCols.push(c);
    if (inputCols.length === 0) fail("invalid_parameter", "targetColumns", "to leave at least one input column", `no input column among ${width} columns`);
  };

  const where = (row: number, col: number): string => `${source}:row ${row}, column ${col + 1}`;
  const detail = (col: number): string | undefined => (headerNames === undefined ? undefined : `column ${JSON.stringify(headerNames[col])}`);

  const readNumber = (fields: string[], row: number, col: number, out: number[]): boolean => {
    const cell = fields[col] as string;
    if (targetColumnSet.has(col) && cell.trim() === "") {
      // an empty target cell of a layer group: not observed (whole groups are checked after reading)
      out.push(Number.NaN);
      return true;
    }
    const v = parseDecimal(cell);
    if (Number.isNaN(v)) {
      out.push(0);
      return issues.add("parse_error", where(row, col), "a finite decimal number (NaN and infinities are not allowed)", describeCell(cell), detail(col));
    }
    out.push(v);
    return true;
  };

  tokenize(text, delimiter, source, issues, (record) => {
    if (record.blank) return true;
    if (width < 0) {
      firstRow = record.row;
      setup(record.fields);
      if (header) return true;
    }
    const { fields, row } = record;
    if (fields.length !== width) {
      return issues.add("shape_mismatch", `${source}:row ${row}`, `${width} fields (as in row ${firstRow})`, `${fields.length} fields`);
    }
    dataRows++;
    for (const c of inputCols) if (!readNumber(fields, row, c, inputs)) return false;
    if (oneHotFlag) {
      const col = targetCols[0] as number;
      const name = (fields[col] as string).trim();
      let index = classIndex.get(name);
      if (name === "") {
        labels.push(0);
        return issues.add("parse_error", where(row, col), "a class label", "an empty cell", detail(col));
      }
      if (index === undefined) {
        if (fixedClasses) {
          labels.push(0);
          return issues.add("parse_error", where(row, col), `one of the class names ${JSON.stringify(classNames)}`, describeCell(name), detail(col));
        }
        index = classNames.length;
        classIndex.set(name, index);
        classNames.push(name);
      }
      labels.push(index);
    } else {
      const from = targets.length;
      for (const c of targetCols) if (!readNumber(fields, row, c, targets)) return false;
      // a layer's group of target cells is all empty (not observed) or all numbers
      let off = from;
      for (const b of targetBlocks ?? []) {
        const empty = Number.isNaN(targets[off] as number);
        for (let k = 1; k < b.size; k++) {
          if (Number.isNaN(targets[off + k] as number) !== empty) {
            const col = targetCols[off - from + k] as number;
            return issues.add("parse_error", where(row, col), `the target cells of layer ${JSON.stringify(b.layer)} all filled (observed) or all empty (not observed)`, describeCell(fields[col] as string), detail(col));
          }
        }
        off += b.size;
      }
    }
    return true;
  });
  issues.throwIfAny();
  if (dataRows === 0) fail("parse_error", source, header ? "at least one data row after the header" : "at least one data row", "no data rows");

  const inputSize = inputCols.length;
  const lab = oneHotFlag ? Int32Array.from(labels) : undefined;
  const targetSize = oneHotFlag ? classNames.length : targetCols.length;
  let targetValues: Float64Array;
  if (lab !== undefined) {
    requireBytes(source, `one-hot targets of ${dataRows} rows × ${targetSize} classes`, dataRows * targetSize * 8);
    targetValues = new Float64Array(dataRows * targetSize);
    for (let i = 0; i < dataRows; i++) targetValues[i * targetSize + (lab[i] as number)] = 1;
  } else {
    targetValues = Float64Array.from(targets);
    if (targetBlocks !== undefined) checkUnobservedRows(targetValues, targetCols.length, targetBlocks, `${source}:targets`);
  }
  const names = headerNames === undefined ? undefined : inputCols.map((c) => (headerNames as string[])[c] as string);
  return makeDataset({
    name: options.name ?? source,
    size: dataRows,
    inputSize,
    targetSize,
    inputs: Float64Array.from(inputs),
    targets: targetValues,
    labels: lab,
    classNames: lab === undefined ? undefined : classNames,
    inputNames: names !== undefined && usableNames(names) ? names : undefined,
    inputLayers: inputBlocks,
    targetLayers: targetBlocks,
  });
}
