// Per-iteration sums inside the engine, for models whose covariate patterns
// are too many to bring back (a continuous covariate): at given coefficients
// b, one aggregate query returns, per cell of the model's factors, the moments
// from which the Poisson score U = Σ w·(y − mu)·x and the Fisher information
// I = Σ w·mu·x·x' (for the log link also the observed information) follow,
// with the deviance, Pearson's chi-square and the log-likelihood, where
// mu = exp(ln e + offset + x'b). The coefficients are bound numbers; the
// design columns are products of factor-level indicators (levels as quoted
// literals) and numeric columns (quoted names).
import type { Engine, EngineRows } from "./engine.js";
import type { pieces } from "./push-down.js";
import type { EngineTarget } from "./open-engine.js";

/** What the per-iteration sums need: the engine (closed; its SQL dialect), the worker's target and the rows' SQL pieces. */
export interface SumsSource {
  engine: Engine;
  target: EngineTarget;
  pieces: ReturnType<typeof pieces>;
  observations: number;
  means: Map<string, number>;
  /** Sums free of the coefficients, taken once: Σ w·y, Σ w·y·ln y and Σ w·ln y!. */
  constants: SumsConstants;
}

export interface SumsConstants {
  y: number;
  ylny: number;
  lnFactorial: number;
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

/**
 * The layout of the sums: the model's factors (the cells the engine groups
 * by), the distinct numeric parts of the columns (features; feature 0 is the
 * constant 1), and for each column its feature and its levels. Within a cell
 * every column is its feature or 0, so X'WX and X'(y − mu) follow from each
 * cell's moments Σ w·mu·f_a·f_b and Σ w·(y − mu)·f_a: the rows carry only the
 * features' products, not every pair of columns (the cell layout of the
 * in-process kernel, fit/kernel/layout.ts, inside the engine).
 */
export function sumsLayout(columns: SqlColumn[]) {
  const factors = [...new Set(columns.flatMap((c) => c.levels.map((l) => l.factor)))];
  const keyOf = (numbers: string[]) => JSON.stringify([...numbers].sort());
  const features: string[][] = [[]];
  const featureOf = columns.map((c) => {
    const k = keyOf(c.numbers);
    let f = features.findIndex((g) => keyOf(g) === k);
    if (f < 0) f = features.push([...c.numbers].sort()) - 1;
    return f;
  });
  return { factors, features, featureOf };
}

/** The sums query at coefficients beta, with its bound numbers: one row per cell. */
export function sumsQuery(
  engine: Engine,
  s: ReturnType<typeof pieces>,
  columns: SqlColumn[],
  beta: Float64Array,
): { sql: string; params: number[] } {
  const q = engine.quote;
  const { factors, features } = sumsLayout(columns);
  const indicator = (c: SqlColumn) =>
    c.levels.map((l) => `(CASE WHEN ${q(l.factor)} = ${engine.text(l.level)} THEN 1.0 ELSE 0.0 END)`);
  const numbers = (names: string[]) => names.map((n) => engine.double(q(n)));
  const x = (c: SqlColumn) => [...indicator(c), ...numbers(c.numbers)].join(" * ") || "1.0";
  // A factor's main-effect columns enter as one CASE on the factor's value (one comparison chain per row
  // instead of one product per column); every other column as its product.
  const main = new Map<string, number[]>();
  columns.forEach((c, j) => {
    if (c.levels.length === 1 && c.numbers.length === 0)
      main.set(c.levels[0].factor, [...(main.get(c.levels[0].factor) ?? []), j]);
  });
  const terms = [...main].map(([factor, js]) =>
    engine.lookup(
      q(factor),
      js.map((j) => columns[j].levels[0].level),
      js.map((j) => engine.param(j, beta[j])),
    ),
  );
  columns.forEach((c, j) => {
    if (!(c.levels.length === 1 && c.numbers.length === 0)) terms.push(`${engine.param(j, beta[j])} * ${x(c)}`);
  });
  const eta = ["t_lnx", ...terms].join(" + ");
  const keys = factors.map(q);
  const f = features.map((g, a) => `${g.length ? numbers(g).join(" * ") : "1.0"} AS f${a}`);
  const rows =
    `(SELECT ${[...keys, ...f, "t_y", "t_w", `${eta} AS t_eta`].join(", ")} ` +
    `FROM ${s.rows} WHERE ${s.used}) AS tallyfit_x`;
  const withMu = `(SELECT *, exp(t_eta) AS t_mu FROM ${rows}) AS tallyfit_mu`;
  const sums = [...keys];
  for (let a = 0; a < features.length; a++) {
    sums.push(`SUM(t_w * (t_y - t_mu) * f${a}) AS r${a}`);
    for (let b = 0; b <= a; b++) sums.push(`SUM(t_w * t_mu * f${a} * f${b}) AS m${a}_${b}`);
  }
  // With A = Σ w·y·eta and M = Σ w·mu (the rest taken once, see SumsConstants): deviance
  // 2(Σ w·y ln y − A − Σ w·y + M), log-likelihood A − M − Σ w·ln y!, Pearson Σ w·y²/mu − 2Σ w·y + M.
  sums.push("SUM(t_w * t_y * t_eta) AS a", "SUM(t_w * t_mu) AS m", "SUM(t_w * t_y * t_y / t_mu) AS y2mu");
  const group = keys.length ? ` GROUP BY ${keys.join(", ")}` : "";
  return { sql: `SELECT ${sums.join(", ")} FROM ${withMu}${group}`, params: Array.from(beta) };
}

/** The score, information and figures from the cells' moments. */
export function readSums(r: EngineRows, columns: SqlColumn[], constants: SumsConstants): PoissonSums {
  const p = columns.length;
  const { factors, features, featureOf } = sumsLayout(columns);
  const col = (name: string) => r.columns[r.names.indexOf(name)] ?? [];
  const keyCols = factors.map((k) => col(k));
  const num = (name: string) => col(name).map((v) => Number(v));
  const rAt = features.map((_, a) => num(`r${a}`));
  const mAt = features.map((_, a) => features.map((_, b) => num(a >= b ? `m${a}_${b}` : `m${b}_${a}`)));
  const score = new Float64Array(p);
  const information = new Float64Array(p * p);
  const cells = r.columns[0]?.length ?? 0;
  const on = new Uint8Array(p);
  let a = 0,
    m = 0,
    y2mu = 0;
  const aAt = num("a"),
    mAt0 = num("m"),
    y2At = num("y2mu");
  for (let i = 0; i < cells; i++) {
    columns.forEach((c, j) => {
      on[j] = c.levels.every((l) => String(keyCols[factors.indexOf(l.factor)][i]) === l.level) ? 1 : 0;
    });
    for (let j = 0; j < p; j++) {
      if (!on[j]) continue;
      score[j] += rAt[featureOf[j]][i];
      for (let k = 0; k <= j; k++) if (on[k]) information[j * p + k] += mAt[featureOf[j]][featureOf[k]][i];
    }
    a += aAt[i];
    m += mAt0[i];
    y2mu += y2At[i];
  }
  const { y, ylny, lnFactorial } = constants;
  const deviance = 2 * (ylny - a - y + m);
  const pearson = y2mu - 2 * y + m;
  const logLik = a - m - lnFactorial;
  for (let j = 0; j < p; j++) for (let k = 0; k < j; k++) information[k * p + j] = information[j * p + k];
  return { score, information, deviance, pearson, logLik };
}
