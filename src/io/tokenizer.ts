// A byte-level RFC 4180 reader that builds typed columns as it goes, chunk by
// chunk, without creating a string per field: numbers are parsed from the
// bytes (exactly: digits/10^k is correctly rounded while both fit in 2^53,
// otherwise the field falls back to Number()), factor levels are looked up by
// a hash of their bytes. csv-parse remains the reference implementation in the
// tests (test/io-tokenizer.test.ts compares the two on awkward files).
import { InputError } from "../errors.js";
import { isShared } from "../math/shared-arrays.js";
import { checkHeader, type Column, type Table } from "./table.js";
import { checkTextBytes } from "./source-bytes.js";
import { checkTextKind, READER_LIMITS } from "./text-kind.js";
import { type ColumnBuilder, growColumn } from "./column-builder.js";
import { codeOfBytes, codeOfString, emptyLevelIndex } from "./level-index.js";
import { type PlainDialect, type PlainPass, plainRecords } from "./plain-records.js";
import { decimalBytesInto, decimalText, guessDelimiter, showDelimiter } from "./dialect.js";

const QUOTE = 0x22,
  LF = 0x0a,
  CR = 0x0d;

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

/** Whether bytes [s, e) are not empty and start and end with a printable ASCII byte, so that trim() leaves their text as it is. */
function bareEdges(b: Uint8Array, s: number, e: number): boolean {
  return e > s && b[s] > 0x20 && b[s] < 0x7f && b[e - 1] > 0x20 && b[e - 1] < 0x7f;
}

