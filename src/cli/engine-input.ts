// The push-down branch of reading the input: when the rows sit in an engine
// (a Parquet file, --db --sql), ask it for the covariate patterns instead of
// the rows (io/push-down.ts). Null when the rows must be read after all: the
// census found rows the design refuses (the design then names them), or there
// are too many patterns.
import type { Engine } from "../io/engine.js";
import { createHash } from "node:crypto";
import { DESIGN_LIMITS } from "../design/design.js";
import { type LevelEvents, skeletonTable } from "../design/skeleton.js";
import {
  type Census,
  PATTERN_COLUMNS,
  pieces,
  type PushDownKey,
  type PushDownRequest,
  pushDown,
} from "../io/push-down.js";
import type { SumsSource } from "../io/engine-sums.js";
import { type EngineTarget, openEngine } from "../io/open-engine.js";
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

export interface PatternRead {
  table: Table;
  census: Census;
  by: PushDownKey | "per-iteration";
  /** With per-iteration sums: the table is only the levels' skeleton (design/skeleton.ts). */
  sums?: SumsSource;
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
  /** Whether the file's SHA-256 is wanted (a model file records it); otherwise the digest is of the patterns read. */
  digest: boolean,
): Promise<PatternRead | null> {
  const { engine, sha256 } = await openEngine(opts.db ? { db: opts.db, sql: opts.sql } : { parquet: path }, digest);
  try {
    const request: PushDownRequest = {
      ...model,
      exposure: opts.exposure,
      offset: opts.offset,
      weights: opts.weights,
      by,
      // Count patterns are worth bringing back whenever they are fewer than the rows; covariate patterns
      // beyond half the rows are better fitted by per-iteration sums.
      maxPatterns: (used) =>
        Math.min(MAX_PATTERNS, by === "count" ? used : Math.max(MIN_PATTERN_LIMIT, Math.floor(used / 2))),
    };
    const r = await pushDown(engine, request);
    if (r.kind === "too many patterns" && by === "covariates") {
      const target: EngineTarget = opts.db ? { db: opts.db, sql: opts.sql } : { parquet: path };
      return await sumsSource(engine, request, r.census, r.numeric, target, sha256);
    }
    if (r.kind !== "patterns") return null;
    r.table.origin = {
      engine: engine.engine,
      queries: engine.queries,
      rows_transferred: r.transferred,
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

/**
 * The levels of each factor with their events, and the numeric columns'
 * means, over the rows used: the skeleton the design is built from when the
 * fit runs on per-iteration sums. Null (read the rows) when a numeric column
 * is read as a factor (its levels' text could differ from the engine's).
 */
async function sumsSource(
  engine: Engine,
  request: PushDownRequest,
  census: Census,
  numeric: Map<string, boolean>,
  target: EngineTarget,
  digest: string | undefined,
): Promise<PatternRead | null> {
  const factorKeys = request.keys.filter((k) => !numeric.get(k) || request.factors.includes(k));
  if (factorKeys.some((k) => numeric.get(k))) return null;
  const numericKeys = request.keys.filter((k) => !factorKeys.includes(k));
  const s = pieces(engine, request, numeric);
  const t = s.rows;
  const q = engine.quote;
  let transferred = 0;
  const levels: LevelEvents[] = [];
  for (const k of factorKeys) {
    const r = await engine.run(`SELECT ${q(k)}, SUM(t_w * t_y) AS events FROM ${t} WHERE ${s.used} GROUP BY ${q(k)}`);
    transferred += r.columns[0].length;
    levels.push({
      factor: k,
      levels: r.columns[0].map((v, i) => ({ level: String(v), events: Number(r.columns[1][i]) })),
    });
  }
  const m = await engine.run(
    `SELECT SUM(t_w) AS observations, SUM(t_w * t_y) AS y, ` +
      `SUM(CASE WHEN t_y > 0 THEN t_w * t_y * ln(t_y) ELSE 0.0 END) AS ylny, SUM(t_w * ${engine.lnFactorial("t_y")}) AS lnfact` +
      `${numericKeys.map((k, j) => `, SUM(t_w * ${engine.double(q(k))}) AS m${j}`).join("")} FROM ${t} WHERE ${s.used}`,
  );
  transferred += 1;
  const observations = Number(m.columns[0][0]);
  const [total, ylny, lnFactorial] = [1, 2, 3].map((j) => Number(m.columns[j][0]));
  const means = new Map(numericKeys.map((k, j) => [k, Number(m.columns[j + 4][0]) / observations]));
  const table = skeletonTable(engine.source, request.response, levels, means, DESIGN_LIMITS.columns, [
    ...numeric.keys(),
  ]);
  table.origin = {
    engine: engine.engine,
    queries: engine.queries,
    rows_transferred: transferred,
    aggregation: "per-iteration sums",
  };
  return {
    table,
    census,
    by: "per-iteration",
    sums: { engine, target, pieces: s, observations, means, constants: { y: total, ylny, lnFactorial } },
    exposureColumn: "",
    weightsColumn: undefined,
    sha256:
      digest ??
      createHash("sha256")
        .update(JSON.stringify([levels, [...means]]))
        .digest("hex"),
  };
}
