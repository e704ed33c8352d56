// Which engine holds the rows, from the command line's source (a Parquet
// file, or --db URL --sql QUERY), opened: the one dispatch the push-down, the
// per-iteration sums' worker thread and the readers share.
import { InputError } from "../errors.js";
import { openClickHouse } from "./clickhouse-table.js";
import { openDuckDb, openParquet } from "./duckdb-table.js";
import type { Engine } from "./engine.js";
import { openPostgres, shownUrl } from "./postgres-table.js";

/** A Parquet file, or a database URL and the user's query. */
export interface EngineTarget {
  parquet?: string;
  db?: string;
  sql?: string;
}

/** The message for a --db URL of an engine this version does not read. */
export function unknownDatabase(url: string): InputError {
  return new InputError(
    `--db ${shownUrl(url)}: not a database this version reads; give duckdb:[PATH], postgres://user@host:port/db or clickhouse://host:port/db (or export the rows to CSV or Parquet).`,
  );
}

/** Open the target's engine; a Parquet file's SHA-256 comes with it when `digest` asks for it. */
export async function openEngine(t: EngineTarget, digest = false): Promise<{ engine: Engine; sha256?: string }> {
  if (t.parquet !== undefined) return openParquet(t.parquet, { digest });
  const db = t.db ?? "";
  if (db.startsWith("duckdb:")) return { engine: await openDuckDb(db, t.sql!) };
  if (db.startsWith("clickhouse://")) return { engine: await openClickHouse(db, t.sql!) };
  if (/^postgres(ql)?:\/\//.test(db)) return { engine: await openPostgres(db, t.sql!) };
  throw unknownDatabase(db);
}
