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
    ncol = builders.length,
    last = ncol - 1;
  let i = row;
  out.records = 0;
  records: while (i < cap) {
    let p = pos;
    for (let j = 0; j < ncol; j++) {
      const bd = builders[j];
      const s = p;
      while (p < n && stops[b[p]] === 0) p++;
      if (p >= n) break records;
      // The field must end at the delimiter, or after the last field at LF or CR LF.
      const c = b[p];
      if (j === last ? !(c === LF || (c === CR && p + 1 < n && b[p + 1] === LF)) : c !== d) break records;
      if (bd.keep) {
        const len = p - s;
        // Not empty, and not possibly a missing-value token (by its length and first byte).
        if (len === 0 || !(naLengths !== -1 && (len > 31 || !(naLengths & (1 << len)) || !naFirst[b[s]])))
          break records;
        if (bd.numeric) {
          // Read as the general path reads it; a padded field is no number here and goes there to be trimmed.
          if (!decimalBytesInto(b, s, p, mark, bd.values, i)) break records;
        } else {
          if (b[s] === 0x20 || b[s] === 0x09 || b[p - 1] === 0x20 || b[p - 1] === 0x09) break records;
          bd.codes[i] = codeOfBytes(bd.index, b, s, p);
        }
      }
      // Past the delimiter, LF, or CR LF.
      p += c === CR ? 2 : 1;
    }
    pos = p;
    i++;
  }
  out.at = pos;
  out.records = i - row;
}
