// A byte-level RFC 4180 reader that builds typed columns as it goes, chunk by
// chunk, without creating a string per field: numbers are parsed from the
// bytes (exactly: digits/10^k is correctly rounded while both fit in 2^53,
// otherwise the field falls back to Number()), factor levels are looked up by
// a hash of their bytes. csv-parse remains the reference implementation in the
// tests (test/io-tokenizer.test.ts compares the two on awkward files).
import { InputError } from "../errors.js";
import { rowArray } from "../math/shared-arrays.js";
import { checkHeader, type Column, type Table } from "./table.js";
import { firstInvalidUtf8 } from "./source-bytes.js";
import { checkTextKind, READER_LIMITS } from "./text-kind.js";
import { decimalBytes, decimalText, guessDelimiter, showDelimiter } from "./dialect.js";

const QUOTE = 0x22,
  LF = 0x0a,
  CR = 0x0d;

interface Builder {
  name: string;
  keep: boolean;
  forced: boolean;
  numeric: boolean;
  values: Float64Array;
  codes: Int32Array;
  levels: string[];
  /** Level lookup: hash of the bytes → codes with that hash. */
  byHash: Map<number, number[]>;
  /** Level lookup for levels of at most 6 bytes: the bytes packed into one number (exact) → code. */
  byPacked: Map<number, number>;
  levelBytes: Uint8Array[];
  firstText: { row: number; value: string } | null;
}

export interface StreamOptions {
  source: string;
  delimiter: number;
  /** The decimal mark of numbers: '.' (0x2e), or ',' (0x2c) with --decimal-comma. */
  decimal?: number;
  na: Set<string>;
  factors: Set<string>;
  select: Set<string> | null;
  /** Also keep every data row's fields as text (predict repeats the input rows in its CSV output). */
  keepRecords?: boolean;
}

function copyBytes(b: Uint8Array): Uint8Array {
  const c = new Uint8Array(b.length);
  c.set(b);
  return c;
}

function grow<T extends Float64Array | Int32Array>(a: T, need: number, estimate = 0): T {
  if (need <= a.length) return a;
  const size = estimate >= need ? estimate : Math.max(need, a.length * 2);
  const next = rowArray(a.constructor as Parameters<typeof rowArray<T>>[0], size);
  next.set(a);
  return next;
}

/** Incremental reader: feed() chunks of bytes, then finish(). */
export class ColumnReader {
  private header: string[] | null = null;
  private builders: Builder[] = [];
  private nRows = 0;
  private line = 1;
  private carry: Uint8Array | null = null;
  private naBytes: Uint8Array[];
  /** Bit k set: some missing-value token has k bytes (−1: one is longer than 31). */
  private naLengths = 0;
  private naFirst = new Uint8Array(256);
  private fieldStart: number[] = [];
  /** 1 at the bytes that end an unquoted field's text: the delimiter, CR, LF and the quote. */
  private readonly stops = new Uint8Array(256);
  private fieldEnd: number[] = [];
  private fieldQuoted: boolean[] = [];
  private decoder = new TextDecoder("utf-8");
  /** Bytes at the start of the carried tail already checked as UTF-8. */
  private validated = 0;
  bytesRead = 0;
  /** The data rows' fields as text, when keepRecords is set. */
  private readonly keptRecords: string[][] = [];
  /** The input's size in bytes when known (a file): columns are then sized from the rows seen so far, not by doubling. */
  expectedBytes = 0;
  /** Input offset of the buffer being tokenized. */
  private bufferBase = 0;

  constructor(private o: StreamOptions) {
    this.naBytes = [...o.na].map((s) => new TextEncoder().encode(s));
    for (const t of this.naBytes) {
      if (t.length > 0 && t.length <= 31) this.naLengths |= 1 << t.length;
      if (t.length > 31) this.naLengths = -1;
      if (t.length > 0) this.naFirst[t[0]] = 1;
    }
    for (const c of [o.delimiter, LF, CR, QUOTE]) this.stops[c] = 1;
  }

  get rows(): number {
    return this.nRows;
  }

