// Aggregation inside the engine that holds the rows (push-down). Rows that
// share a covariate pattern are merged by the engine's GROUP BY and only the
// patterns come back:
//  - "covariates" (Poisson, quasi-Poisson): per pattern the sums of count and
//    exposure (w·y, w·e·exp(offset)) and of frequency weights, which leave the
//    likelihood equations unchanged, with four sums that restore the row-level
//    deviance, Pearson chi-square and log-likelihood (Σ w·y²/e, Σ w·y·ln y,
//    Σ w·y·ln e, Σ w·ln y!; see design/collapsed.ts);
//  - "count" (the negative binomial, the check, compare, plots): the count and
//    the exposure join the key, each pattern a frequency-weighted row, exact
//    for every statistic.
// The same query counts each pattern's rows by class (the census: used, left
// out, refused); any refused row (a negative or fractional count, a bad
// exposure, offset or weight, a non-finite number) sends the caller back to
// reading the rows, where the design names the row, column and value.
import type { Engine } from "./engine.js";
import type { Table } from "./table.js";
import { typedTable } from "./typed-columns.js";

export type PushDownKey = "covariates" | "count";

export interface PushDownRequest {
  /** The model's variables other than the count (over every model fitted on the rows). */
  keys: string[];
  response: string;
  exposure?: string;
  offset?: string;
  weights?: string;
  by: PushDownKey;
  /** Columns read as factors whatever their type (--factor). */
  factors: string[];
  /** The most patterns worth bringing back, given the rows used: beyond it the caller reads the rows (or fits by per-iteration sums). */
  maxPatterns: (used: number) => number;
}

/** The rows the census found, as the design reports them. */
export interface Census {
  rows: number;
  missing: number;
  zeroExposureZeroCount: number;
  zeroWeight: number;
  used: number;
}

export type PushDown =
  | { kind: "patterns"; table: Table; census: Census; patterns: number; transferred: number }
  | { kind: "too many patterns"; census: Census; numeric: Map<string, boolean> }
  | { kind: "rows"; reason: string };

/** Names of the columns the engine adds to a pattern table. */
export const PATTERN_COLUMNS = {
  exposure: "tallyfit__exposure",
  weight: "tallyfit__weight",
  rows: "tallyfit__rows",
  y2e: "tallyfit__y2e",
  ylny: "tallyfit__ylny",
  ylne: "tallyfit__ylne",
  lnFactorial: "tallyfit__lnfact",
} as const;

/**
 * The user's rows as every push-down query reads them: the keys, and computed
 * once per row t_y (the count), t_x (exposure·e^offset), t_lnx (its log),
 * t_w (the weight, 1 without --weights) and t_cls, the row's class: 0 used,
 * 1 a missing value, 2 a value the design refuses, 3 zero exposure and a zero
 * count, 4 weight 0 (the design's order of checks).
 */
export function pieces(engine: Engine, r: PushDownRequest, numeric: Map<string, boolean>) {
  const q = engine.quote;
  const d = engine.double;
  const big = d("1.7e308");
  const finite = (x: string) => `(${x} >= -${big} AND ${x} <= ${big})`;
  const whole = (x: string) => `(${x} >= 0 AND ${x} <= ${d("1e15")} AND ${x} = floor(${x}))`;
  const e = r.exposure ? "t_e" : null;
  const o = r.offset ? "t_o" : null;
  const x = e && o ? `(${e} * exp(${o}))` : e ? e : o ? `exp(${o})` : "1.0";
  const lnx = [e ? `(CASE WHEN ${e} > 0 THEN ln(${e}) ELSE 0.0 END)` : null, o].filter(Boolean).join(" + ") || "0.0";
  const cast = [
    ...r.keys.map((k) => `${q(k)} AS ${q(k)}`),
    `${d(q(r.response))} AS t_y`,
    ...(r.exposure ? [`${d(q(r.exposure))} AS t_e`] : []),
    ...(r.offset ? [`${d(q(r.offset))} AS t_o`] : []),
    ...(r.weights ? [`${d(q(r.weights))} AS t_w`] : []),
  ].join(", ");
  const all = [...r.keys.map(q), "t_y", ...(e ? [e] : []), ...(o ? [o] : []), ...(r.weights ? ["t_w"] : [])];
  const missing = all.map((c) => `${c} IS NULL`).join(" OR ");
  const faults = [
    `NOT ${whole("t_y")}`,
    ...(e ? [`NOT (${e} >= 0 AND ${e} <= ${big})`, `(${e} = 0 AND t_y > 0)`] : []),
    ...(o ? [`NOT ${finite(o)}`] : []),
    ...(r.weights ? [`NOT ${whole("t_w")}`] : []),
    ...r.keys.filter((k) => numeric.get(k) && !r.factors.includes(k)).map((k) => `NOT ${finite(q(k))}`),
  ].join(" OR ");
  const cls =
    `CASE WHEN ${missing} THEN 1 WHEN ${faults} THEN 2` +
    (e ? ` WHEN ${e} = 0 THEN 3` : "") +
    (r.weights ? " WHEN t_w = 0 THEN 4" : "") +
    " ELSE 0 END";
  const select = [
    ...r.keys.map(q),
    "t_y",
    `${x} AS t_x`,
    `${lnx} AS t_lnx`,
    r.weights ? "t_w" : "1.0 AS t_w",
    `${cls} AS t_cls`,
  ].join(", ");
  const rows = `(SELECT ${select} FROM (SELECT ${cast} FROM ${engine.from}) AS tallyfit_cast) AS tallyfit_t`;
  return { rows, used: "t_cls = 0" };
}

