// Per-iteration sums inside the engine, for models whose covariate patterns
// are too many to bring back (a continuous covariate): at given coefficients
// b, one aggregate query returns the Poisson score U = Σ w·(y − mu)·x, the
// Fisher information I = Σ w·mu·x·x' (for the log link also the observed
// information), the deviance, Pearson's chi-square and the log-likelihood,
// with mu = exp(ln e + offset + x'b). The coefficients are bound numbers; the
// design columns are products of factor-level indicators (levels as quoted
// literals) and numeric columns (quoted names).
import type { Engine, EngineRows } from "./engine.js";
import { innerRows, type pieces } from "./push-down.js";
import type { EngineTarget } from "./sync-engine.js";

/** What the per-iteration sums need: the engine (closed; its SQL dialect), the worker's target and the rows' SQL pieces. */
export interface SumsSource {
  engine: Engine;
  target: EngineTarget;
  pieces: ReturnType<typeof pieces>;
  observations: number;
  means: Map<string, number>;
}

/** One design column: the product of its factor levels' indicators and its numeric columns (none: the intercept). */
export interface SqlColumn {
  levels: { factor: string; level: string }[];
  numbers: string[];
}

export interface PoissonSums {
  score: Float64Array;
  /** The information matrix, p × p, row by row. */
  information: Float64Array;
  deviance: number;
  pearson: number;
  logLik: number;
}

/** The expression of a design column over the inner rows. */
function columnSql(engine: Engine, c: SqlColumn): string {
  const parts = [
    ...c.levels.map((l) => `(CASE WHEN ${engine.quote(l.factor)} = ${engine.text(l.level)} THEN 1.0 ELSE 0.0 END)`),
    ...c.numbers.map((n) => engine.double(engine.quote(n))),
  ];
  return parts.length ? parts.join(" * ") : "1.0";
}

/** The sums query at coefficients beta, with its bound numbers. */
export function sumsQuery(
  engine: Engine,
  s: ReturnType<typeof pieces>,
  columns: SqlColumn[],
  beta: Float64Array,
): { sql: string; params: number[] } {
  const p = columns.length;
  const params = Array.from(beta);
  const xs = columns.map((c, j) => `${columnSql(engine, c)} AS x${j}`);
  const eta = ["t_lnx", ...columns.map((_, j) => `${engine.param(j, beta[j])} * x${j}`)].join(" + ");
  const rows =
    `(SELECT ${xs.join(", ")}, t_y, ${s.w} AS t_w, ${s.lnx} AS t_lnx FROM ${innerRows(engine, s)} ` +
    `WHERE ${s.used}) AS tallyfit_x`;
  const withMu = `(SELECT *, ${eta} AS t_eta, exp(${eta}) AS t_mu FROM ${rows}) AS tallyfit_mu`;
  const sums: string[] = [];
  for (let j = 0; j < p; j++) sums.push(`SUM(t_w * (t_y - t_mu) * x${j}) AS u${j}`);
  for (let j = 0; j < p; j++) for (let k = 0; k <= j; k++) sums.push(`SUM(t_w * t_mu * x${j} * x${k}) AS i${j}_${k}`);
  sums.push(
    `SUM(2.0 * t_w * ((CASE WHEN t_y > 0 THEN t_y * (ln(t_y) - t_eta) ELSE 0.0 END) - t_y + t_mu)) AS deviance`,
    `SUM(t_w * (t_y - t_mu) * (t_y - t_mu) / t_mu) AS pearson`,
    `SUM(t_w * (t_y * t_eta - t_mu - ${engine.lnFactorial("t_y")})) AS loglik`,
  );
  return { sql: `SELECT ${sums.join(", ")} FROM ${withMu}`, params };
}

/** The sums from the query's one row. */
export function readSums(r: EngineRows, p: number): PoissonSums {
  const v = (name: string) => Number(r.columns[r.names.indexOf(name)]?.[0] ?? Number.NaN);
  const score = new Float64Array(p);
  const information = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    score[j] = v(`u${j}`);
    for (let k = 0; k <= j; k++) information[j * p + k] = information[k * p + j] = v(`i${j}_${k}`);
  }
  return { score, information, deviance: v("deviance"), pearson: v("pearson"), logLik: v("loglik") };
}