  /** Process every complete record in chunk (plus any carried bytes); keep the incomplete tail. */
  feed(chunk: Uint8Array, last = false): void {
    this.bytesRead += chunk.length;
    if (this.bytesRead === chunk.length) checkTextKind(chunk, this.o.source);
    let buf: Uint8Array;
    if (this.carry?.length) {
      buf = new Uint8Array(this.carry.length + chunk.length);
      buf.set(this.carry);
      buf.set(chunk, this.carry.length);
    } else buf = chunk;
    if (
      this.header === null &&
      this.bytesRead === chunk.length &&
      buf[0] === 0xef &&
      buf[1] === 0xbb &&
      buf[2] === 0xbf
    )
      buf = buf.subarray(3);
    this.bufferBase = this.bytesRead - buf.length;
    // Validate UTF-8 up to the last line break (a multi-byte character never spans one).
    let upto = buf.length;
    if (!last) {
      upto = buf.lastIndexOf(LF) + 1;
    }
    const nul = buf.subarray(this.validated).indexOf(0);
    if (nul >= 0) {
      const at = this.validated + nul;
      let line = this.line;
      for (let k = 0; k < at; k++) if (buf[k] === LF) line++;
      throw new InputError(
        `${this.o.source}, line ${line}: the file holds a NUL byte (offset ${this.bufferBase + at}), so it is not a text file; export the data as CSV text in UTF-8.`,
      );
    }
    const bad = firstInvalidUtf8(buf.subarray(this.validated, upto));
    if (bad >= 0) {
      const at = this.validated + bad;
      let line = this.line;
      for (let k = 0; k < at; k++) if (buf[k] === LF) line++;
      throw new InputError(
        `${this.o.source}, line ${line}: the file is not valid UTF-8 (byte 0x${buf[at].toString(16).padStart(2, "0")} at offset ${this.bytesRead - chunk.length - (this.carry?.length ?? 0) + at}). Save it as UTF-8 (for example with iconv -f latin1 -t utf-8) and run again.`,
      );
    }
    const consumed = this.records(buf, last);
    if (buf.length - consumed > READER_LIMITS.lineBytes)
      throw new InputError(
        `${this.o.source}, line ${this.line}: a line longer than ${READER_LIMITS.lineBytes / 1e6} MB, so the file is probably not CSV text (or a quote is never closed).`,
      );
    this.validated = Math.max(0, upto - consumed);
    // Copies, never views: the caller may refill its buffer.
    this.carry = consumed < buf.length ? copyBytes(buf.subarray(consumed)) : null;
  }

  /** Tokenize records in buf; returns the offset after the last complete record. */
  private records(b: Uint8Array, last: boolean): number {
    const d = this.o.delimiter;
    const n = b.length;
    let pos = 0;
    const fs = this.fieldStart,
      fe = this.fieldEnd,
      fq = this.fieldQuoted,
      stops = this.stops;
    while (pos < n) {
      const recStart = pos;
      const recLine = this.line;
      let nf = 0;
      let p = pos;
      let complete = false;
      for (;;) {
        // One field.
        if (p < n && b[p] === QUOTE) {
          let q = p + 1;
          let closed = false;
          while (q < n) {
            if (b[q] === QUOTE) {
              if (q + 1 < n && b[q + 1] === QUOTE) {
                q += 2;
                continue;
              }
              if (q + 1 >= n && !last) break; // need more bytes to know
              closed = true;
              break;
            }
            if (b[q] === LF) this.line++;
            q++;
          }
          if (!closed) {
            if (!last) {
              this.line = recLine;
              return recStart;
            }
            throw new InputError(
              `${this.o.source}, line ${recLine}: a quoted field is never closed (an opening " without its closing "). Close the quote or remove it.`,
            );
          }
          fs[nf] = p + 1;
          fe[nf] = q;
          fq[nf] = true;
          nf++;
          p = q + 1;
          if (p < n && b[p] !== d && b[p] !== LF && b[p] !== CR)
            throw new InputError(
              `${this.o.source}, line ${this.line}: text follows a closing quote. Double any quote inside a quoted field ("").`,
            );
        } else {
          // To the next delimiter, line break or quote: one table lookup per byte.
          let q = p;
          while (q < n && stops[b[q]] === 0) q++;
          if (q < n && b[q] === QUOTE)
            throw new InputError(
              `${this.o.source}, line ${this.line}: a quote sits inside an unquoted field. Quote the whole field and double the quote ("").`,
            );
          fs[nf] = p;
          fe[nf] = q;
          fq[nf] = false;
          nf++;
          p = q;
        }
        if (p >= n) {
          if (!last) {
            this.line = recLine;
            return recStart;
          }
          complete = true;
          break;
        }
        const c = b[p];
        if (c === d) {
          p++;
          continue;
        }
        if (c === CR) {
          if (p + 1 >= n && !last) {
            this.line = recLine;
            return recStart;
          }
          p++;
          if (p < n && b[p] === LF) p++;
        } else p++; // LF
        complete = true;
        break;
      }
      if (!complete) break;
      const blank = nf === 1 && fe[0] === fs[0] && !fq[0];
      if (!blank) this.record(b, nf, recLine);
      this.line = recLine + 1 + (this.line - recLine);
      pos = p;
      if (p >= n) break;
    }
    return n;
  }

  private text(b: Uint8Array, s: number, e: number, quoted: boolean): string {
    const t = this.decoder.decode(b.subarray(s, e));
    return quoted ? t.replace(/""/g, '"') : t;
  }