export async function pushDown(engine: Engine, r: PushDownRequest): Promise<PushDown> {
  const described = await engine.run(`SELECT * FROM ${engine.from} LIMIT 0`);
  const numeric = new Map(described.names.map((n, j) => [n, described.numeric[j]]));
  const needed = [...r.keys, r.response, r.exposure, r.offset, r.weights].filter((c): c is string => !!c);
  const absent = needed.find((c) => !numeric.has(c));
  if (absent !== undefined) return { kind: "rows", reason: `the query has no column '${absent}'` };
  const roles = [r.response, r.exposure, r.offset, r.weights];
  const both = r.keys.find((k) => roles.includes(k));
  if (both !== undefined)
    return { kind: "rows", reason: `'${both}' is both a term and the count, exposure, offset or weights` };
  const numbers = [r.response, r.exposure, r.offset, r.weights].filter((c): c is string => !!c);
  const text = numbers.find((c) => !numeric.get(c) || r.factors.includes(c));
  if (text !== undefined) return { kind: "rows", reason: `'${text}' is not a number column` };
  const s = pieces(engine, r, numeric);
  const P = PATTERN_COLUMNS;
  const q = engine.quote;
  const keyList = r.keys.map(q);
  const exposureName = r.exposure ?? P.exposure;
  // One scan: the rows grouped by pattern, count and class (class 0: used), with four plain sums per row; then
  // per pattern the used rows' sums (the count's logs once per pattern and count) and every class's row count,
  // which make the census. Patterns that hold no used row (a missing key) come back too, for the census.
  const inner = r.by === "covariates" ? [...keyList, "t_y", "t_cls"] : [...keyList, "t_y", "t_x", "t_cls"];
  const used = (x: string) => `SUM(CASE WHEN t_cls = 0 THEN ${x} ELSE 0.0 END)`;
  const classes = [0, 1, 2, 3, 4].map((k) => `SUM(CASE WHEN t_cls = ${k} THEN n ELSE 0 END) AS tallyfit__class${k}`);
  const events = `SUM(CASE WHEN t_cls = 0 AND t_y > 0 THEN n ELSE 0 END) AS tallyfit__events`;
  const byClass =
    `(SELECT ${[...inner, "COUNT(*) AS n", "SUM(t_w) AS sw", "SUM(t_w * t_x) AS sx", "SUM(CASE WHEN t_cls = 0 THEN t_w / t_x ELSE 0.0 END) AS sinv", "SUM(t_w * t_lnx) AS slnx"].join(", ")} ` +
    `FROM ${s.rows} GROUP BY ${inner.join(", ")}) AS tallyfit_c`;
  const outer =
    r.by === "covariates"
      ? [
          ...keyList,
          `${used("t_y * sw")} AS ${q(r.response)}`,
          `${used("sx")} AS ${q(exposureName)}`,
          `${used("sw")} AS ${P.weight}`,
          `${used("t_y * t_y * sinv")} AS ${P.y2e}`,
          `SUM(CASE WHEN t_cls = 0 AND t_y > 0 THEN sw * t_y * ln(t_y) ELSE 0.0 END) AS ${P.ylny}`,
          `${used("t_y * slnx")} AS ${P.ylne}`,
          `${used(`sw * ${engine.lnFactorial("t_y")}`)} AS ${P.lnFactorial}`,
        ]
      : [...keyList, `t_y AS ${q(r.response)}`, `t_x AS ${q(exposureName)}`, `${used("sw")} AS ${P.weight}`];
  const group = r.by === "covariates" ? keyList : [...keyList, "t_y", "t_x"];
  // A numeric term may make nearly every row its own pattern: count the patterns first (one row comes back),
  // and when they are too many to send, take the census alone.
  if (r.by === "covariates" && r.keys.some((k) => numeric.get(k) && !r.factors.includes(k))) {
    const g = await engine.run(
      `SELECT COUNT(*) AS patterns, SUM(n) AS used FROM (SELECT ${[...keyList, "COUNT(*) AS n"].join(", ")} ` +
        `FROM ${s.rows} WHERE ${s.used} GROUP BY ${keyList.join(", ")}) AS tallyfit_g`,
    );
    const [patterns, usedRows] = g.columns.map((c) => Number(c[0] ?? 0));
    if (usedRows > 0 && patterns > Math.floor(r.maxPatterns(usedRows))) {
      const counts = await censusOf(engine, s);
      if (counts[2] > 0) return { kind: "rows", reason: `${counts[2]} rows hold values the design refuses` };
      if (counts[0] === 0 || counts[5] === 0) return { kind: "rows", reason: "no rows with events are left to fit" };
      return { kind: "too many patterns", census: censusFrom(counts), numeric };
    }
  }
  // No more groups than there could be patterns worth sending for all the rows (a table's row count is cheap).
  const all = Number((await engine.run(`SELECT COUNT(*) AS n FROM ${engine.from}`)).columns[0][0]);
  const cap = Math.floor(r.maxPatterns(all));
  const result = await engine.run(
    `SELECT ${[...outer, ...classes, events].join(", ")} FROM ${byClass}` +
      (group.length ? ` GROUP BY ${group.join(", ")}` : "") +
      ` LIMIT ${cap + 1}`,
  );
  const col = (name: string) => result.columns[result.names.indexOf(name)].map((v) => Number(v));
  const byK = [0, 1, 2, 3, 4].map((k) => col(`tallyfit__class${k}`));
  const sum = (xs: number[]) => xs.reduce((a, b) => a + b, 0);
  const complete = result.columns[0].length <= cap;
  const counts = complete ? byK.map(sum) : await censusOf(engine, s);
  const withEvents = complete ? sum(col("tallyfit__events")) : counts[5];
  const [usedRows, , faults] = counts;
  if (faults > 0) return { kind: "rows", reason: `${faults} rows hold values the design refuses` };
  if (usedRows === 0 || withEvents === 0) return { kind: "rows", reason: "no rows with events are left to fit" };
  const census = censusFrom(counts);
  // The patterns: groups with used rows, each with its row count.
  const keep = byK[0].flatMap((n, i) => (n > 0 ? [i] : []));
  const patterns = keep.length;
  if (!complete || patterns > Math.floor(r.maxPatterns(usedRows)))
    return { kind: "too many patterns", census, numeric };
  const names = [...outer.map((_, j) => result.names[j]), P.rows];
  const columns = [...outer.map((_, j) => keep.map((i) => result.columns[j][i])), keep.map((i) => byK[0][i])];
  const numericOut = [...outer.map((_, j) => result.numeric[j]), true];
  // The header names every column of the source, as a CSV's does (the table holds the patterns' columns).
  const table = typedTable(engine.source, described.names, names, numericOut, columns, { factors: r.factors });
  return { kind: "patterns", table, census, patterns, transferred: result.columns[0].length };
}

/** The census from the rows per class (used, missing, refused, zero exposure, zero weight). */
function censusFrom(counts: number[]): Census {
  const [used, missing, faults, zeroExposureZeroCount, zeroWeight] = counts;
  return {
    rows: used + missing + faults + zeroExposureZeroCount + zeroWeight,
    missing,
    zeroExposureZeroCount,
    zeroWeight,
    used,
  };
}

/** The census alone (when the patterns were too many to send): rows per class, and used rows with events. */
async function censusOf(engine: Engine, s: ReturnType<typeof pieces>): Promise<number[]> {
  const c = await engine.run(
    `SELECT t_cls, COUNT(*) AS n, SUM(CASE WHEN t_y > 0 THEN 1 ELSE 0 END) AS events FROM ${s.rows} GROUP BY t_cls`,
  );
  const out = [0, 0, 0, 0, 0, 0];
  c.columns[0].forEach((k, i) => {
    out[Number(k)] += Number(c.columns[1][i]);
    if (Number(k) === 0) out[5] = Number(c.columns[2][i]);
  });
  return out;
}
