// The JSON's source: the file name for a plain CSV (as since the first
// version), or, for rows read through an engine (a gzip CSV, Parquet, a
// database query), a block naming the engine, whether and how the rows were
// merged inside it (push-down), the rows it sent and the queries run.
import type { Design } from "../design/design.js";
import type { SourceOrigin } from "../io/table.js";

export interface SourceBlock {
  name: string;
  engine: SourceOrigin["engine"];
  /** Whether aggregation ran inside the engine. */
  pushed_down: boolean;
  /** How: covariate patterns, count patterns or per-iteration sums (null: the rows were read). */
  aggregation: NonNullable<SourceOrigin["aggregation"]> | null;
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
    pushed_down: !!o.aggregation,
    aggregation: o.aggregation ?? null,
    rows_transferred: o.rows_transferred,
    queries: o.queries,
  };
}
