// CSV loading: RFC 4180 records into typed columns by the byte-level reader
// (tokenizer.ts); test/io/csv-parse-oracle.ts holds the csv-parse reference it is tested against.
import { createHash } from "node:crypto";
import { createReadStream } from "node:fs";
import { open, stat } from "node:fs/promises";
import { createGunzip } from "node:zlib";
import { InputError } from "../errors.js";
import { DEFAULT_NA, defaultDelimiter } from "./dialect.js";
import { unreadable } from "./source-bytes.js";
import { readFileBytes } from "./file-chunks.js";
import type { Table } from "./table.js";
import { ColumnReader } from "./tokenizer.js";

export interface LoadOptions {
  /** Display name used in messages. */
  source: string;
  /** Field delimiter; default "," (tab when the source name ends in .tsv). */
  delimiter?: string;
  /** Tokens read as missing (compared after trimming white space). */
  na?: string[];
  /** Columns to read as categorical even when every value is a number. */
  factors?: string[];
  /** Numbers use a decimal comma (1,5 is one and a half); the delimiter must then be something else. */
  decimalComma?: boolean;
  /** Also keep every data row's fields as text (Table.records). */
  keepRecords?: boolean;
  /** Keep only these columns (others are parsed and checked, not stored). */
  select?: string[];
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
  for (let i = 0; i < b.length; i++) {
    const c = b[i];
    if (c !== 0x20 && c !== 0x0a && c !== 0x0d && c !== 0x09) return false;
  }
  return true;
}

/** A chunked reader for the given options (the dialect checks of parseTable included). */
export function makeReader(options: LoadOptions): ColumnReader {
  const given = options.delimiter ?? defaultDelimiter(options.source);
  // "tab" and a typed backslash-t both mean the tab character.
  const delimiter = given === "tab" || given === "\\t" ? "\t" : given;
  if (
    delimiter.length !== 1 ||
    delimiter === '"' ||
    delimiter === "\n" ||
    delimiter === "\r" ||
    delimiter.charCodeAt(0) > 127
  )
    throw new InputError(
      `--delimiter must be one ASCII character other than a quote or a line break, or tab (got ${JSON.stringify(given)}).`,
    );
  if (options.decimalComma && delimiter === ",")
    throw new InputError(
      "--decimal-comma needs another field delimiter than the comma: give --delimiter ';' (or the one the file uses).",
    );
  return new ColumnReader({
    source: options.source,
    delimiter: delimiter.charCodeAt(0),
    decimal: options.decimalComma ? 0x2c : 0x2e,
    na: new Set(options.na ?? DEFAULT_NA),
    factors: new Set(options.factors ?? []),
    select: options.select ? new Set(options.select) : null,
    keepRecords: options.keepRecords,
  });
}

/** Read a file or standard input in chunks into typed columns; `progress` is told the bytes and rows so far. */
export async function loadTableStream(
  path: string,
  options: Omit<LoadOptions, "source"> & {
    /** The SHA-256 of the bytes is wanted (a model file records it); without it the digest is "" and costs nothing. */
    digest?: boolean;
  },
  progress?: (bytes: number, rows: number) => void,
): Promise<{
  table: Table;
  sha256: string;
}> {
  const name = path === "-" ? "<stdin>" : path;
  const reader = makeReader({ ...options, source: name });
  const hash = createHash("sha256");
  let any = false,
    nonBlank = false,
    gzip = false;
  const digest = options.digest !== false;
  const consume = (chunk: Uint8Array) => {
    if (digest) hash.update(chunk);
    if (!nonBlank && !isBlank(chunk) && !(chunk.length <= 3 && chunk[0] === 0xef)) nonBlank = true;
    any = true;
    reader.feed(chunk);
    progress?.(reader.bytesRead, reader.rows);
  };
  try {
    gzip = path !== "-" && (await isGzip(path));
    if (path === "-") for await (const chunk of process.stdin) consume(chunk as Uint8Array);
    else if (gzip) {
      // A gzip-compressed CSV (FILE.csv.gz) is read through the decompressor; the digest is of the CSV itself.
      for await (const chunk of createReadStream(path).pipe(createGunzip())) consume(chunk as Uint8Array);
    } else {
      const size = (await stat(path)).size;
      reader.expectedBytes = size;
      await readFileBytes(path, size, reader, consume);
    }
  } catch (e) {
    if (e instanceof InputError) throw e;
    if ((e as NodeJS.ErrnoException).code?.startsWith("Z_"))
      throw new InputError(`${name}: the gzip data is damaged (${(e as Error).message}); compress the CSV again.`);
    throw unreadable(name, e);
  }
  if (!any || !nonBlank)
    throw new InputError(`${name}: the file is empty; expected a header row and at least one data row.`);
  const table = reader.finish();
  if (gzip) table.origin = { engine: "csv.gz", queries: 0, rows_transferred: table.nRows };
  return { table, sha256: digest ? hash.digest("hex") : "" };
}

/** Whether a file starts with the gzip magic bytes 1f 8b (whatever its name). */
export async function isGzip(path: string): Promise<boolean> {
  const fh = await open(path, "r");
  try {
    const b = Buffer.alloc(2);
    const { bytesRead } = await fh.read(b, 0, 2, 0);
    return bytesRead === 2 && b[0] === 0x1f && b[1] === 0x8b;
  } finally {
    await fh.close();
  }
}

/** Read and parse a CSV file or standard input ("-"). */
export async function loadTable(path: string, options: Omit<LoadOptions, "source"> = {}): Promise<Table> {
  return (await loadTableStream(path, options)).table;
}
