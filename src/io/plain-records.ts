// The reader's fast path for plain records: no quote, no padding, no missing
// value, a number in every numeric column, exactly the header's fields, each
// record ending in LF or CR LF. A plain record is read field by field straight
// into the columns: a number parsed, a level looked up, as soon as the field's
// end is found, with no list of field bounds in between. The first record that
// is not plain, that would need a column to grow, or that the buffer does not
// hold whole, ends the pass; the general path of tokenizer.ts reads it (with
// its messages), then this path takes over again. A plain record gives the same values, codes
// and counts on either path (test/io/plain-records.test.ts).
import type { ColumnBuilder } from "./column-builder.js";
import { decimalBytesInto } from "./dialect.js";
import { codeOfBytes } from "./level-index.js";

const LF = 0x0a,
  CR = 0x0d;

/** What the pass needs of the reader, fixed for a file. */
export interface PlainDialect {
  delimiter: number;
  /** The decimal mark. */
  mark: number;
  /** 1 at the bytes that end an unquoted field: the delimiter, CR, LF, the quote. */
  stops: Uint8Array;
  /** Bit k set: some missing-value token has k bytes (−1: one is longer than 31). */
  naLengths: number;
  /** 1 at the first bytes of missing-value tokens. */
  naFirst: Uint8Array;
}

/** Where a pass stopped, and how many records it read. */
export interface PlainPass {
  at: number;
  records: number;
}

/**
 * Read plain records of b from `pos` into the builders' arrays at rows
 * `row`, `row` + 1, …, below `cap` (the rows every kept column has room for).
 * Sets out.at to the offset of the first record not read, and out.records to
 * the count read.
 */
export function plainRecords(
  dialect: PlainDialect,
  builders: ColumnBuilder[],
  b: Uint8Array,
  pos: number,
  row: number,
  cap: number,
  out: PlainPass,
): void {
  const { delimiter: d, mark, stops, naLengths, naFirst } = dialect;
  const n = b.length,
    ncol = builders.length;
  let i = row;
  out.records = 0;
  records: while (i < cap) {
    let p = pos;
    for (let j = 0; j < ncol; j++) {
      const bd = builders[j];
      const s = p;
      // The byte that must end this field: the delimiter, or the line's end after the last field.
      const lastField = j === ncol - 1;
      if (!bd.keep) {
        // Read and checked for its end only, as on the general path.
        while (p < n && stops[b[p]] === 0) p++;
        if (p >= n || !plainEnd(b, p, lastField, d)) break records;
      } else if (bd.numeric) {
        // A number as the general path reads it (padding, an exponent, … go to decimalText, and fail or not as there).
        while (p < n && stops[b[p]] === 0) p++;
        const len = p - s;
        if (p >= n || len === 0 || !plainEnd(b, p, lastField, d)) break records;
        if (!(naLengths !== -1 && (len > 31 || !(naLengths & (1 << len)) || !naFirst[b[s]]))) break records;
        if (!decimalBytesInto(b, s, p, mark, bd.values, i)) break records;
      } else {
        while (p < n && stops[b[p]] === 0) p++;
        const len = p - s;
        if (p >= n || len === 0 || !plainEnd(b, p, lastField, d)) break records;
        if (b[s] === 0x20 || b[s] === 0x09 || b[p - 1] === 0x20 || b[p - 1] === 0x09) break records;
        if (!(naLengths !== -1 && (len > 31 || !(naLengths & (1 << len)) || !naFirst[b[s]]))) break records;
        bd.codes[i] = codeOfBytes(bd.index, b, s, p);
      }
      // Past the delimiter; after the last field, past LF or CR LF.
      p += lastField && b[p] === CR ? 2 : 1;
    }
    pos = p;
    i++;
  }
  out.at = pos;
  out.records = i - row;
}

/** Whether byte p of b ends a field as a plain record's field ends: the delimiter, or after the last field LF or CR LF. */
function plainEnd(b: Uint8Array, p: number, lastField: boolean, d: number): boolean {
  const c = b[p];
  if (!lastField) return c === d;
  return c === LF || (c === CR && p + 1 < b.length && b[p + 1] === LF);
}

/** Whether bytes [s, e) are not empty and start and end with a printable ASCII byte, so that trim() leaves their text as it is. */
export function bareEdges(b: Uint8Array, s: number, e: number): boolean {
  return e > s && b[s] > 0x20 && b[s] < 0x7f && b[e - 1] > 0x20 && b[e - 1] < 0x7f;
}
