// The rows of a query against PostgreSQL (--db postgres://user@host:port/db
// --sql QUERY), through the pg client, into the same typed columns as a CSV.
// The query becomes a subquery and only the model's columns are selected, as
// quoted identifiers; nothing else from the command line reaches the SQL.
// Dates arrive as their text (YYYY-MM-DD), so --date reads them as in a CSV.
// A password in the URL is never shown in a message.
import { InputError } from "../errors.js";
import type { Table } from "./table.js";
import { rowsDigest, typedTable } from "./typed-columns.js";

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

export async function loadPostgresQuery(
  url: string,
  sql: string,
  options: { factors?: string[]; select?: string[] },
): Promise<{ table: Table; sha256: string }> {
  const pg = (await import("pg")).default;
  // Every value as the server's text (dates stay YYYY-MM-DD, wide numbers keep their digits).
  const types = { getTypeParser: () => (v: string) => v };
  const client = new pg.Client({ connectionString: url, types, connectionTimeoutMillis: 10_000 });
  const where = `--db ${shownUrl(url)}`;
  try {
    await client.connect();
  } catch (e) {
    throw new InputError(`${where}: cannot connect to PostgreSQL (${message(e, url)}).`);
  }
  try {
    const from = `(${sql.trim().replace(/;\s*$/, "")}) AS tallyfit_rows`;
    const described = (await client.query({ text: `SELECT * FROM ${from} LIMIT 0`, rowMode: "array" })) as PgResult;
    const header = described.fields.map((f) => f.name);
    const have = new Set(header);
    const wanted = [...new Set(options.select ?? [])].filter((s) => have.has(s));
    const list = wanted.length ? wanted.map(quotePgIdentifier).join(", ") : "*";
    const r = (await client.query({ text: `SELECT ${list} FROM ${from}`, rowMode: "array" })) as PgResult;
    const names = r.fields.map((f) => f.name);
    const columns = names.map((_, j) => r.rows.map((row) => row[j]));
    const table = typedTable(
      `${shownUrl(url)} query`,
      header,
      names,
      r.fields.map((f) => NUMBER_TYPES.has(f.dataTypeID)),
      columns,
      options,
    );
    if (table.nRows === 0) throw new InputError(`${where}: the query returned no rows.`);
    table.origin = { engine: "postgres", queries: 2, rows_transferred: table.nRows };
    return { table, sha256: rowsDigest(table) };
  } catch (e) {
    if (e instanceof InputError) throw e;
    throw new InputError(`--sql: the query failed in PostgreSQL (${message(e, url)}).`);
  } finally {
    await client.end().catch(() => {});
  }
}

/** An error's first line, with the URL's password taken out if the driver echoed it. */
function message(e: unknown, url: string): string {
  const m = /^\w+:\/\/[^:/@]*:([^@/]*)@/.exec(url);
  let text = String((e as Error)?.message || (e as NodeJS.ErrnoException)?.code || e).split("\n")[0];
  if (m?.[1]) text = text.split(m[1]).join("…");
  return text.slice(0, 300);
}
