// Grouping rows by pattern without hashing, when the keys are few: each
// numeric key column is coded by its distinct values (a Map, given up past
// MAX_DISTINCT values), the codes and the factors' mixed-radix key combine
// into one integer below MAX_CELLS, and an array indexed by that integer
// numbers the patterns in the order of their first row. One pass over the
// rows with an array lookup each, against mergePatterns' hashing and
// partitioning (patterns.ts), which remains the path for keys with many values.

/** Most distinct values coded per numeric key column. */
const MAX_DISTINCT = 1 << 16;
/** Largest combined key (an Int32Array of this many entries: 32 MB). */
const MAX_CELLS = 1 << 23;

export type DenseGrouping =
  | { pattern: Int32Array; reps: Int32Array; count: number }
  /** More patterns than allowed. */
  | "too many"
  /** The keys have too many values for an array: hash instead. */
  | null;

/**
 * Distinct values of a column coded 0, 1, … in order of appearance, or null
 * past MAX_DISTINCT: an open-addressing table over the values' bits (murmur3's
 * finaliser on the two 32-bit words), with −0 read as 0 and every NaN as one
 * value, as a Map would have them.
 */
function codeValues(values: Float64Array, n: number): { codes: Int32Array; distinct: number } | null {
  const size = 4 * MAX_DISTINCT;
  const slotCode = new Int32Array(size).fill(-1);
  const slotLo = new Int32Array(size),
    slotHi = new Int32Array(size);
  const codes = new Int32Array(n);
  const bits = new Float64Array(1),
    words = new Int32Array(bits.buffer);
  let distinct = 0;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    bits[0] = v === 0 ? 0 : Number.isNaN(v) ? Number.NaN : v;
    const lo = words[0],
      hi = words[1];
    let h = Math.imul(lo ^ Math.imul(hi, 0x9e3779b1), 0x85ebca6b);
    h ^= h >>> 13;
    h = Math.imul(h, 0xc2b2ae35);
    h ^= h >>> 16;
    let slot = h & (size - 1);
    for (;;) {
      const c = slotCode[slot];
      if (c < 0) {
        if (distinct >= MAX_DISTINCT) return null;
        slotCode[slot] = distinct;
        slotLo[slot] = lo;
        slotHi[slot] = hi;
        codes[i] = distinct++;
        break;
      }
      if (slotLo[slot] === lo && slotHi[slot] === hi) {
        codes[i] = c;
        break;
      }
      slot = (slot + 1) & (size - 1);
    }
  }
  return { codes, distinct };
}

/**
 * Rows grouped by the factor key (mixed-radix integers below `factorRadix`,
 * or null) and the numeric key columns, or null when the combined key would
 * not fit an array. Values compare as a Map compares them (SameValueZero:
 * 0 and −0 are one value, as === has them in the hashing path).
 */
export function denseGrouping(
  n: number,
  factorKey: Float64Array | null,
  factorRadix: number,
  numeric: Float64Array[],
  maxPatterns: number,
): DenseGrouping {
  let radix = factorKey ? factorRadix : 1;
  if (radix > MAX_CELLS) return null;
  const coded: { codes: Int32Array; distinct: number }[] = [];
  for (const col of numeric) {
    const c = codeValues(col, n);
    if (c === null || radix * c.distinct > MAX_CELLS) return null;
    radix *= c.distinct;
    coded.push(c);
  }
  const table = new Int32Array(radix).fill(-1);
  const pattern = new Int32Array(n);
  const reps: number[] = [];
  for (let i = 0; i < n; i++) {
    let key = 0;
    for (let m = coded.length - 1; m >= 0; m--) key = key * coded[m].distinct + coded[m].codes[i];
    if (factorKey) key = key * factorRadix + factorKey[i];
    let id = table[key];
    if (id < 0) {
      if (reps.length >= maxPatterns) return "too many";
      id = reps.length;
      table[key] = id;
      reps.push(i);
    }
    pattern[i] = id;
  }
  return { pattern, reps: Int32Array.from(reps), count: reps.length };
}
