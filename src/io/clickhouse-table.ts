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
import { type Engine, type EngineRows, subquery } from "./engine.js";
import { loadEngineRows } from "./engine-rows.js";
import type { Table } from "./table.js";
import { rowsDigest } from "./typed-columns.js";

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

/** Rows of a TabSeparatedWithNamesAndTypes body, by column. */
function parseResult(text: string): EngineRows {
  const lines = text.split("\n");
  if (lines[lines.length - 1] === "") lines.pop();
  const names = lines[0].split("\t").map((n) => field(n) ?? "");
  const types = lines[1].split("\t");
  const columns: (string | null)[][] = names.map(() => []);
  for (let i = 2; i < lines.length; i++) {
    const cells = lines[i].split("\t");
    for (let j = 0; j < names.length; j++) columns[j].push(field(cells[j] ?? "\\N"));
  }
  return { names, numeric: types.map((t) => NUMBER.test(t)), columns };
}

/**
 * A ClickHouse server (or a cluster's initiator) and a user's query as an
 * engine. The server versions Debian ships predate bound query parameters,
 * so a number reaches the SQL as the literal JavaScript writes for it (digits,
 * a sign, a point and an exponent: nothing else can appear).
 */
export async function openClickHouse(url: string, sql: string): Promise<Engine> {
  const e = endpointOf(url);
  const password = e.params.get("password") ?? "";
  const self: Engine = {
    engine: "clickhouse",
    source: `${shownUrl(url)} query`,
    from: subquery(sql),
    quote: quoteClickHouseIdentifier,
    // ClickHouse string literals take backslash escapes as well as doubled quotes.
    text: (v) => `'${v.replace(/\\/g, "\\\\").replace(/'/g, "\\'")}'`,
    // transform() maps a value through two constant arrays, faster than a CASE chain in ClickHouse.
    lookup: (column, levels, values) =>
      `transform(${column}, [${levels.map((l) => self.text(l)).join(", ")}], [${values.join(", ")}], toFloat64(0))`,
    param: (_k, value) => {
      if (!Number.isFinite(value)) throw new Error(`a non-finite number (${value}) cannot be sent to ClickHouse`);
      return `toFloat64(${String(value)})`;
    },
    double: (x) => `toFloat64(${x})`,
    lnFactorial: (x) => `lgamma(${x} + 1.0)`,
    queries: 0,
    async run(text: string): Promise<EngineRows> {
      self.queries++;
      // Header lines name and type each column even when no row comes back.
      return parseResult(await run(e, `${text} FORMAT TabSeparatedWithNamesAndTypes`, password));
    },
    async close() {},
  };
  return self;
}

/** The rows of a query against ClickHouse. */
export async function loadClickHouseQuery(
  url: string,
  sql: string,
  options: { factors?: string[]; select?: string[] },
): Promise<{ table: Table; sha256: string }> {
  const engine = await openClickHouse(url, sql);
  const table = await loadEngineRows(engine, options, `--db ${shownUrl(url)}: the query returned no rows.`);
  return { table, sha256: rowsDigest(table) };
}
