// Design for new rows under a saved model: the same columns, levels and
// references as the fit; every row is kept and must be complete.
import { InputError } from "../errors.js";
import type { Column, Table } from "../io/table.js";
import { fileRow } from "../io/table.js";
import type { Formula } from "../formula/formula.js";
import { type ModelFile, zeroPartModel } from "../io/model-file.js";
import { layoutColumns, type DesignColumn, type FactorCoding, type DesignMatrix } from "./design.js";
import { lookupColumn, numericColumn } from "./columns.js";
import { closestName, listNames } from "./naming.js";
import { exposureError, exposureRule, logOffset } from "./offset.js";

export interface PredictionDesign {
  source: string;
  n: number;
  matrix: DesignMatrix;
  columns: DesignColumn[];
  offset: Float64Array;
  exposure: Float64Array | null;
  /** Observed counts (NaN where the row has none or the file has no count column). */
  observed: Float64Array;
  hasResponse: boolean;
  /** File row of each design row, when rows were skipped (null: design row i is file row i + 2). */
  fileRows: Int32Array | null;
  /** Excess-zero families: the zero part's columns for the same rows (null otherwise). */
  zeroPart: { matrix: DesignMatrix; columns: DesignColumn[] } | null;
}

export function specOf(saved: ModelFile): Formula {
  return {
    text: saved.model,
    response: saved.response,
    terms: saved.terms.map((v) => ({ variables: [...v] })),
    intercept: saved.intercept,
  };
}

/** A numeric column of the new rows (the model's factors are read as categorical). */
function numericOrFail(table: Table, c: Column, role: string): Float64Array {
  return numericColumn(table, c, role, "it is categorical");
}

function missingRow(table: Table, col: string, i: number, what: string): InputError {
  return new InputError(`${table.source}, row ${fileRow(i)}, column '${col}': the value is missing; ${what}`);
}

export function buildPredictionDesign(table: Table, saved: ModelFile): PredictionDesign {
  const n = table.nRows;
  const factors = new Map<string, { coding: FactorCoding; codes: Int32Array }>();
  for (const f of saved.factors) {
    const c = lookupColumn(table, f.name, "model");
    const codes = new Int32Array(n);
    const pos = new Map(f.levels.map((l, i) => [l, i]));
    if (c.kind !== "factor")
      throw new InputError(
        `${table.source}: column '${f.name}' should hold the levels ${listNames(f.levels)} but reads as numbers.`,
      );
    const remap = c.levels.map((l) => pos.get(l) ?? -1);
    for (let i = 0; i < n; i++) {
      const code = c.codes[i];
      if (code < 0) throw missingRow(table, f.name, i, "every row needs a value to be predicted.");
      const m = remap[code];
      if (m < 0) {
        const lv = c.levels[code];
        const close = closestName(lv, f.levels);
        throw new InputError(
          `${table.source}, row ${fileRow(i)}, column '${f.name}': level '${lv}' was not in the data the model was fitted on, so it has no coefficient.${close ? ` Did you mean '${close}'?` : ""} The known levels are ${listNames(f.levels, 40)}.`,
        );
      }
      codes[i] = m;
    }
    factors.set(f.name, { coding: { name: f.name, levels: f.levels, reference: f.reference }, codes });
  }
  const numeric = new Map<string, Float64Array>();
  for (const v of saved.numeric) {
    const vals = numericOrFail(table, lookupColumn(table, v, "model"), "model");
    for (let i = 0; i < n; i++)
      if (Number.isNaN(vals[i])) throw missingRow(table, v, i, "every row needs a value to be predicted.");
    numeric.set(v, vals);
  }
  const respCol = table.columns.get(saved.response);
  const observed = new Float64Array(n).fill(NaN);
  if (respCol) {
    const y = numericOrFail(table, respCol, "count");
    for (let i = 0; i < n; i++) {
      const v = y[i];
      if (Number.isNaN(v)) continue;
      if (v < 0 || !Number.isInteger(v))
        throw new InputError(
          `${table.source}, row ${fileRow(i)}, column '${saved.response}': the count is ${v}; counts must be whole numbers ≥ 0.`,
        );
      observed[i] = v;
    }
  }
  let exposure: Float64Array | null = null;
  if (saved.exposure) {
    exposure = numericOrFail(table, lookupColumn(table, saved.exposure, "exposure"), "exposure");
    for (let i = 0; i < n; i++) {
      const e = exposure[i];
      if (Number.isNaN(e)) throw missingRow(table, saved.exposure, i, "the expected count needs the row's exposure.");
      if (exposureRule(e, observed[i]) !== null)
        throw exposureError(table.source, saved.exposure, [i], exposure, observed);
    }
  }
  let offsetColumn: Float64Array | null = null;
  if (saved.offset) {
    offsetColumn = numericOrFail(table, lookupColumn(table, saved.offset, "offset"), "offset");
    for (let i = 0; i < n; i++)
      if (Number.isNaN(offsetColumn[i]))
        throw missingRow(table, saved.offset, i, "the expected count needs the row's offset.");
  }
  const offset = logOffset(n, null, exposure, offsetColumn);
  const spec = specOf(saved);
  const { columns, slots, interceptCol } = layoutColumns(spec, factors, (v) => numeric.get(v)!, n);
  if (columns.length !== saved.coefficients.length || columns.some((c, j) => c.name !== saved.coefficients[j].term))
    throw new InputError(
      `${table.source}: the columns built for the new rows do not match the saved model's terms; the model file may have been edited.`,
    );
  return {
    source: table.source,
    n,
    matrix: { n, p: columns.length, slots, interceptCol },
    columns,
    offset,
    exposure,
    observed,
    hasResponse: !!respCol,
    fileRows: null,
    zeroPart: zeroPartDesign(table, saved),
  };
}

