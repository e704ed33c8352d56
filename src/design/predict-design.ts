// Design for new rows under a saved model: the same columns, levels and
// references as the fit; every row is kept and must be complete.
import { InputError } from "../errors.js";
import type { Column, Table } from "../io/table.js";
import { fileRow } from "../io/table.js";
import type { Formula } from "../formula/formula.js";
import type { ModelFile } from "../io/model-file.js";
import { layoutColumns, type DesignColumn, type FactorCoding, type DesignMatrix } from "./design.js";
import { closestName, listNames } from "./naming.js";

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
}

export function specOf(saved: ModelFile): Formula {
  return {
    text: saved.model,
    response: saved.response,
    terms: saved.terms.map((v) => ({ variables: [...v] })),
    intercept: saved.intercept,
  };
}

function need(table: Table, name: string, role: string): Column {
  const c = table.columns.get(name);
  if (!c) {
    const close = closestName(name, table.header);
    throw new InputError(
      `${table.source}: the ${role} column '${name}' that the model uses is not in the file.${close ? ` Did you mean '${close}'?` : ""} The columns are ${listNames(table.header)}.`,
    );
  }
  return c;
}

function numericOrFail(table: Table, c: Column, role: string): Float64Array {
  if (c.kind === "numeric") return c.values;
  const why = c.reason.forced
    ? "it is categorical"
    : `row ${c.reason.row} holds '${c.reason.value}', which is not a finite number`;
  throw new InputError(`${table.source}: the ${role} column '${c.name}' must be numeric, but ${why}.`);
}

function missingRow(table: Table, col: string, i: number, what: string): InputError {
  return new InputError(`${table.source}, row ${fileRow(i)}, column '${col}': the value is missing; ${what}`);
}

export function buildPredictionDesign(table: Table, saved: ModelFile): PredictionDesign {
  const n = table.nRows;
  const factors = new Map<string, { coding: FactorCoding; codes: Int32Array }>();
  for (const f of saved.factors) {
    const c = need(table, f.name, "model");
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
    const vals = numericOrFail(table, need(table, v, "model"), "model");
    for (let i = 0; i < n; i++)
      if (Number.isNaN(vals[i])) throw missingRow(table, v, i, "every row needs a value to be predicted.");
    numeric.set(v, vals);
  }
  const offset = new Float64Array(n);
  let exposure: Float64Array | null = null;
  if (saved.exposure) {
    exposure = numericOrFail(table, need(table, saved.exposure, "exposure"), "exposure");
    for (let i = 0; i < n; i++) {
      const e = exposure[i];
      if (Number.isNaN(e)) throw missingRow(table, saved.exposure, i, "the expected count needs the row's exposure.");
      if (e < 0)
        throw new InputError(
          `${table.source}, row ${fileRow(i)}, column '${saved.exposure}': exposure ${e} is negative.`,
        );
      offset[i] = Math.log(e);
    }
  }
  if (saved.offset) {
    const off = numericOrFail(table, need(table, saved.offset, "offset"), "offset");
    for (let i = 0; i < n; i++) {
      if (Number.isNaN(off[i])) throw missingRow(table, saved.offset, i, "the expected count needs the row's offset.");
      offset[i] += off[i];
    }
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
  };
}
