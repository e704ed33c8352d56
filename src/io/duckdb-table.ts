// Tables from embedded DuckDB (@duckdb/node-api): a Parquet file read with
// read_parquet, or the rows of a user's query against a DuckDB database
// (--db duckdb:[PATH] --sql QUERY), into the same typed columns as a CSV.
// Numbers (integers, decimals, floating point) become numeric columns, text,
// booleans and dates (as YYYY-MM-DD) factors, NULL a missing value. Nothing
// from the command line is pasted into SQL except the user's own query and
// quoted column names; a file path is a bound parameter.
import { readFile } from "node:fs/promises";
import { createHash } from "node:crypto";
import { InputError } from "../errors.js";
import { unreadable } from "./source-bytes.js";
import type { Table } from "./table.js";
import { rowsDigest, typedTable } from "./typed-columns.js";

type Value = unknown;

/** A DuckDB date value (days since 1970-01-01) as YYYY-MM-DD; any other value as it is. */
function duckValue(v: Value): Value {
  if (v && typeof v === "object" && "days" in (v as object))
    return new Date(Number((v as { days: number }).days) * 86_400_000).toISOString().slice(0, 10);
  return v;
}

/** A DuckDB identifier, double-quoted with inner quotes doubled. */
export function quoteIdentifier(name: string): string {
  return `"${name.replace(/"/g, '""')}"`;
}

interface Connection {
  runAndReadAll(
    sql: string,
    params?: unknown[],
  ): Promise<{
    columnNames(): string[];
    columnTypes(): { toString(): string }[];
    getColumns(): Value[][];
  }>;
  closeSync?(): void;
}

/** A connection to a DuckDB database (":memory:", or a file opened read-only); close() releases both. */
async function connect(path: string): Promise<Connection & { close(): void }> {
  const { DuckDBInstance } = (await import("@duckdb/node-api")) as unknown as {
    DuckDBInstance: {
      create(
        path: string,
        options?: Record<string, string>,
      ): Promise<{ connect(): Promise<Connection>; closeSync(): void }>;
    };
  };
  const instance = await DuckDBInstance.create(path, path === ":memory:" ? {} : { access_mode: "READ_ONLY" });
  const c = await instance.connect();
  return Object.assign(c, {
    close() {
      c.closeSync?.();
      instance.closeSync();
    },
  });
}

/** A query result as typed columns: DuckDB's number types numeric, the rest text. */
function duckTable(
  source: string,
  header: string[],
  r: { columnNames(): string[]; columnTypes(): { toString(): string }[]; getColumns(): Value[][] },
  options: { factors?: string[] },
): Table {
  const numeric = r.columnTypes().map((t) => NUMERIC.test(t.toString()));
  const columns = r.getColumns().map((values, j) => (numeric[j] ? values : values.map(duckValue)));
  return typedTable(source, header, r.columnNames(), numeric, columns, options);
}

const NUMERIC =
  /^(TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|FLOAT|DOUBLE|DECIMAL.*)$/;

/**
 * Every column name of the source, and the select list: the columns asked for
 * that exist (the design names any that are missing, listing every column).
 */
async function selectList(
  c: Connection,
  from: string,
  params: unknown[],
  select?: string[],
): Promise<{ header: string[]; list: string }> {
  const described = await c.runAndReadAll(`SELECT * FROM ${from} LIMIT 0`, params);
  const header = described.columnNames();
  if (!select?.length) return { header, list: "*" };
  const have = new Set(header);
  const wanted = [...new Set(select)].filter((s) => have.has(s));
  return { header, list: wanted.length ? wanted.map(quoteIdentifier).join(", ") : "*" };
}

/** A Parquet file into typed columns, with the SHA-256 of its bytes. */
export async function loadParquet(
  path: string,
  options: { factors?: string[]; select?: string[] },
): Promise<{ table: Table; sha256: string }> {
  let bytes: Buffer;
  try {
    bytes = await readFile(path);
  } catch (e) {
    throw unreadable(path, e);
  }
  const c = await connect(":memory:");
  try {
    const from = "read_parquet(?)";
    const cols = await selectList(c, from, [path], options.select);
    const r = await c.runAndReadAll(`SELECT ${cols.list} FROM ${from}`, [path]);
    const table = duckTable(path, cols.header, r, options);
    if (table.nRows === 0) throw new InputError(`${path}: the Parquet file has no rows.`);
    table.origin = { engine: "parquet", queries: 2, rows_transferred: table.nRows };
    return { table, sha256: createHash("sha256").update(bytes).digest("hex") };
  } catch (e) {
    if (e instanceof InputError) throw e;
    throw new InputError(`${path}: not a readable Parquet file (${firstLine(e)}).`);
  } finally {
    c.close();
  }
}

/** The rows of a query against a DuckDB database (duckdb: in memory, duckdb:PATH a file opened read-only). */
export async function loadDuckDbQuery(
  url: string,
  sql: string,
  options: { factors?: string[]; select?: string[] },
): Promise<{ table: Table; sha256: string }> {
  const path = url.slice("duckdb:".length) || ":memory:";
  let c: Connection & { close(): void };
  try {
    c = await connect(path);
  } catch (e) {
    throw new InputError(`--db ${url}: cannot open the DuckDB database (${firstLine(e)}).`);
  }
  const source = `${url} query`;
  try {
    const from = `(${sql.trim().replace(/;\s*$/, "")}) AS tallyfit_rows`;
    const cols = await selectList(c, from, [], options.select);
    const r = await c.runAndReadAll(`SELECT ${cols.list} FROM ${from}`);
    const table = duckTable(source, cols.header, r, options);
    if (table.nRows === 0) throw new InputError(`${source}: the query returned no rows.`);
    table.origin = { engine: "duckdb", queries: 2, rows_transferred: table.nRows };
    return { table, sha256: rowsDigest(table) };
  } catch (e) {
    if (e instanceof InputError) throw e;
    throw new InputError(`--sql: the query failed in DuckDB (${firstLine(e)}).`);
  } finally {
    c.close();
  }
}

function firstLine(e: unknown): string {
  return String((e as Error)?.message ?? e)
    .split("\n")[0]
    .slice(0, 300);
}
