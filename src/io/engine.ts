// An engine that holds the rows (embedded DuckDB over a Parquet file or a
// database, PostgreSQL, ClickHouse), as the one surface the loaders and the
// push-down use: the FROM item of the user's rows, the engine's quoting and
// parameter placeholders, the few functions whose names differ, and a query
// runner that returns typed result columns. Only the user's own query, quoted
// column names, our own SQL and bound numbers ever reach the engine.
import type { SourceOrigin } from "./table.js";

/** A query's result: column names, whether each is a number type, and the values by column. */
export interface EngineRows {
  names: string[];
  numeric: boolean[];
  columns: unknown[][];
}

export interface Engine {
  engine: SourceOrigin["engine"];
  /** The source as messages and the JSON name it (a password never shown). */
  source: string;
  /** The FROM item that yields the user's rows. */
  from: string;
  /** An identifier, quoted for this engine. */
  quote(name: string): string;
  /** A string literal (a factor level read from the data), quoted for this engine. */
  text(value: string): string;
  /**
   * Number k (0-based) of run()'s params in the SQL: a placeholder bound by
   * the driver, or, for an engine without bound parameters, its literal.
   */
  param(k: number, value: number): string;
  /** A number per value of a column (0 for any other value): levels are quoted literals, values SQL numbers. */
  lookup(column: string, levels: string[], values: string[]): string;
  /** An expression as a double-precision number. */
  double(expr: string): string;
  /** ln(x!) of a whole number x ≥ 0. */
  lnFactorial(expr: string): string;
  /** Run one query with bound numbers; failures are located InputErrors. */
  run(sql: string, params?: number[]): Promise<EngineRows>;
  /** Queries run so far. */
  queries: number;
  close(): Promise<void>;
}

/**
 * ln(x!) in SQL for an engine without lgamma: exact logs of 0! … 15! from a
 * table, then Stirling's series with four correction terms (Abramowitz and
 * Stegun 6.1.41), whose error for x ≥ 16 is below 1e-14 (absolute).
 */
export function lnFactorialSql(x: string): string {
  let table = "CASE";
  let acc = 0;
  for (let k = 0; k <= 15; k++) {
    if (k > 1) acc += Math.log(k);
    table += ` WHEN ${x} = ${k} THEN ${acc === 0 ? "0.0" : acc.toPrecision(17)}`;
  }
  const z = `(${x} + 1.0)`;
  const stirling =
    `((${z} - 0.5) * ln(${z}) - ${z} + 0.91893853320467274178 + 1.0 / (12.0 * ${z})` +
    ` - 1.0 / (360.0 * ${z} * ${z} * ${z}) + 1.0 / (1260.0 * pow(${z}, 5)) - 1.0 / (1680.0 * pow(${z}, 7)))`;
  return `${table} ELSE ${stirling} END`;
}

/** lookup() as a simple CASE: the column is read once per row. */
export function caseLookup(engine: Pick<Engine, "text">): Engine["lookup"] {
  return (column, levels, values) =>
    `(CASE ${column} ${levels.map((l, k) => `WHEN ${engine.text(l)} THEN ${values[k]}`).join(" ")} ELSE 0.0 END)`;
}

/** A standard SQL string literal: single quotes, inner quotes doubled. */
export function sqlText(value: string): string {
  return `'${value.replace(/'/g, "''")}'`;
}

/** The first line of an error's message, at most 300 characters. */
export function firstLine(e: unknown): string {
  return String((e as Error)?.message ?? e)
    .split("\n")[0]
    .slice(0, 300);
}

/** The user's query as a subquery (a trailing semicolon dropped). */
export function subquery(sql: string): string {
  return `(${sql.trim().replace(/;\s*$/, "")})`;
}
