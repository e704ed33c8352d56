// CSV loading: RFC 4180 records into typed columns, by the byte-level reader
// (tokenizer.ts), with csv-parse kept as its reference.
import { createRequire } from "node:module";
import { open, readFile, stat } from "node:fs/promises";
import { createHash } from "node:crypto";
import { isUtf8 } from "node:buffer";
import { ColumnReader } from "./tokenizer.js";
import { InputError } from "../errors.js";
import { checkHeader, type Column, type Table } from "./table.js";

export const DEFAULT_NA = ["", "NA", "NaN", "null", "."];

// csv-parse is the reference reader: loaded only when a caller needs it.
const require = createRequire(import.meta.url);
type CsvParse = (input: string, options: Record<string, unknown>) => unknown;
let csvParse: CsvParse | null = null;
const parse: CsvParse = (input, options) => (csvParse ??= (require("csv-parse/sync") as { parse: CsvParse }).parse)(input, options);

export interface LoadOptions {
  /** Display name used in messages. */
  source: string;
  /** Field delimiter; default "," (tab when the source name ends in .tsv). */
  delimiter?: string;
  /** Tokens read as missing (compared after trimming white space). */
  na?: string[];
  /** Columns to read as categorical even when every value is a number. */
  factors?: string[];
  /** Keep only these columns (others are parsed and checked, not stored). */
  select?: string[];
}

// A decimal number: optional sign, digits with an optional fraction, optional exponent.
const DECIMAL = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;

/** Parse one trimmed field as a finite decimal number, or return NaN. */
export function parseDecimal(s: string): number {
  if (!DECIMAL.test(s)) return NaN;
  const v = Number(s);
  return Number.isFinite(v) ? v : NaN;
}

/** Read a file path, or standard input for "-". */
export async function readSource(path: string): Promise<{ bytes: Buffer; name: string }> {
  if (path === "-") {
    const chunks: Buffer[] = [];
    for await (const chunk of process.stdin) chunks.push(chunk as Buffer);
    return { bytes: Buffer.concat(chunks), name: "<stdin>" };
  }
  try {
    return { bytes: await readFile(path), name: path };
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    const why =
      code === "ENOENT" ? "no such file" : code === "EACCES" ? "permission denied" : code === "EISDIR" ? "it is a folder" : String(code ?? e);
    throw new InputError(`${path}: cannot read the file (${why}).`);
  }
}

/** Byte offset of the first invalid UTF-8 sequence, or −1 (RFC 3629 §4); Node's native check first, the scan below only to locate a fault. */
export function firstInvalidUtf8(b: Uint8Array): number {
  if (isUtf8(b)) return -1;
  let i = 0;
  const n = b.length;
  while (i < n) {
    const c = b[i];
    if (c < 0x80) { i++; continue; }
    let need: number, min: number;
    if (c >= 0xc2 && c <= 0xdf) { need = 1; min = 0x80; }
    else if (c >= 0xe0 && c <= 0xef) { need = 2; min = 0x800; }
    else if (c >= 0xf0 && c <= 0xf4) { need = 3; min = 0x10000; }
    else return i;
    let cp = c & (need === 1 ? 0x1f : need === 2 ? 0x0f : 0x07);
    for (let k = 1; k <= need; k++) {
      const d = b[i + k];
      if (d === undefined || (d & 0xc0) !== 0x80) return i;
      cp = (cp << 6) | (d & 0x3f);
    }
    if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff)) return i;
    i += need + 1;
  }
  return -1;
}

function lineOfOffset(b: Uint8Array, offset: number): number {
  let line = 1;
  for (let i = 0; i < offset; i++) if (b[i] === 0x0a) line++;
  return line;
}

/** Decode UTF-8 text, naming the line and byte of the first invalid sequence. */
export function decodeUtf8(bytes: Uint8Array, source: string): string {
  const bad = firstInvalidUtf8(bytes);
  if (bad >= 0) {
    throw new InputError(
      `${source}, line ${lineOfOffset(bytes, bad)}: the file is not valid UTF-8 (byte 0x${bytes[bad].toString(16).padStart(2, "0")} at offset ${bad}). ` +
        `Save it as UTF-8 (for example with iconv -f latin1 -t utf-8) and run again.`,
    );
  }
  return new TextDecoder("utf-8").decode(bytes);
}

function defaultDelimiter(source: string): string {
  return /\.tsv$/i.test(source) ? "\t" : ",";
}

/** Which common delimiter the header line seems to use, if not the one given. */
export function guessDelimiter(headerLine: string, given: string): string | null {
  let best: string | null = null;
  let bestCount = 0;
  for (const d of [",", ";", "\t", "|"]) {
    if (d === given) continue;
    const count = headerLine.split(d).length - 1;
    if (count > bestCount) { best = d; bestCount = count; }
  }
  return best;
}

export function showDelimiter(d: string): string {
  return d === "\t" ? "tab" : `'${d}'`;
}

