// Design stage: model terms + typed columns → a row-sparse design matrix with
// treatment (reference-level) coding, an offset, weights and the rows used.
import { rowArray } from "../math/shared-arrays.js";
import { InputError } from "../errors.js";
import type { Column, SourceOrigin, Table } from "../io/table.js";
import { fileRow } from "../io/table.js";
import type { Formula } from "../formula/formula.js";
import { termVariables } from "../formula/formula.js";
import { parseDecimal } from "../io/dialect.js";
import { lookupColumn, numericColumn } from "./columns.js";
import { codeFactor, datesAmong, type FactorCoding } from "./factor-coding.js";
import { exposureError, exposureRule, logOffset } from "./offset.js";
import type { Calendar } from "./calendar.js";
import type { PushDownKey } from "../io/push-down.js";

export interface DesignOptions {
  exposure?: string;
  offset?: string;
  weights?: string;
  /** Reference level per factor. */
  refs?: Record<string, string>;
  /**
   * The order of a factor's levels in tables and pictures (levels not named
   * follow in natural order); the first level with events in that order is the
   * default reference.
   */
  order?: Record<string, string[]>;
  /** Further columns that must be present in a row for it to be used (so several models share rows). */
  complete?: string[];
}

export type { FactorCoding } from "./factor-coding.js";

export type ColumnKind = "intercept" | "numeric" | "indicator" | "slope";

export interface DesignColumn {
  /** Contract name: intercept, x, COL=LEVEL, parts joined by ':'. */
  name: string;
  /** Index of the term in `termLabels`, or −1 for the intercept. */
  term: number;
  kind: ColumnKind;
  /** Factor levels this column stands for (empty for numeric columns). */
  /** The factor levels the column stands for; contrast: against the factor's reference (false: an indicator of the level itself). */
  levels: { factor: string; level: string; contrast: boolean }[];
}

/**
 * One slot per term: in each row a term puts its value into at most one of
 * its columns colStart .. colStart + colCount − 1 (a factor row has one
 * level). `cols` gives that column per row (−1: none, i.e. the reference
 * level); null means the single column colStart in every row. `values` holds
 * the numeric factor of the term (null: the value is 1).
 */
export interface Slot {
  term: number;
  colStart: number;
  colCount: number;
  cols: Int32Array | null;
  values: Float64Array | null;
}

export interface DesignMatrix {
  n: number;
  p: number;
  slots: Slot[];
  /** Index of the intercept column, or −1. */
  interceptCol: number;
}

export interface Design {
  source: string;
  /** The engine the rows came from when not a plain CSV (the JSON's source block). */
  origin?: SourceOrigin;
  model: Formula;
  /** Data rows in the file. */
  nRows: number;
  /** Rows used in the fit. */
  n: number;
  /** Data-row index (0-based) of each row used; file row = index + 2. */
  rowIndex: Int32Array;
  y: Float64Array;
  /** Log offset: log(exposure) plus the offset column, per row used. */
  offset: Float64Array;
  /** Frequency weights (null: every row counts once). */
  weights: Float64Array | null;
  exposure: Float64Array | null;
  exposureName: string | null;
  offsetName: string | null;
  weightsName: string | null;
  matrix: DesignMatrix;
  columns: DesignColumn[];
  termLabels: string[];
  /** Design columns of each term. */
  termColumns: number[][];
  factors: FactorCoding[];
  dropped: { missing: number; zeroExposureZeroCount: number; zeroWeight: number };
  notices: string[];
  /** The calendar terms made from a date column (--date), when there are any. */
  calendar?: Calendar;
  /** Rows merged into patterns inside the engine (push-down): see collapsed.ts. */
  collapsed?: Collapsed;
}