  private record(b: Uint8Array, nf: number, line: number): void {
    const fs = this.fieldStart,
      fe = this.fieldEnd,
      fq = this.fieldQuoted;
    if (this.header === null) {
      if (nf > READER_LIMITS.columns)
        throw new InputError(
          `${this.o.source}, row 1: the header has ${nf} columns; tallyfit reads at most ${READER_LIMITS.columns}.`,
        );
      const header: string[] = [];
      for (let j = 0; j < nf; j++) header.push(this.text(b, fs[j], fe[j], fq[j]).trim());
      this.header = header;
      checkHeader(header, this.o.source, (m) => new InputError(m));
      this.builders = header.map((h) => {
        const keep = this.o.select === null || this.o.select.has(h);
        const forced = this.o.factors.has(h);
        return {
          name: h,
          keep,
          forced,
          numeric: !forced,
          values: new Float64Array(keep ? 1024 : 0),
          codes: new Int32Array(keep && forced ? 1024 : 0),
          levels: [],
          byHash: new Map(),
          byPacked: new Map(),
          levelBytes: [],
          firstText: null,
        };
      });
      return;
    }
    const hdr = this.header;
    const row = this.nRows + 2;
    if (nf !== hdr.length) {
      const delim = String.fromCharCode(this.o.delimiter);
      // A header that is one field holding another common delimiter: the file uses that one (and, with ';', often
      // decimal commas, which is why the rows split on ',').
      const guess = hdr.length === 1 ? guessDelimiter(hdr[0], delim) : null;
      const hint = guess
        ? ` The header is one field holding ${showDelimiter(guess)}: the file probably uses ${showDelimiter(guess)} between fields; try --delimiter ${guess === "\t" ? "tab" : `'${guess}'`}${guess === ";" ? " (and --decimal-comma if its numbers are written 1,5)" : ""}.`
        : ` Check for an unquoted ${showDelimiter(delim)} inside a value, or a missing field.`;
      throw new InputError(
        `${this.o.source}, row ${row} (line ${line}): ${nf} fields where the header has ${hdr.length}.${hint}`,
      );
    }
    const i = this.nRows;
    if (this.o.keepRecords) {
      const rec: string[] = new Array(nf);
      for (let j = 0; j < nf; j++) rec[j] = this.text(b, fs[j], fe[j], fq[j]);
      this.keptRecords.push(rec);
    }
    for (let j = 0; j < nf; j++) {
      const bd = this.builders[j];
      if (!bd.keep) continue;
      let s = fs[j],
        e = fe[j];
      // Trim spaces and tabs.
      while (s < e && (b[s] === 0x20 || b[s] === 0x09)) s++;
      while (e > s && (b[e - 1] === 0x20 || b[e - 1] === 0x09)) e--;
      const missing = this.isNa(b, s, e);
      if (bd.numeric) {
        if (bd.values.length <= i) bd.values = grow(bd.values, i + 1, this.rowEstimate(fs[0]));
        if (missing) {
          bd.values[i] = NaN;
          continue;
        }
        const v = fq[j]
          ? decimalText(this.text(b, s, e, true).trim(), this.o.decimal ?? 0x2e)
          : decimalBytes(b, s, e, this.o.decimal ?? 0x2e);
        if (!Number.isNaN(v)) {
          bd.values[i] = v;
          continue;
        }
        bd.firstText = { row, value: this.text(b, s, e, fq[j]) };
        this.demote(bd, i);
      }
      if (bd.codes.length <= i) bd.codes = grow(bd.codes, i + 1, this.rowEstimate(fs[0]));
      bd.codes[i] = missing
        ? -1
        : fq[j]
          ? this.codeOfString(bd, this.text(b, s, e, true).trim())
          : this.codeOfBytes(bd, b, s, e);
    }
    this.nRows++;
  }

  /** Rows the whole input will hold, from the bytes per row so far (0: unknown yet); `at` is the current record's offset in the buffer. */
  private rowEstimate(at: number): number {
    const done = this.bufferBase + at;
    if (this.expectedBytes <= 0 || this.nRows < 1000 || done <= 0) return 0;
    return Math.ceil((this.expectedBytes / done) * this.nRows * 1.02) + 1024;
  }

  private isNa(b: Uint8Array, s: number, e: number): boolean {
    const len = e - s;
    // Most fields cannot be a missing-value token: no token has this length, or starts with this byte.
    if (len > 0 && this.naLengths !== -1 && (len > 31 || !(this.naLengths & (1 << len)) || !this.naFirst[b[s]]))
      return false;
    for (const t of this.naBytes) {
      if (t.length !== len) continue;
      let k = 0;
      while (k < len && t[k] === b[s + k]) k++;
      if (k === len) return true;
    }
    return false;
  }