interface Builder {
  name: string;
  forced: boolean;
  numeric: boolean;
  values: Float64Array;
  codes: Int32Array;
  dict: Map<string, number>;
  levels: string[];
  firstText: { row: number; value: string } | null;
}

function grow<T extends Float64Array | Int32Array>(a: T, need: number): T {
  if (need <= a.length) return a;
  const next = new (a.constructor as { new (n: number): T })(Math.max(need, a.length * 2));
  next.set(a);
  return next;
}

function codeOf(b: Builder, s: string): number {
  let c = b.dict.get(s);
  if (c === undefined) {
    c = b.levels.length;
    b.levels.push(s);
    b.dict.set(s, c);
  }
  return c;
}

/** Turn a numeric-so-far column into a factor (its earlier numbers become level names). */
function demote(b: Builder, upto: number): void {
  b.numeric = false;
  b.codes = new Int32Array(Math.max(16, b.values.length));
  for (let i = 0; i < upto; i++) {
    const v = b.values[i];
    b.codes[i] = Number.isNaN(v) ? -1 : codeOf(b, String(v));
  }
}

/**
 * Parse CSV text into typed columns. The first record is the header. A
 * column is numeric when every present value is a finite decimal number,
 * otherwise it is a factor; `factors` forces a factor. Uses the byte-level
 * reader of tokenizer.ts.
 */
export function parseTable(input: Uint8Array | string, options: LoadOptions): Table {
  const bytes = typeof input === "string" ? new TextEncoder().encode(input) : input;
  const reader = makeReader(options);
  if (bytes.length === 0 || (bytes.length <= 3 && bytes[0] === 0xef) || isBlank(bytes))
    throw new InputError(`${options.source}: the file is empty; expected a header row and at least one data row.`);
  reader.feed(bytes, true);
  return reader.finish();
}

function isBlank(b: Uint8Array): boolean {
  for (let i = 0; i < b.length; i++) { const c = b[i]; if (c !== 0x20 && c !== 0x0a && c !== 0x0d && c !== 0x09) return false; }
  return true;
}

/** A chunked reader for the given options (the dialect checks of parseTable included). */
export function makeReader(options: LoadOptions): ColumnReader {
  const delimiter = options.delimiter ?? defaultDelimiter(options.source);
  if (delimiter.length !== 1 || delimiter === '"' || delimiter === "\n" || delimiter === "\r" || delimiter.charCodeAt(0) > 127)
    throw new InputError(`--delimiter must be one ASCII character other than a quote or a line break (got ${JSON.stringify(delimiter)}).`);
  return new ColumnReader({
    source: options.source,
    delimiter: delimiter.charCodeAt(0),
    na: new Set(options.na ?? DEFAULT_NA),
    factors: new Set(options.factors ?? []),
    select: options.select ? new Set(options.select) : null,
  });
}

/** Read a file or standard input in chunks into typed columns; `progress` is told the bytes and rows so far. */
export async function loadTableStream(path: string, options: Omit<LoadOptions, "source">, progress?: (bytes: number, rows: number) => void): Promise<{ table: Table; sha256: string }> {
  const name = path === "-" ? "<stdin>" : path;
  const reader = makeReader({ ...options, source: name });
  const hash = createHash("sha256");
  let any = false, nonBlank = false;
  const consume = (chunk: Uint8Array) => {
    hash.update(chunk);
    if (!nonBlank && !isBlank(chunk) && !(chunk.length <= 3 && chunk[0] === 0xef)) nonBlank = true;
    any = true;
    reader.feed(chunk);
    progress?.(reader.bytesRead, reader.rows);
  };
  try {
    if (path === "-") for await (const chunk of process.stdin) consume(chunk as Uint8Array);
    else {
      reader.expectedBytes = (await stat(path)).size;
      // One 4 MB buffer, refilled: the reader copies what it keeps, so no chunk outlives its read
      // (a new buffer per chunk would leave hundreds of MB to the garbage collector on a large file).
      const fh = await open(path, "r");
      try {
        const buf = Buffer.allocUnsafe(1 << 22);
        for (;;) {
          const { bytesRead } = await fh.read(buf, 0, buf.length, null);
          if (bytesRead === 0) break;
          consume(buf.subarray(0, bytesRead));
        }
      } finally {
        await fh.close();
      }
    }
  } catch (e) {
    if (e instanceof InputError) throw e;
    const code = (e as NodeJS.ErrnoException).code;
    const why = code === "ENOENT" ? "no such file" : code === "EACCES" ? "permission denied" : code === "EISDIR" ? "it is a folder" : String(code ?? e);
    throw new InputError(`${name}: cannot read the file (${why}).`);
  }
  if (!any || !nonBlank) throw new InputError(`${name}: the file is empty; expected a header row and at least one data row.`);
  return { table: reader.finish(), sha256: hash.digest("hex") };
}

/**
 * The same as parseTable, on csv-parse: kept as the reference implementation
 * that the byte-level reader is tested against.
 */