/** Engine-merged patterns standing for the rows (see collapsed.ts). */
export interface Collapsed {
  by: PushDownKey | "per-iteration";
  /** The rows the patterns stand for. */
  rows: number;
  /** Their frequency weights' sum (the rows, without --weights). */
  observations: number;
  /** Each pattern's sum of frequency weights (covariate patterns; count patterns carry it as the design's weights). */
  weights: Float64Array | null;
  /** Per-iteration sums: the numeric columns' means over the rows used (the baseline's reference values). */
  means?: Map<string, number>;
  /** Per-iteration sums: Pearson's chi-square and the log-likelihood of the rows at the estimate. */
  figures?: { pearson: number; logLik: number };
  /** Row-level deviance = the patterns' deviance + this (covariate patterns; 0 for count patterns). */
  devianceShift: number;
  /** Row-level log-likelihood = the patterns' + this (covariate patterns; 0 for count patterns). */
  logLikShift: number;
  /** Σ w·y²/e over each pattern's rows (covariate patterns only). */
  y2e: Float64Array | null;
}

function firstRows(rows: number[]): string {
  const shown = rows.slice(0, 3).join(", ");
  return rows.length > 3 ? `${shown} and ${rows.length - 3} more` : shown;
}

/** " (n rows: 3, 9, 12 and 4 more)" when more than one row has the problem, else "". */
function alsoRows(rows: number[]): string {
  return rows.length > 1 ? ` (${rows.length} rows: ${firstRows(rows)})` : "";
}

/** The largest design (the information matrix is p × p and dense), and the largest count or weight (2^53 ≈ 9e15 holds whole numbers exactly). */
export const DESIGN_LIMITS = { columns: 2_000, count: 1e15 } as const;

/** The notices for rows left out with zero exposure and a zero count, or with weight 0 (none for a count of 0). */
export function leftOutNotices(zeroExposureZeroCount: number, zeroWeight: number): string[] {
  const out: string[] = [];
  const z = zeroExposureZeroCount,
    w = zeroWeight;
  if (z > 0)
    out.push(
      `${z} row${z === 1 ? " has" : "s have"} zero exposure and a zero count; ${z === 1 ? "it carries" : "they carry"} no information and ${z === 1 ? "was" : "were"} left out`,
    );
  if (w > 0) out.push(`${w} row${w === 1 ? " has" : "s have"} weight 0 and ${w === 1 ? "was" : "were"} left out`);
  return out;
}

