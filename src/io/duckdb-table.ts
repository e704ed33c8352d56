// Embedded DuckDB (@duckdb/node-api) as an engine: a Parquet file read with
// read_parquet (the path a bound parameter), or the rows of a user's query
// against a DuckDB database (--db duckdb:[PATH] --sql QUERY; a file opened
// read-only). Numbers (integers, decimals, floating point) are numeric
// columns; text, booleans and dates (as YYYY-MM-DD) are factors.
import { constants, createReadStream } from "node:fs";
import { access } from "node:fs/promises";
import { createHash } from "node:crypto";
import { InputError } from "../errors.js";
import { caseLookup, type Engine, type EngineRows, firstLine, sqlText, subquery } from "./engine.js";
import { loadEngineRows } from "./engine-rows.js";
import { unreadable } from "./source-bytes.js";
import type { Table } from "./table.js";
import { rowsDigest } from "./typed-columns.js";

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

const NUMERIC =
  /^(TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|FLOAT|DOUBLE|DECIMAL.*)$/;

/** A DuckDB engine over a connection; `fromParams` are bound ahead of each query's own numbers. */
function duckEngine(
  c: Connection & { close(): void },
  engine: "parquet" | "duckdb",
  source: string,
  from: string,
  fromParams: unknown[],
  failure: (e: unknown) => InputError,
): Engine {
  const self: Engine = {
    engine,
    source,
    from,
    quote: quoteIdentifier,
    text: sqlText,
    lookup: caseLookup({ text: sqlText }),
    param: (k) => `$${k + 1 + fromParams.length}`,
    double: (x) => `CAST(${x} AS DOUBLE)`,
    lnFactorial: (x) => `LGAMMA(${x} + 1.0)`,
    queries: 0,
    async run(sql: string, params: number[] = []): Promise<EngineRows> {
      self.queries++;
      try {
        const r = await c.runAndReadAll(sql, [...fromParams, ...params]);
        const numeric = r.columnTypes().map((t) => NUMERIC.test(t.toString()));
        const columns = r.getColumns().map((values, j) => (numeric[j] ? values : values.map(duckValue)));
        return { names: r.columnNames(), numeric, columns };
      } catch (e) {
        throw failure(e);
      }
    },
    async close() {
      c.close();
    },
  };
  return self;
}

/** The SHA-256 of a file's bytes, read in chunks (a Parquet file may be gigabytes). */
async function fileDigest(path: string): Promise<string> {
  const hash = createHash("sha256");
  try {
    for await (const chunk of createReadStream(path, { highWaterMark: 1 << 22 })) hash.update(chunk as Buffer);
  } catch (e) {
    throw unreadable(path, e);
  }
  return hash.digest("hex");
}

/** A Parquet file as an engine, with the SHA-256 of its bytes (when asked: reading a large file costs seconds). */
export async function openParquet(
  path: string,
  options: { digest?: boolean } = {},
): Promise<{ engine: Engine; sha256?: string }> {
  try {
    await access(path, constants.R_OK);
  } catch (e) {
    throw unreadable(path, e);
  }
  const sha256 = options.digest === false ? undefined : await fileDigest(path);
  const c = await connect(":memory:");
  const engine = duckEngine(
    c,
    "parquet",
    path,
    "read_parquet($1)",
    [path],
    (e) => new InputError(`${path}: not a readable Parquet file (${firstLine(e)}).`),
  );
  return { engine, sha256 };
}

/** A DuckDB database (duckdb: in memory, duckdb:PATH a file opened read-only) and a user's query as an engine. */
export async function openDuckDb(url: string, sql: string): Promise<Engine> {
  const path = url.slice("duckdb:".length) || ":memory:";
  let c: Connection & { close(): void };
  try {
    c = await connect(path);
  } catch (e) {
    throw new InputError(`--db ${url}: cannot open the DuckDB database (${firstLine(e)}).`);
  }
  return duckEngine(
    c,
    "duckdb",
    `${url} query`,
    `${subquery(sql)} AS tallyfit_rows`,
    [],
    (e) => new InputError(`--sql: the query failed in DuckDB (${firstLine(e)}).`),
  );
}

/** A Parquet file into typed columns, with the SHA-256 of its bytes. */
export async function loadParquet(
  path: string,
  options: { factors?: string[]; select?: string[] },
): Promise<{ table: Table; sha256: string }> {
  const { engine, sha256 } = await openParquet(path);
  try {
    return { table: await loadEngineRows(engine, options, `${path}: the Parquet file has no rows.`), sha256: sha256! };
  } finally {
    await engine.close();
  }
}

/** The rows of a query against a DuckDB database. */
export async function loadDuckDbQuery(
  url: string,
  sql: string,
  options: { factors?: string[]; select?: string[] },
): Promise<{ table: Table; sha256: string }> {
  const engine = await openDuckDb(url, sql);
  try {
    const table = await loadEngineRows(engine, options, `${engine.source}: the query returned no rows.`);
    return { table, sha256: rowsDigest(table) };
  } finally {
    await engine.close();
  }
}