export function parseTableWithCsvParse(input: Uint8Array | string, options: LoadOptions): Table {
  const source = options.source;
  let text = typeof input === "string" ? input : decodeUtf8(input, source);
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const delimiter = options.delimiter ?? defaultDelimiter(source);
  if (delimiter.length !== 1 || delimiter === '"' || delimiter === "\n" || delimiter === "\r")
    throw new InputError(`--delimiter must be one character other than a quote or a line break (got ${JSON.stringify(delimiter)}).`);
  const na = new Set(options.na ?? DEFAULT_NA);
  const forced = new Set(options.factors ?? []);
  if (text.trim() === "") throw new InputError(`${source}: the file is empty; expected a header row and at least one data row.`);

  let header: string[] | null = null;
  let builders: (Builder | null)[] = [];
  let nRows = 0;
  const selectSet = options.select ? new Set(options.select) : null;

  const onRecord = (record: string[], context: { lines: number; records: number }): null => {
    if (header === null) {
      header = record.map((h) => h.trim());
      checkHeader(header, source, (m) => new InputError(m));
      builders = header.map((h) =>
        h !== "" && (selectSet === null || selectSet.has(h))
          ? { name: h, forced: forced.has(h), numeric: !forced.has(h), values: new Float64Array(1024), codes: new Int32Array(forced.has(h) ? 1024 : 0), dict: new Map(), levels: [], firstText: null }
          : null,
      );
      return null;
    }
    const row = nRows + 2;
    if (record.length === 1 && record[0].trim() === "" && header.length > 1) return null; // blank line
    if (record.length !== header.length) {
      throw new InputError(
        `${source}, row ${row} (line ${context.lines}): ${record.length} fields where the header has ${header.length}. ` +
          `Check for an unquoted ${showDelimiter(delimiter)} inside a value, or a missing field.`,
      );
    }
    const i = nRows;
    for (let j = 0; j < builders.length; j++) {
      const b = builders[j];
      if (b === null) continue;
      const s = record[j].trim();
      const missing = na.has(s);
      if (b.numeric) {
        b.values = grow(b.values, i + 1);
        if (missing) { b.values[i] = NaN; continue; }
        const v = parseDecimal(s);
        if (!Number.isNaN(v)) { b.values[i] = v; continue; }
        b.firstText = { row, value: s };
        demote(b, i);
      }
      b.codes = grow(b.codes, i + 1);
      b.codes[i] = missing ? -1 : codeOf(b, s);
    }
    nRows++;
    return null;
  };

  try {
    parse(text, {
      delimiter,
      bom: true,
      relax_column_count: true,
      skip_empty_lines: true,
      on_record: onRecord as never,
    });
  } catch (e) {
    if (e instanceof InputError) throw e;
    const err = e as Error & { code?: string; lines?: number };
    const line = err.lines ?? "?";
    if (err.code === "CSV_QUOTE_NOT_CLOSED")
      throw new InputError(`${source}, line ${line}: a quoted field is never closed (an opening " without its closing "). Close the quote or remove it.`);
    if (err.code === "CSV_INVALID_CLOSING_QUOTE" || err.code === "CSV_NON_TRIMABLE_CHAR_AFTER_CLOSING_QUOTE")
      throw new InputError(`${source}, line ${line}: a quote sits inside an unquoted field or text follows a closing quote. Double any quote inside a quoted field ("").`);
    throw new InputError(`${source}, line ${line}: the CSV cannot be read (${err.message}).`);
  }

  if (header === null) throw new InputError(`${source}: the file is empty; expected a header row and at least one data row.`);
  const hdr: string[] = header;
  if (nRows === 0) throw new InputError(`${source}: the file has a header row but no data rows.`);

  const columns = new Map<string, Column>();
  for (const b of builders) {
    if (b === null) continue;
    if (b.numeric) {
      columns.set(b.name, { kind: "numeric", name: b.name, values: b.values.slice(0, nRows) });
    } else {
      columns.set(b.name, {
        kind: "factor",
        name: b.name,
        codes: b.codes.slice(0, nRows),
        levels: b.levels,
        reason: b.forced ? { forced: true } : { forced: false, row: b.firstText!.row, value: b.firstText!.value },
      });
    }
  }
  return { source, header: hdr, nRows, columns, delimiter };
}

/** Read and parse a CSV file or standard input ("-"). */
export async function loadTable(path: string, options: Omit<LoadOptions, "source"> = {}): Promise<Table> {
  return (await loadTableStream(path, options)).table;
}

/** All records as text (header first), for outputs that repeat the input columns. */
export function parseRecords(input: Uint8Array | string, options: { source: string; delimiter?: string }): string[][] {
  let text = typeof input === "string" ? input : decodeUtf8(input, options.source);
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  return parse(text, { delimiter: options.delimiter ?? defaultDelimiter(options.source), bom: true, relax_column_count: true, skip_empty_lines: true }) as string[][];
}
