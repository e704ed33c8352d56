// The push-down branch of reading the input: when the rows sit in an engine
// (a Parquet file, --db --sql), ask it for the covariate patterns instead of
// the rows (io/push-down.ts). Null when the rows must be read after all: the
// census found rows the design refuses (the design then names them), or there
// are too many patterns.
import { openClickHouse } from "../io/clickhouse-table.js";
import { openDuckDb, openParquet } from "../io/duckdb-table.js";
import type { Engine } from "../io/engine.js";
import { openPostgres } from "../io/postgres-table.js";
import { type Census, type PushDownKey, PATTERN_COLUMNS, pushDown } from "../io/push-down.js";
import type { Table } from "../io/table.js";
import { rowsDigest } from "../io/typed-columns.js";
import type { ModelOptions } from "./options.js";

/** Rows an engine may merge into as many patterns as this, at least (below it, merging always pays). */
const MIN_PATTERN_LIMIT = 1000;
/** Most patterns brought back from an engine. */
const MAX_PATTERNS = 2_000_000;

/** Whether the input is read through an engine (a Parquet file or --db). */
export function readThroughEngine(path: string, opts: ModelOptions): boolean {
  return !!opts.db || /\.parquet$/i.test(path);
}

async function openEngine(path: string, opts: ModelOptions): Promise<{ engine: Engine; sha256?: string }> {
  if (!opts.db) return openParquet(path);
  if (opts.db.startsWith("duckdb:")) return { engine: await openDuckDb(opts.db, opts.sql!) };
  if (opts.db.startsWith("clickhouse://")) return { engine: await openClickHouse(opts.db, opts.sql!) };
  return { engine: await openPostgres(opts.db, opts.sql!) };
}

export interface PatternRead {
  table: Table;
  census: Census;
  by: PushDownKey;
  /** The column the pattern table's exposure sums sit in, and its frequency weights (count patterns). */
  exposureColumn: string;
  weightsColumn: string | undefined;
  sha256: string;
}

export async function readPatterns(
  path: string,
  opts: ModelOptions,
  model: { response: string; keys: string[]; factors: string[] },
  by: PushDownKey,
): Promise<PatternRead | null> {
  const { engine, sha256 } = await openEngine(path, opts);
  try {
    const r = await pushDown(engine, {
      ...model,
      exposure: opts.exposure,
      offset: opts.offset,
      weights: opts.weights,
      by,
      // Count patterns are worth bringing back whenever they are fewer than the rows; covariate patterns
      // beyond half the rows are better fitted by per-iteration sums.
      maxPatterns: (used) =>
        Math.min(MAX_PATTERNS, by === "count" ? used : Math.max(MIN_PATTERN_LIMIT, Math.floor(used / 2))),
    });
    if (r.kind !== "patterns") return null;
    r.table.origin = {
      engine: engine.engine,
      queries: engine.queries,
      rows_transferred: r.patterns,
      aggregation: by === "covariates" ? "covariate patterns" : "count patterns",
    };
    return {
      table: r.table,
      census: r.census,
      by,
      exposureColumn: opts.exposure ?? PATTERN_COLUMNS.exposure,
      weightsColumn: by === "count" ? PATTERN_COLUMNS.weight : undefined,
      sha256: sha256 ?? rowsDigest(r.table),
    };
  } finally {
    await engine.close();
  }
}
