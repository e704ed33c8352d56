// One column of a CSV file as the reader builds it (tokenizer.ts,
// plain-records.ts): numeric until a present value is not a number, then a
// factor whose levels the index holds.
import { rowArray } from "../math/shared-arrays.js";
import type { LevelIndex } from "./level-index.js";

export interface ColumnBuilder {
  name: string;
  /** Stored (in the selection); a column not kept is read and checked only. */
  keep: boolean;
  /** A factor because --factor names it. */
  forced: boolean;
  numeric: boolean;
  values: Float64Array;
  codes: Int32Array;
  /** The levels met so far, when the column is (or turns into) a factor. */
  index: LevelIndex;
  firstText: { row: number; value: string } | null;
}

/**
 * A column array with room for `need` rows: the array itself when it has, else
 * a copy at `estimate` rows (the rows the input is expected to hold) or at
 * twice its length; in shared memory from SHARED_MIN_ROWS rows.
 */
export function growColumn<T extends Float64Array | Int32Array>(a: T, need: number, estimate = 0): T {
  if (need <= a.length) return a;
  const size = estimate >= need ? estimate : Math.max(need, a.length * 2);
  const next = rowArray(a.constructor as Parameters<typeof rowArray<T>>[0], size);
  next.set(a);
  return next;
}