/** The zero part's columns of the new rows, built as the model's are (same checks, same messages). */
function zeroPartDesign(table: Table, saved: ModelFile): PredictionDesign["zeroPart"] {
  const zeroModel = zeroPartModel(saved);
  if (!zeroModel) return null;
  const { matrix, columns } = buildPredictionDesign(table, zeroModel);
  return { matrix, columns };
}

/** A row that cannot be predicted: its file row and why. */
export interface SkippedRow {
  row: number;
  reason: string;
}

/**
 * The rows a model cannot predict (predict --skip-bad-rows): a missing value
 * in a column the model uses (or its date), a level the model was not fitted
 * on, a count that is not a whole number ≥ 0, or an exposure the count
 * cannot have. Everything else is checked, with located errors, when the
 * design is built.
 */
export function unpredictableRows(table: Table, saved: ModelFile): SkippedRow[] {
  const out = new Map<number, string>();
  const mark = (i: number, reason: string) => {
    if (!out.has(i)) out.set(i, reason);
  };
  const n = table.nRows;
  for (const f of saved.factors) {
    const c = table.columns.get(f.name);
    if (c?.kind !== "factor") continue;
    const known = new Set(f.levels);
    for (let i = 0; i < n; i++) {
      const code = c.codes[i];
      if (code < 0) mark(i, `'${f.name}' is missing`);
      else if (!known.has(c.levels[code]))
        mark(i, `'${f.name}' is '${c.levels[code]}', a level the model was not fitted on`);
    }
  }
  const numericValues = (name: string) => {
    const c = table.columns.get(name);
    return c && c.kind === "numeric" ? c.values : null;
  };
  for (const v of [...saved.numeric, ...(saved.offset ? [saved.offset] : [])]) {
    const vals = numericValues(v);
    if (vals) for (let i = 0; i < n; i++) if (Number.isNaN(vals[i])) mark(i, `'${v}' is missing`);
  }
  if (saved.calendar) {
    const c = table.columns.get(saved.calendar.column);
    if (c)
      for (let i = 0; i < n; i++)
        if (c.kind === "factor" ? c.codes[i] < 0 : Number.isNaN(c.values[i]))
          mark(i, `the date '${saved.calendar.column}' is missing`);
  }
  const y = numericValues(saved.response);
  if (y)
    for (let i = 0; i < n; i++)
      if (!Number.isNaN(y[i]) && (y[i] < 0 || !Number.isInteger(y[i])))
        mark(i, `the count is ${y[i]}, not a whole number ≥ 0`);
  if (saved.exposure) {
    const e = numericValues(saved.exposure);
    if (e)
      for (let i = 0; i < n; i++) {
        if (Number.isNaN(e[i])) mark(i, `'${saved.exposure}' is missing`);
        else if (exposureRule(e[i], y ? y[i] : Number.NaN) !== null)
          mark(i, `'${saved.exposure}' is ${e[i]}, which the count cannot have`);
      }
  }
  // The zero part's variables are checked as the count part's are.
  const zeroModel = zeroPartModel(saved);
  if (zeroModel)
    for (const s of unpredictableRows(table, zeroModel)) if (!out.has(s.row - 2)) out.set(s.row - 2, s.reason);
  return [...out.entries()].sort((a, b) => a[0] - b[0]).map(([i, reason]) => ({ row: fileRow(i), reason }));
}