  private codeOfBytes(bd: Builder, b: Uint8Array, s: number, e: number): number {
    if (e - s <= 6) {
      // Short levels (ward codes, sexes, years): the bytes and the length are the key.
      let key = e - s;
      for (let k = s; k < e; k++) key = key * 256 + b[k];
      const code = bd.byPacked.get(key);
      if (code !== undefined) return code;
      const fresh = this.newLevel(bd, b, s, e);
      bd.byPacked.set(key, fresh);
      return fresh;
    }
    let h = 0x811c9dc5;
    for (let k = s; k < e; k++) h = Math.imul(h ^ b[k], 0x01000193);
    const list = bd.byHash.get(h);
    if (list)
      for (const code of list) {
        const lb = bd.levelBytes[code];
        if (lb.length !== e - s) continue;
        let k = 0;
        while (k < lb.length && lb[k] === b[s + k]) k++;
        if (k === lb.length) return code;
      }
    const code = this.newLevel(bd, b, s, e);
    if (list) list.push(code);
    else bd.byHash.set(h, [code]);
    return code;
  }

  private newLevel(bd: Builder, b: Uint8Array, s: number, e: number): number {
    const code = bd.levels.length;
    bd.levels.push(this.decoder.decode(b.subarray(s, e)));
    bd.levelBytes.push(copyBytes(b.subarray(s, e)));
    return code;
  }

  private codeOfString(bd: Builder, t: string): number {
    const bytes = new TextEncoder().encode(t);
    return this.codeOfBytes(bd, bytes, 0, bytes.length);
  }

  private demote(bd: Builder, upto: number): void {
    bd.numeric = false;
    bd.codes = new Int32Array(Math.max(16, bd.values.length));
    for (let i = 0; i < upto; i++) {
      const v = bd.values[i];
      bd.codes[i] = Number.isNaN(v) ? -1 : this.codeOfString(bd, String(v));
    }
  }

  /** The options this reader was made with (a second reader of the same input needs them). */
  get streamOptions(): StreamOptions {
    return this.o;
  }

  /**
   * Append the rows another reader read from the rest of the same input, with
   * the same header (split-read.ts). Level codes are remapped so that levels
   * stay in order of first appearance over the whole input. Returns false,
   * changing nothing, when a column is numeric in one part and a factor in the
   * other, or when this reader holds an unfinished record.
   */
  appendPart(part: Table): boolean {
    if (this.header === null || this.carry?.length) return false;
    for (const bd of this.builders) {
      const c = part.columns.get(bd.name);
      if (bd.keep && (!c || (c.kind === "numeric") !== bd.numeric)) return false;
    }
    const n0 = this.nRows,
      m = part.nRows;
    for (const bd of this.builders) {
      if (!bd.keep) continue;
      const c = part.columns.get(bd.name)!;
      if (c.kind === "numeric") {
        bd.values = grow(bd.values, n0 + m);
        bd.values.set(c.values.subarray(0, m), n0);
        continue;
      }
      const code = Int32Array.from(c.levels, (level) => this.codeOfString(bd, level));
      bd.codes = grow(bd.codes, n0 + m);
      const from = c.codes,
        to = bd.codes;
      for (let i = 0; i < m; i++) {
        const k = from[i];
        to[n0 + i] = k < 0 ? -1 : code[k];
      }
    }
    this.nRows = n0 + m;
    return true;
  }

  finish(): Table {
    if (this.carry?.length) {
      const rest = this.carry;
      this.carry = null;
      this.bytesRead -= rest.length;
      this.feed(rest, true);
    }
    const source = this.o.source;
    if (this.header === null)
      throw new InputError(`${source}: the file is empty; expected a header row and at least one data row.`);
    if (this.nRows === 0) throw new InputError(`${source}: the file has a header row but no data rows.`);
    const n = this.nRows;
    const columns = new Map<string, Column>();
    for (const bd of this.builders) {
      if (!bd.keep) continue;
      // A column sized close to n is kept as a view (no copy at the peak); a much larger one is copied.
      const fit = <T extends Float64Array | Int32Array>(a: T): T =>
        a.length === n ? a : a.length <= n * 1.1 ? (a.subarray(0, n) as T) : (a.slice(0, n) as T);
      if (bd.numeric) columns.set(bd.name, { kind: "numeric", name: bd.name, values: fit(bd.values) });
      else
        columns.set(bd.name, {
          kind: "factor",
          name: bd.name,
          codes: fit(bd.codes),
          levels: bd.levels,
          reason: bd.forced ? { forced: true } : { forced: false, row: bd.firstText!.row, value: bd.firstText!.value },
        });
    }
    return {
      source,
      header: this.header,
      nRows: n,
      columns,
      delimiter: String.fromCharCode(this.o.delimiter),
      ...(this.o.keepRecords ? { records: this.keptRecords } : {}),
    };
  }
}
