// The log offset of a rate model, built the same way for fitting and for
// prediction: log(exposure) plus any column already on the log scale. One
// rule for exposures: never negative, and a positive count needs positive
// exposure (a zero exposure with a zero count carries no information).
import { InputError } from "../errors.js";
import { fileRow } from "../io/table.js";
import { rowArray } from "../math/shared-arrays.js";

/** The rule an exposure breaks in a row with this count (NaN: no count known), or null. */
export function exposureRule(exposure: number, count: number): string | null {
  if (exposure < 0) return "exposure cannot be negative";
  if (exposure === 0 && count > 0) return "a positive count needs positive exposure";
  return null;
}

/** The located error for rows whose exposure breaks the rule (rows: table row indices, the first one shown). */
export function exposureError(
  source: string,
  column: string,
  rows: number[],
  exposure: ArrayLike<number>,
  count: ArrayLike<number>,
  more = "",
): InputError {
  const i = rows[0];
  const e = exposure[i];
  const y = count[i];
  const withCount = Number.isNaN(y) ? "" : ` with a count of ${y}`;
  return new InputError(
    `${source}, row ${fileRow(i)}, column '${column}': exposure ${e}${withCount}; ${exposureRule(e, y)}${more}. Correct the extract or leave those rows out.`,
  );
}

/** offset_k = log(exposure[row_k]) + offset[row_k] over the rows used (rowIndex null: every row). */
export function logOffset(
  n: number,
  rowIndex: Int32Array | null,
  exposure: Float64Array | null,
  offset: Float64Array | null,
): Float64Array {
  const out = rowArray(Float64Array, n);
  if (exposure) for (let k = 0; k < n; k++) out[k] = Math.log(exposure[rowIndex ? rowIndex[k] : k]);
  if (offset) for (let k = 0; k < n; k++) out[k] += offset[rowIndex ? rowIndex[k] : k];
  return out;
}
