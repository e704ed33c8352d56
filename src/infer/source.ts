// The JSON's source: the file name for a plain CSV (as since the first
// version), or, for rows read through an engine (a gzip CSV, Parquet, a
// database query), a block naming the engine, whether work was pushed down
// into it, the rows it sent and the queries run.
import type { Design } from "../design/design.js";

export interface SourceBlock {
  name: string;
  engine: "csv.gz" | "parquet" | "duckdb" | "postgres" | "clickhouse";
  /** Whether aggregation ran inside the engine (not yet: every row the model uses is fetched). */
  pushed_down: false;
  rows_transferred: number;
  queries: number;
}

export type Source = string | SourceBlock;

export function sourceOf(design: Design): Source {
  const o = design.origin;
  if (!o) return design.source;
  return {
    name: design.source,
    engine: o.engine,
    pushed_down: false,
    rows_transferred: o.rows_transferred,
    queries: o.queries,
  };
}