/** Build the design matrix for a model on a table. */
export function buildDesign(table: Table, model: Formula, options: DesignOptions = {}): Design {
  const get = (name: string, role: string): Column => lookupColumn(table, name, role);
  const response = get(model.response, "count");
  const yAll = numericColumn(table, response, "count");
  const vars = termVariables(model);
  const varCols = vars.map((v) => get(v, "model"));
  const exposureCol = options.exposure ? get(options.exposure, "exposure") : null;
  const offsetCol = options.offset ? get(options.offset, "offset") : null;
  const weightsCol = options.weights ? get(options.weights, "weights") : null;
  const expAll = exposureCol ? numericColumn(table, exposureCol, "exposure") : null;
  const offAll = offsetCol ? numericColumn(table, offsetCol, "offset") : null;
  const wAll = weightsCol ? numericColumn(table, weightsCol, "weights") : null;
  for (const [name] of Object.entries(options.refs ?? {})) {
    const c = lookupColumn(table, name, "--ref");
    if (!vars.includes(name)) throw new InputError(`--ref ${name}=...: '${name}' is not one of the model's terms.`);
    if (c.kind !== "factor")
      throw new InputError(
        `--ref ${name}=...: '${name}' is numeric; a reference level applies to a factor (add --factor ${name} to treat it as one).`,
      );
  }

  for (const name of Object.keys(options.order ?? {})) {
    const c = lookupColumn(table, name, "--order");
    if (!vars.includes(name)) throw new InputError(`--order ${name}=...: '${name}' is not one of the model's terms.`);
    if (c.kind !== "factor")
      throw new InputError(
        `--order ${name}=...: '${name}' is numeric; a level order applies to a factor (add --factor ${name} to treat it as one).`,
      );
  }

  // Rows complete in every column the model uses.
  const N = table.nRows;
  const usable = new Uint8Array(N).fill(1);
  const missingIn = (c: Column) => {
    if (c.kind === "numeric") {
      for (let i = 0; i < N; i++) if (Number.isNaN(c.values[i])) usable[i] = 0;
    } else for (let i = 0; i < N; i++) if (c.codes[i] < 0) usable[i] = 0;
  };
  const extra = (options.complete ?? []).filter((c) => !vars.includes(c)).map((c) => get(c, "model"));
  for (const c of [response, ...varCols, exposureCol, offsetCol, weightsCol, ...extra]) if (c) missingIn(c);
  let missing = 0;
  const missingRows: number[] = [];
  for (let i = 0; i < N; i++)
    if (!usable[i]) {
      missing++;
      if (missingRows.length < 3) missingRows.push(i);
    }
  const hasMissing = (c: Column): boolean => {
    if (c.kind === "numeric") {
      for (let i = 0; i < N; i++) if (Number.isNaN(c.values[i])) return true;
    } else for (let i = 0; i < N; i++) if (c.codes[i] < 0) return true;
    return false;
  };
  const missingCols =
    missing === 0
      ? []
      : [response, ...varCols, exposureCol, offsetCol, weightsCol, ...extra]
          .filter((c): c is Column => !!c && hasMissing(c))
          .map((c) => c.name);

  // Count, exposure and weight checks on complete rows.
  const badCount: number[] = [];
  const badExposure: number[] = [];
  const negWeight: number[] = [];
  const fractionalWeights: number[] = [];
  let zeroExp = 0;
  let zeroW = 0;
  for (let i = 0; i < N; i++) {
    if (!usable[i]) continue;
    const y = yAll[i];
    if (y < 0 || !Number.isInteger(y) || y > DESIGN_LIMITS.count) {
      badCount.push(i);
      continue;
    }
    if (expAll) {
      const e = expAll[i];
      if (exposureRule(e, y) !== null) {
        badExposure.push(i);
        continue;
      }
      if (e === 0) {
        usable[i] = 0;
        zeroExp++;
        continue;
      }
    }
    if (wAll) {
      const w = wAll[i];
      if (w < 0 || w > DESIGN_LIMITS.count) {
        negWeight.push(i);
        continue;
      }
      if (!Number.isInteger(w)) fractionalWeights.push(i);
      if (w === 0) {
        usable[i] = 0;
        zeroW++;
      }
    }
  }
  if (badCount.length > 0) {
    const i = badCount[0];
    throw new InputError(
      `${table.source}, row ${fileRow(i)}, column '${model.response}': the count is ${yAll[i]}; counts must be whole numbers ≥ 0${yAll[i] > DESIGN_LIMITS.count ? ` and at most ${DESIGN_LIMITS.count.toExponential(0)} (beyond that a double holds no exact whole number)` : ""}${alsoRows(badCount.map(fileRow))}.`,
    );
  }
  if (badExposure.length > 0)
    throw exposureError(
      table.source,
      options.exposure!,
      badExposure,
      expAll!,
      yAll,
      alsoRows(badExposure.map(fileRow)),
    );
  if (negWeight.length > 0) {
    const i = negWeight[0];
    throw new InputError(
      `${table.source}, row ${fileRow(i)}, column '${options.weights}': weight ${wAll![i]}; frequency weights cannot be negative or above ${DESIGN_LIMITS.count.toExponential(0)}${alsoRows(negWeight.map(fileRow))}.`,
    );
  }

  let n = 0;
  for (let i = 0; i < N; i++) if (usable[i]) n++;
  const notices: string[] = [];
  if (missing > 0)
    notices.push(
      `${missing} row${missing === 1 ? " has" : "s have"} a missing value in a column the model uses (${[...new Set(missingCols)].join(", ")}; rows ${firstRows(missingRows.map(fileRow))}${missing > 3 ? ", …" : ""}) and ${missing === 1 ? "was" : "were"} left out`,
    );
  notices.push(...leftOutNotices(zeroExp, zeroW));
  if (n === 0) {
    throw new InputError(
      `${table.source}: no rows are left to fit (${N} read; ${missing} with missing values, ${zeroExp} with zero exposure and zero count, ${zeroW} with weight 0).`,
    );
  }
  let anyEvent = false;
  for (let i = 0; i < N && !anyEvent; i++) if (usable[i] && yAll[i] > 0) anyEvent = true;
  if (!anyEvent)
    throw new InputError(
      `${table.source}: the count column '${model.response}' is 0 in every row used (${n} rows); with no events there is no rate to model.`,
    );
  const rowIndex = rowArray(Int32Array, n);
  for (let i = 0, k = 0; i < N; i++) if (usable[i]) rowIndex[k++] = i;
  // When every row is used the table's own columns serve (no stage writes into its inputs).
  const pick = (a: Float64Array) => {
    if (n === N) return a;
    const out = rowArray(Float64Array, n);
    for (let k = 0; k < n; k++) out[k] = a[rowIndex[k]];
    return out;
  };
  const y = pick(yAll);
  const exposure = expAll ? pick(expAll) : null;
  const offset = logOffset(n, rowIndex, expAll, offAll);
  const weights = wAll ? pick(wAll) : null;

  // Factor codings: levels present among used rows, natural order.
  const factors = new Map<string, { coding: FactorCoding; codes: Int32Array }>();
  vars.forEach((v, j) => {
    const c = varCols[j];
    if (c.kind !== "factor") return;
    // Own properties only: a column may be called "constructor" or "__proto__".
    const ref = options.refs && Object.hasOwn(options.refs, v) ? options.refs[v] : undefined;
    const order = options.order && Object.hasOwn(options.order, v) ? options.order[v] : undefined;
    const coded = codeFactor(table, c, rowIndex, ref, order, yAll);
    if (coded.notice) notices.push(coded.notice);
    factors.set(v, coded);
  });

  const { columns, slots, termColumns, interceptCol } = layoutColumns(
    model,
    factors,
    (v) => pick((table.columns.get(v) as { values: Float64Array }).values),
    n,
  );
  const p = columns.length;
  if (p > DESIGN_LIMITS.columns)
    throw new InputError(
      `${table.source}: the model has ${p} coefficients; tallyfit fits at most ${DESIGN_LIMITS.columns} (their information matrix is dense). A factor with that many levels is better aggregated or left out.`,
    );
  if (p === 0)
    throw new InputError("--model: the model has no terms and no intercept; add a term or drop --no-intercept.");
  const nEff = weights ? weights.reduce((a, b) => a + b, 0) : n;
  if (p > nEff) {
    const dates = datesAmong(factors);
    throw new InputError(
      `${table.source}: the model has ${p} coefficients but only ${n} rows are used; a model needs fewer coefficients than rows${dates ? ` ('${dates}' holds dates, read as a factor with one coefficient per date: a date is not a term; to model time, add a numeric column such as the week number)` : ""}. Drop terms or interactions.`,
    );
  }
  if (fractionalWeights.length > 0)
    notices.push(
      `the weights column '${options.weights}' holds fractional values (row ${fileRow(fractionalWeights[0])}: ${wAll![fractionalWeights[0]]}); frequency weights count rows, so the standard errors treat each weight as that many rows`,
    );
  for (const v of vars) {
    const c = table.columns.get(v);
    const f = factors.get(v);
    if (c?.kind === "factor" && f && !c.reason.forced) {
      const numbers = f.coding.levels.filter((l) => !Number.isNaN(parseDecimal(l))).length;
      if (numbers >= f.coding.levels.length / 2)
        notices.push(
          `'${v}' is read as categorical (${f.coding.levels.length} levels) because row ${c.reason.row} holds '${c.reason.value}', which is not a finite decimal number, while most of its values are numbers; fix that value, or give --factor ${v} to make it categorical on purpose`,
        );
    }
  }
  return {
    source: table.source,
    ...(table.origin ? { origin: table.origin } : {}),
    model,
    nRows: N,
    n,
    rowIndex,
    y,
    offset,
    weights,
    exposure,
    exposureName: options.exposure ?? null,
    offsetName: options.offset ?? null,
    weightsName: options.weights ?? null,
    matrix: { n, p, slots, interceptCol },
    columns,
    termLabels: model.terms.map((t) => t.variables.join(":")),
    termColumns,
    factors: [...factors.values()].map((f) => f.coding),
    dropped: { missing, zeroExposureZeroCount: zeroExp, zeroWeight: zeroW },
    notices,
  };
}