/** Incremental reader: feed() chunks of bytes, then finish(). */
export class ColumnReader {
  private header: string[] | null = null;
  private builders: ColumnBuilder[] = [];
  private nRows = 0;
  private line = 1;
  private carry: Uint8Array | null = null;
  private joined = new Uint8Array(0);
  private naBytes: Uint8Array[];
  /** Bit k set: some missing-value token has k bytes (−1: one is longer than 31). */
  private naLengths = 0;
  private naFirst = new Uint8Array(256);
  private fieldStart = new Int32Array(64);
  /** 1 at the bytes that end an unquoted field's text: the delimiter, CR, LF and the quote. */
  private readonly stops = new Uint8Array(256);
  private fieldEnd = new Int32Array(64);
  /** 1: the field was quoted; 2: quoted, with a doubled quote in it. */
  private fieldQuoted = new Uint8Array(64);
  private decoder = new TextDecoder("utf-8");
  /** Bytes at the start of the carried tail already checked as UTF-8. */
  private validated = 0;
  bytesRead = 0;
  /** The data rows' fields as text, when keepRecords is set. */
  private readonly keptRecords: string[][] = [];
  /** The input's size in bytes when known (a file): columns are then sized from the rows seen so far, not by doubling. */
  expectedBytes = 0;
  /** Told of the column arrays in shared memory made for one record (all columns grow at the same row): prefault.ts. */
  onColumnArrays: ((arrays: (Float64Array | Int32Array)[]) => void) | null = null;
  private fresh: (Float64Array | Int32Array)[] = [];
  /** The fast path's view of the dialect; null when records are kept as text (the fast path makes none). */
  private readonly plain: PlainDialect | null;
  private readonly plainOut: PlainPass = { at: 0, records: 0 };
  /** Rows every kept column has room for, as of the last look. */
  private plainCap = 0;
  private plainMisses = 0;
  private plainSkip = 0;
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
    this.plain = o.keepRecords
      ? null
      : {
          delimiter: o.delimiter,
          mark: o.decimal ?? 0x2e,
          stops: this.stops,
          naLengths: this.naLengths,
          naFirst: this.naFirst,
        };
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
      // The carried tail and the chunk side by side in one buffer kept for the next chunk: a fresh buffer per
      // chunk costs its pages' first touch, slow on virtual machines (DEVELOPERS.md, "Speed and memory").
      const need = this.carry.length + chunk.length;
      if (this.joined.length < need) this.joined = new Uint8Array(need + (1 << 16));
      buf = this.joined.subarray(0, need);
      buf.set(this.carry);
      buf.set(chunk, this.carry.length);
    } else
      buf =
        Object.getPrototypeOf(chunk) === Uint8Array.prototype
          ? chunk
          : new Uint8Array(chunk.buffer, chunk.byteOffset, chunk.length);
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
    checkTextBytes(buf, this.validated, upto, { source: this.o.source, line: this.line, offset: this.bufferBase });
    const consumed = this.records(buf, last);
    if (buf.length - consumed > READER_LIMITS.lineBytes)
      throw new InputError(
        `${this.o.source}, line ${this.line}: a line longer than ${READER_LIMITS.lineBytes / 1e6} MB, so the file is probably not CSV text (or a quote is never closed).`,
      );
    this.validated = Math.max(0, upto - consumed);
    // Copies, never views: the caller may refill its buffer.
    this.carry = consumed < buf.length ? new Uint8Array(buf.subarray(consumed)) : null;
  }

  /** Tokenize records in buf; returns the offset after the last complete record. */
  private records(b: Uint8Array, last: boolean): number {
    const d = this.o.delimiter;
    const n = b.length;
    let pos = 0;
    let fs = this.fieldStart,
      fe = this.fieldEnd,
      fq = this.fieldQuoted;
    const stops = this.stops;
    while (pos < n) {
      if (this.plain && this.header !== null && this.plainSkip-- <= 0) {
        pos = this.plainPass(b, pos);
        if (pos >= n) break;
      }
      const recStart = pos;
      const recLine = this.line;
      let nf = 0;
      let p = pos;
      let complete = false;
      for (;;) {
        // One field.
        if (nf === fs.length) {
          this.moreFields();
          fs = this.fieldStart;
          fe = this.fieldEnd;
          fq = this.fieldQuoted;
        }
        if (p < n && b[p] === QUOTE) {
          let q = p + 1;
          let closed = false,
            doubled = false;
          while (q < n) {
            if (b[q] === QUOTE) {
              if (q + 1 < n && b[q + 1] === QUOTE) {
                doubled = true;
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
          fq[nf] = doubled ? 2 : 1;
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
          fq[nf] = 0;
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

  /**
   * Plain records from pos on the fast path (plain-records.ts); returns where
   * it stopped. After a pass that read nothing, the general path reads the
   * next 1, 2, 4, … up to 1024 records before the fast path tries again, so a
   * file of records that are seldom plain costs little more than before.
   */
  private plainPass(b: Uint8Array, pos: number): number {
    if (this.nRows >= this.plainCap) {
      let cap = Infinity;
      for (const bd of this.builders) if (bd.keep) cap = Math.min(cap, bd.numeric ? bd.values.length : bd.codes.length);
      this.plainCap = cap;
    }
    const pass = this.plainOut;
    plainRecords(this.plain!, this.builders, b, pos, this.nRows, this.plainCap, pass);
    this.nRows += pass.records;
    this.line += pass.records;
    this.plainMisses = pass.records > 0 ? 0 : Math.min(this.plainMisses * 2 + 1, 1024);
    this.plainSkip = this.plainMisses;
    return pass.at;
  }

  /** Room for twice as many fields in a record. */
  private moreFields(): void {
    const n = this.fieldStart.length * 2;
    const fs = new Int32Array(n),
      fe = new Int32Array(n),
      fq = new Uint8Array(n);
    fs.set(this.fieldStart);
    fe.set(this.fieldEnd);
    fq.set(this.fieldQuoted);
    this.fieldStart = fs;
    this.fieldEnd = fe;
    this.fieldQuoted = fq;
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
      for (let j = 0; j < nf; j++) header.push(this.text(b, fs[j], fe[j], fq[j] !== 0).trim());
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
          index: emptyLevelIndex(),
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
      for (let j = 0; j < nf; j++) rec[j] = this.text(b, fs[j], fe[j], fq[j] !== 0);
      this.keptRecords.push(rec);
    }
    const builders = this.builders,
      naLengths = this.naLengths,
      mark = this.o.decimal ?? 0x2e;
    for (let j = 0; j < nf; j++) {
      const bd = builders[j];
      if (!bd.keep) continue;
      let s = fs[j],
        e = fe[j];
      // Trim spaces and tabs.
      while (s < e && (b[s] === 0x20 || b[s] === 0x09)) s++;
      while (e > s && (b[e - 1] === 0x20 || b[e - 1] === 0x09)) e--;
      // Most fields cannot be a missing-value token: no token has this length, or starts with this byte.
      const len = e - s;
      const missing =
        len > 0 && naLengths !== -1 && (len > 31 || !(naLengths & (1 << len)) || !this.naFirst[b[s]])
          ? false
          : this.isNa(b, s, e);
      // A quoted field's text is decoded only when it holds a doubled quote or starts or ends with white space that
      // trim() removes; otherwise its bytes are those the text would encode to, and are read as an unquoted field's.
      const viaText = fq[j] === 2 || (fq[j] === 1 && !bareEdges(b, s, e));
      if (bd.numeric) {
        if (bd.values.length <= i) bd.values = this.grown(bd.values, i + 1, fs[0]);
        if (missing) {
          bd.values[i] = NaN;
          continue;
        }
        if (viaText) {
          const v = decimalText(this.text(b, s, e, true).trim(), this.o.decimal ?? 0x2e);
          if (!Number.isNaN(v)) {
            bd.values[i] = v;
            continue;
          }
        } else if (decimalBytesInto(b, s, e, mark, bd.values, i)) continue;
        bd.firstText = { row, value: this.text(b, s, e, fq[j] !== 0) };
        this.demote(bd, i);
      }
      if (bd.codes.length <= i) bd.codes = this.grown(bd.codes, i + 1, fs[0]);
      bd.codes[i] = missing
        ? -1
        : viaText
          ? codeOfString(bd.index, this.text(b, s, e, true).trim())
          : codeOfBytes(bd.index, b, s, e);
    }
    this.nRows++;
    if (this.fresh.length > 0) {
      this.onColumnArrays!(this.fresh);
      this.fresh = [];
    }
  }

  /** A column array grown to hold row need − 1, sized from the rows expected; `at` is the current record's offset. */
  private grown<T extends Float64Array | Int32Array>(a: T, need: number, at: number): T {
    const next = growColumn(a, need, this.rowEstimate(at));
    if (this.onColumnArrays && isShared(next)) this.fresh.push(next);
    return next;
  }

  /** Rows the whole input will hold, from the bytes per row so far (0: unknown yet); `at` is the current record's offset in the buffer. */
  private rowEstimate(at: number): number {
    const done = this.bufferBase + at;
    if (this.expectedBytes <= 0 || this.nRows < 1000 || done <= 0) return 0;
    return Math.ceil((this.expectedBytes / done) * this.nRows * 1.02) + 1024;
  }

  /** Whether bytes [s, e) are a missing-value token (record() first rules most fields out by length and first byte). */
  private isNa(b: Uint8Array, s: number, e: number): boolean {
    const len = e - s;
    for (const t of this.naBytes) {
      if (t.length !== len) continue;
      let k = 0;
      while (k < len && t[k] === b[s + k]) k++;
      if (k === len) return true;
    }
    return false;
  }

  private demote(bd: ColumnBuilder, upto: number): void {
    bd.numeric = false;
    bd.codes = new Int32Array(Math.max(16, bd.values.length));
    for (let i = 0; i < upto; i++) {
      const v = bd.values[i];
      bd.codes[i] = Number.isNaN(v) ? -1 : codeOfString(bd.index, String(v));
    }
  }

  finish(): Table {
    if (this.carry?.length) {
      const rest = this.carry;
      this.carry = null;
      this.bytesRead -= rest.length;
      this.feed(rest, true);
    }
    this.joined = new Uint8Array(0);
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
          levels: bd.index.levels,
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
