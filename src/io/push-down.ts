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
// A census query first counts the rows the design would leave out or refuse;
// any refused row (a negative or fractional count, a bad exposure, offset or
// weight, a non-finite number) sends the caller back to reading the rows,
// where the design names the row, column and value.
import { InputError } from "../errors.js";
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
  | { kind: "patterns"; table: Table; census: Census; patterns: number }
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

/** The SQL pieces over the inner select: t_y, t_x (exposure·e^offset), t_lnx, t_w and the keys. */
export function pieces(engine: Engine, r: PushDownRequest, numeric: Map<string, boolean>) {
  const q = engine.quote;
  const d = engine.double;
  const big = d("1.7e308");
  const finite = (x: string) => `(${x} >= -${big} AND ${x} <= ${big})`;
  const whole = (x: string) => `(${x} >= 0 AND ${x} <= ${d("1e15")} AND ${x} = floor(${x}))`;
  const e = r.exposure ? `t_e` : null;
  const o = r.offset ? `t_o` : null;
  const x = e && o ? `(${e} * exp(${o}))` : e ? e : o ? `exp(${o})` : "1.0";
  const lnx = [e ? `(CASE WHEN ${e} > 0 THEN ln(${e}) ELSE 0.0 END)` : null, o].filter(Boolean).join(" + ") || "0.0";
  const w = r.weights ? "t_w" : "1.0";
  const inner = [
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
  const zeroExposure = e ? `(${e} = 0)` : "(1 = 0)";
  const zeroWeight = r.weights ? `(t_w = 0)` : "(1 = 0)";
  const used = `NOT (${missing}) AND NOT (${faults}) AND NOT ${zeroExposure} AND NOT ${zeroWeight}`;
  return { inner, x, lnx, w, missing, faults, zeroExposure, zeroWeight, used };
}

/** 1 when a condition holds, summed. */
function countWhere(cond: string): string {
  return `SUM(CASE WHEN ${cond} THEN 1 ELSE 0 END)`;
}

/** The user's rows as the inner select of every push-down query (count, exposure, offset and weights as doubles). */
export function innerRows(engine: Engine, s: ReturnType<typeof pieces>): string {
  return `(SELECT ${s.inner} FROM ${engine.from}) AS tallyfit_t`;
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
  const t = innerRows(engine, s);
  const c = await engine.run(
    `SELECT COUNT(*) AS n, ${countWhere(s.missing)} AS missing, ` +
      `${countWhere(`NOT (${s.missing}) AND (${s.faults})`)} AS faults, ` +
      `${countWhere(`NOT (${s.missing}) AND NOT (${s.faults}) AND ${s.zeroExposure}`)} AS zero_exposure, ` +
      `${countWhere(`NOT (${s.missing}) AND NOT (${s.faults}) AND NOT ${s.zeroExposure} AND ${s.zeroWeight}`)} AS zero_weight, ` +
      `${countWhere(`${s.used} AND t_y > 0`)} AS with_events FROM ${t}`,
  );
  const [rows, missing, faults, zeroExposure, zeroWeight, withEvents] = c.columns.map((col) => Number(col[0] ?? 0));
  if (faults > 0) return { kind: "rows", reason: `${faults} rows hold values the design refuses` };
  const used = rows - missing - zeroExposure - zeroWeight;
  if (used === 0 || withEvents === 0) return { kind: "rows", reason: "no rows with events are left to fit" };
  const census: Census = { rows, missing, zeroExposureZeroCount: zeroExposure, zeroWeight, used };
  const limit = Math.floor(r.maxPatterns(used));
  const P = PATTERN_COLUMNS;
  const q = engine.quote;
  const keyList = r.keys.map(q);
  const exposureName = r.exposure ?? P.exposure;
  const select =
    r.by === "covariates"
      ? [
          ...keyList,
          `SUM(${s.w} * t_y) AS ${q(r.response)}`,
          `SUM(${s.w} * ${s.x}) AS ${q(exposureName)}`,
          `COUNT(*) AS ${P.rows}`,
          `SUM(${s.w}) AS ${P.weight}`,
          `SUM(CASE WHEN ${s.x} > 0 THEN ${s.w} * t_y * t_y / ${s.x} ELSE 0.0 END) AS ${P.y2e}`,
          `SUM(CASE WHEN t_y > 0 THEN ${s.w} * t_y * ln(t_y) ELSE 0.0 END) AS ${P.ylny}`,
          `SUM(${s.w} * t_y * ${s.lnx}) AS ${P.ylne}`,
          `SUM(${s.w} * ${engine.lnFactorial("t_y")}) AS ${P.lnFactorial}`,
        ]
      : [
          ...keyList,
          `t_y AS ${q(r.response)}`,
          `${s.x} AS ${q(exposureName)}`,
          `SUM(${s.w}) AS ${P.weight}`,
          `COUNT(*) AS ${P.rows}`,
        ];
  const group = r.by === "covariates" ? keyList : [...keyList, "t_y", s.x];
  const result = await engine.run(
    `SELECT ${select.join(", ")} FROM ${t} WHERE ${s.used}` +
      (group.length ? ` GROUP BY ${group.join(", ")}` : "") +
      ` LIMIT ${limit + 1}`,
  );
  const patterns = result.columns[0]?.length ?? 0;
  if (patterns > limit) return { kind: "too many patterns", census, numeric };
  const table = typedTable(engine.source, result.names, result.names, result.numeric, result.columns, {
    factors: r.factors,
  });
  if (table.nRows === 0) throw new InputError(`${engine.source}: the query returned no rows to fit.`);
  return { kind: "patterns", table, census, patterns };
}
