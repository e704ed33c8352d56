// The rows of a query against ClickHouse (--db clickhouse://[user[:password]@]
// host:port/db --sql QUERY) over its HTTP interface, into the same typed
// columns as a CSV. The query becomes a subquery and only the model's columns
// are selected, as quoted identifiers; the result comes back as
// TabSeparatedWithNamesAndTypes (names, then types, then rows; \N is NULL).
// The same SQL runs on a single server or on the initiator of a cluster, where
// a Distributed table's shards each return their rows. A password is sent as
// a request parameter and never shown in a message.
import { InputError } from "../errors.js";
import { shownUrl } from "./postgres-table.js";
import type { Table } from "./table.js";
import { rowsDigest, typedTable } from "./typed-columns.js";

/** ClickHouse's number types, also inside Nullable(…). */
const NUMBER = /^(Nullable\()?(U?Int(8|16|32|64|128|256)|Float(32|64)|Decimal.*)\)?$/;

/** A ClickHouse identifier, back-quoted with inner back quotes escaped. */
export function quoteClickHouseIdentifier(name: string): string {
  return `\`${name.replace(/\\/g, "\\\\").replace(/`/g, "\\`")}\``;
}

/** One TabSeparated field: \N is NULL, backslash escapes undone. */
function field(s: string): string | null {
  if (s === "\\N") return null;
  if (!s.includes("\\")) return s;
  return s.replace(/\\(.)/g, (_, c: string) =>
    c === "t" ? "\t" : c === "n" ? "\n" : c === "r" ? "\r" : c === "0" ? "\0" : c === "b" ? "\b" : c === "f" ? "\f" : c,
  );
}

interface Endpoint {
  http: string;
  params: URLSearchParams;
  where: string;
}

function endpointOf(url: string): Endpoint {
  const where = `--db ${shownUrl(url)}`;
  let u: URL;
  try {
    u = new URL(url.replace(/^clickhouse:/, "http:"));
  } catch {
    throw new InputError(`${where}: not a ClickHouse URL; write clickhouse://[user[:password]@]host:port/database.`);
  }
  const params = new URLSearchParams();
  const database = decodeURIComponent(u.pathname.replace(/^\//, ""));
  if (database) params.set("database", database);
  if (u.username) params.set("user", decodeURIComponent(u.username));
  if (u.password) params.set("password", decodeURIComponent(u.password));
  return { http: `http://${u.hostname}:${u.port || "8123"}/`, params, where };
}

async function run(e: Endpoint, sql: string, password: string): Promise<string> {
  let response: Response;
  try {
    response = await fetch(`${e.http}?${e.params}`, { method: "POST", body: sql });
  } catch (err) {
    const c = (err as { cause?: { code?: string; message?: string } }).cause;
    const cause = c?.code ?? c?.message ?? (err as Error).message;
    throw new InputError(`${e.where}: cannot connect to ClickHouse (${cause}).`);
  }
  const body = await response.text();
  if (!response.ok) {
    let first = body.split("\n")[0].slice(0, 300);
    if (password) first = first.split(password).join("…");
    throw new InputError(`--sql: the query failed in ClickHouse (${first}).`);
  }
  return body;
}

export async function loadClickHouseQuery(
  url: string,
  sql: string,
  options: { factors?: string[]; select?: string[] },
): Promise<{ table: Table; sha256: string }> {
  const e = endpointOf(url);
  const password = e.params.get("password") ?? "";
  const from = `(${sql.trim().replace(/;\s*$/, "")})`;
  const described = (await run(e, `SELECT * FROM ${from} LIMIT 0 FORMAT TabSeparatedWithNamesAndTypes`, password))
    .split("\n")[0]
    .split("\t")
    .map((n) => field(n) ?? "");
  const have = new Set(described);
  const wanted = [...new Set(options.select ?? [])].filter((s) => have.has(s));
  const list = wanted.length ? wanted.map(quoteClickHouseIdentifier).join(", ") : "*";
  const text = await run(e, `SELECT ${list} FROM ${from} FORMAT TabSeparatedWithNamesAndTypes`, password);
  const lines = text.split("\n");
  if (lines[lines.length - 1] === "") lines.pop();
  const names = lines[0].split("\t").map((n) => field(n) ?? "");
  const types = lines[1].split("\t");
  const columns: (string | null)[][] = names.map(() => []);
  for (let i = 2; i < lines.length; i++) {
    const cells = lines[i].split("\t");
    for (let j = 0; j < names.length; j++) columns[j].push(field(cells[j] ?? "\\N"));
  }
  const table = typedTable(
    `${shownUrl(url)} query`,
    described,
    names,
    types.map((t) => NUMBER.test(t)),
    columns,
    options,
  );
  if (table.nRows === 0) throw new InputError(`${e.where}: the query returned no rows.`);
  table.origin = { engine: "clickhouse", queries: 2, rows_transferred: table.nRows };
  return { table, sha256: rowsDigest(table) };
}