/**
 * Terms → columns and slots under treatment coding. For each factor in a term:
 * contrasts (the reference level has no column) when the term without that
 * factor is also in the model (its margin, the intercept counting as the
 * empty term), otherwise an indicator for every level. Shared by fitting and
 * prediction so both lay out columns identically.
 */
export function layoutColumns(
  model: Formula,
  factors: Map<string, { coding: FactorCoding; codes: Int32Array }>,
  numeric: (name: string) => Float64Array,
  n: number,
): { columns: DesignColumn[]; slots: Slot[]; termColumns: number[][]; interceptCol: number } {
  const columns: DesignColumn[] = [];
  const slots: Slot[] = [];
  const termColumns: number[][] = [];
  let interceptCol = -1;
  if (model.intercept) {
    interceptCol = 0;
    columns.push({ name: "intercept", term: -1, kind: "intercept", levels: [] });
    slots.push({ term: -1, colStart: 0, colCount: 1, cols: null, values: null });
  }
  const termKeys = new Set(model.terms.map((t) => [...t.variables].sort().join("\u0000")));
  if (model.intercept) termKeys.add("");
  model.terms.forEach((term, ti) => {
    const parts = term.variables.map((v) => {
      const f = factors.get(v);
      if (!f) return { kind: "numeric" as const, name: v, values: numeric(v) };
      // Contrasts when the term without this factor is in the model (its margin), else full indicators.
      const rest = term.variables
        .filter((u) => u !== v)
        .sort()
        .join("\u0000");
      const contrast = termKeys.has(rest);
      const coded = contrast ? f.coding.levels.filter((l) => l !== f.coding.reference) : f.coding.levels;
      const refIdx = f.coding.levels.indexOf(f.coding.reference);
      const map = f.coding.levels.map((_, li) => (contrast ? (li === refIdx ? -1 : li < refIdx ? li : li - 1) : li));
      return { kind: "factor" as const, name: v, coded, map, codes: f.codes, contrast };
    });
    // Column names: Cartesian product of coded levels, first factor varying slowest.
    const factorParts = parts.filter((p) => p.kind === "factor") as {
      name: string;
      coded: string[];
      map: number[];
      codes: Int32Array;
      contrast: boolean;
    }[];
    const numericParts = parts.filter((p) => p.kind === "numeric") as { name: string; values: Float64Array }[];
    const sizes = factorParts.map((p) => p.coded.length);
    const total = sizes.reduce((a, b) => a * b, 1);
    const base = columns.length;
    const cols: number[] = [];
    for (let c = 0; c < total; c++) {
      let rem = c;
      const idx: number[] = new Array(sizes.length);
      for (let k = sizes.length - 1; k >= 0; k--) {
        idx[k] = rem % sizes[k];
        rem = Math.floor(rem / sizes[k]);
      }
      const levels = factorParts.map((p, k) => ({ factor: p.name, level: p.coded[idx[k]], contrast: p.contrast }));
      const name = parts
        .map((p) => (p.kind === "numeric" ? p.name : `${p.name}=${levels.find((l) => l.factor === p.name)!.level}`))
        .join(":");
      const kind: ColumnKind = factorParts.length === 0 ? "numeric" : numericParts.length === 0 ? "indicator" : "slope";
      columns.push({ name, term: ti, kind, levels });
      cols.push(base + c);
    }
    termColumns.push(cols);
    let values: Float64Array | null = null;
    if (numericParts.length === 1) values = numericParts[0].values;
    else if (numericParts.length > 1) {
      values = rowArray(Float64Array, n);
      for (let k = 0; k < n; k++) {
        let v = 1;
        for (const p of numericParts) v *= p.values[k];
        values[k] = v;
      }
    }
    if (factorParts.length === 0) {
      slots.push({ term: ti, colStart: base, colCount: 1, cols: null, values });
    } else {
      const rowCols = rowArray(Int32Array, n);
      for (let k = 0; k < n; k++) {
        let c = 0;
        let none = false;
        for (let f = 0; f < factorParts.length; f++) {
          const m = factorParts[f].map[factorParts[f].codes[k]];
          if (m < 0) {
            none = true;
            break;
          }
          c = c * sizes[f] + m;
        }
        rowCols[k] = none ? -1 : base + c;
      }
      slots.push({ term: ti, colStart: base, colCount: total, cols: rowCols, values });
    }
  });
  return { columns, slots, termColumns, interceptCol };
}
