// The rows of a query against PostgreSQL (--db postgres://user@host:port/db
// --sql QUERY), through the pg client, into the same typed columns as a CSV.
// The query becomes a subquery and only the model's columns are selected, as
// quoted identifiers; nothing else from the command line reaches the SQL.
// Dates arrive as their text (YYYY-MM-DD), so --date reads them as in a CSV.
// A password in the URL is never shown in a message.
import { InputError } from "../errors.js";
import { caseLookup, type Engine, type EngineRows, lnFactorialSql, sqlText, subquery } from "./engine.js";
import { loadEngineRows } from "./engine-rows.js";
import type { Table } from "./table.js";
import { rowsDigest } from "./typed-columns.js";

/** PostgreSQL's number types by type OID: int2, int4, int8, oid, float4, float8, numeric. */
const NUMBER_TYPES = new Set([21, 23, 20, 26, 700, 701, 1700]);

/** A PostgreSQL identifier, double-quoted with inner quotes doubled. */
export function quotePgIdentifier(name: string): string {
  return `"${name.replace(/"/g, '""')}"`;
}

/** The URL as it may be shown: the password replaced by …. */
export function shownUrl(url: string): string {
  return url.replace(/^(\w+:\/\/[^:/@]*):[^@/]*@/, "$1:…@");
}

interface PgResult {
  fields: { name: string; dataTypeID: number }[];
  rows: unknown[][];
}

/** A PostgreSQL database and a user's query as an engine (the client connected). */
export async function openPostgres(url: string, sql: string): Promise<Engine> {
  const pg = (await import("pg")).default;
  // Every value as the server's text (dates stay YYYY-MM-DD, wide numbers keep their digits).
  const types = { getTypeParser: () => (v: string) => v };
  const client = new pg.Client({ connectionString: url, types, connectionTimeoutMillis: 10_000 });
  try {
    await client.connect();
  } catch (e) {
    throw new InputError(`--db ${shownUrl(url)}: cannot connect to PostgreSQL (${message(e, url)}).`);
  }
  const self: Engine = {
    engine: "postgres",
    source: `${shownUrl(url)} query`,
    from: `${subquery(sql)} AS tallyfit_rows`,
    quote: quotePgIdentifier,
    text: sqlText,
    lookup: caseLookup({ text: sqlText }),
    param: (k) => `$${k + 1}::double precision`,
    double: (x) => `CAST(${x} AS DOUBLE PRECISION)`,
    lnFactorial: lnFactorialSql,
    queries: 0,
    async run(text: string, params: number[] = []): Promise<EngineRows> {
      self.queries++;
      let r: PgResult;
      try {
        r = (await client.query({ text, values: params.map(String), rowMode: "array" })) as PgResult;
      } catch (e) {
        throw new InputError(`--sql: the query failed in PostgreSQL (${message(e, url)}).`);
      }
      const names = r.fields.map((f) => f.name);
      return {
        names,
        numeric: r.fields.map((f) => NUMBER_TYPES.has(f.dataTypeID)),
        columns: names.map((_, j) => r.rows.map((row) => row[j])),
      };
    },
    async close() {
      await client.end().catch(() => {});
    },
  };
  return self;
}

/** The rows of a query against PostgreSQL. */
export async function loadPostgresQuery(
  url: string,
  sql: string,
  options: { factors?: string[]; select?: string[] },
): Promise<{ table: Table; sha256: string }> {
  const engine = await openPostgres(url, sql);
  try {
    const table = await loadEngineRows(engine, options, `--db ${shownUrl(url)}: the query returned no rows.`);
    return { table, sha256: rowsDigest(table) };
  } finally {
    await engine.close();
  }
}

/** An error's first line, with the URL's password taken out if the driver echoed it. */
function message(e: unknown, url: string): string {
  const m = /^\w+:\/\/[^:/@]*:([^@/]*)@/.exec(url);
  let text = String((e as Error)?.message || (e as NodeJS.ErrnoException)?.code || e).split("\n")[0];
  if (m?.[1]) text = text.split(m[1]).join("…");
  return text.slice(0, 300);
}
