// The reference reader: csv-parse feeding the same typed columns as the
// byte-level reader of src/io/tokenizer.ts, which test/io/tokenizer.test.ts
// compares against it on awkward files and random text. A test oracle only.
import { parse } from "csv-parse/sync";
import { InputError } from "../../src/errors.js";
import { DEFAULT_NA, defaultDelimiter, parseDecimal, showDelimiter } from "../../src/io/dialect.js";
import type { LoadOptions } from "../../src/io/csv.js";
import { decodeUtf8 } from "../../src/io/source-bytes.js";
import { checkHeader, type Column, type Table } from "../../src/io/table.js";

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
 * The same as parseTable, on csv-parse: kept as the reference implementation
 * that the byte-level reader is tested against.
 */
export function parseTableWithCsvParse(input: Uint8Array | string, options: LoadOptions): Table {
  const source = options.source;
  let text = typeof input === "string" ? input : decodeUtf8(input, source);
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const delimiter = options.delimiter ?? defaultDelimiter(source);
  if (delimiter.length !== 1 || delimiter === '"' || delimiter === "\n" || delimiter === "\r")
    throw new InputError(
      `--delimiter must be one character other than a quote or a line break (got ${JSON.stringify(delimiter)}).`,
    );
  const na = new Set(options.na ?? DEFAULT_NA);
  const forced = new Set(options.factors ?? []);
  if (text.trim() === "")
    throw new InputError(`${source}: the file is empty; expected a header row and at least one data row.`);

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
          ? {
              name: h,
              forced: forced.has(h),
              numeric: !forced.has(h),
              values: new Float64Array(1024),
              codes: new Int32Array(forced.has(h) ? 1024 : 0),
              dict: new Map(),
              levels: [],
              firstText: null,
            }
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
        if (missing) {
          b.values[i] = NaN;
          continue;
        }
        const v = parseDecimal(s);
        if (!Number.isNaN(v)) {
          b.values[i] = v;
          continue;
        }
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
      throw new InputError(
        `${source}, line ${line}: a quoted field is never closed (an opening " without its closing "). Close the quote or remove it.`,
      );
    if (err.code === "CSV_INVALID_CLOSING_QUOTE" || err.code === "CSV_NON_TRIMABLE_CHAR_AFTER_CLOSING_QUOTE")
      throw new InputError(
        `${source}, line ${line}: a quote sits inside an unquoted field or text follows a closing quote. Double any quote inside a quoted field ("").`,
      );
    throw new InputError(`${source}, line ${line}: the CSV cannot be read (${err.message}).`);
  }

  if (header === null)
    throw new InputError(`${source}: the file is empty; expected a header row and at least one data row.`);
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
