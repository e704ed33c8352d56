// Expected counts for new rows with an interval for the mean (delta method on
// the log scale) and a prediction interval for a new count that carries the
// uncertainty of the estimates: coefficients (and log alpha) are drawn from
// their asymptotic normal distribution, and the predictive distribution is the
// mixture of the fitted count distribution over the draws.
import type { PredictionDesign } from "../design/predict-design.js";
import { InputError } from "../errors.js";
import { cholesky } from "../math/linalg.js";
import type { ModelFile } from "../io/model-file.js";
import { normalQuantile } from "../math/distributions.js";
import { normalGenerator } from "../math/random.js";
import { predictiveTable, flagLimit, tableQuantile } from "./predictive.js";

export interface PredictOptions {
  level: number;
  flagLevel: number;
  draws: number;
  seed: number;
}

export interface PredictedRow {
  row: number;
  expected: number;
  mean_ci: [number, number];
  prediction_interval: [number, number];
  observed: number | null;
  upper_tail_p: number | null;
  /** The largest count not flagged: the flag-level quantile of the predictive distribution. */
  flag_limit: number;
  flagged: boolean;
  /** The chance that this row is flagged when the model holds (the tail beyond flag_limit). */
  flag_chance: number;
  /** With --adjust: the adjusted upper-tail p-value the flag then follows. */
  adjusted_p?: number | null;
  /** Why a row is predicted differently (a level with no events), or null. */
  note: string | null;
  /** With --id: the row's identifying columns as written. */
  id?: Record<string, string>;
}

export interface GroupFlag {
  group: string;
  rows: number;
  /** The observed total (null when a row of the group has no count). */
  observed: number | null;
  expected: number;
  prediction_interval: [number, number];
  /** The largest total not flagged: the flag-level quantile of the total's predictive distribution. */
  flag_limit: number;
  upper_tail_p: number | null;
  /** The chance that this group is flagged when the model holds. */
  flag_chance: number;
  /** With --adjust: the adjusted upper-tail p-value the flag then follows. */
  adjusted_p?: number | null;
  flagged: boolean;
}

export interface PredictResult {
  schema: "tallyfit.predict/1";
  model: string;
  family: string;
  level: number;
  flag_level: number;
  draws: number;
  seed: number;
  method: string;
  rows: PredictedRow[];
  n_flagged: number;
  /** none, holm or bh: how the flags allow for the number of rows (and groups) tested. */
  adjustment: "none" | "holm" | "bh";
  /** The flags expected by chance alone when the model holds (without adjustment): over the rows, and the groups. */
  chance_flags: { rows: number; groups: number | null };
  /** With --flag-by: the grouping columns, the groups' totals and flags. */
  flag_by?: string[];
  groups?: GroupFlag[];
  n_groups_flagged?: number;
  group_method?: string;
  /** With --skip-bad-rows: the rows that could not be predicted, and why. */
  skipped?: { row: number; reason: string }[];
  /** What the reader should know about these predictions (dates outside the fitted span, …). */
  warnings: string[];
}

/** What every row's prediction shares: coefficients, the covariance, and the draws (the same for every row range). */
export interface Prepared {
  beta: Float64Array;
  pos: Int32Array;
  upper: Float64Array;
  v: Float64Array;
  q: number;
  dev: Float64Array;
  alphas: Float64Array;
  alpha: number;
  phi: number;
  zq: number;
  quasi: boolean;
  /** Excess-zero families: the zero part's estimates, their positions in the covariance (−1: held fixed). */
  gamma: Float64Array;
  zpos: Int32Array;
}

export function prepare(pd: PredictionDesign, saved: ModelFile, o: PredictOptions): Prepared {
  const p = pd.columns.length;
  const covIndex = new Map(saved.covariance.terms.map((t, k) => [t, k]));
  // Excess-zero families: the covariance is joint over the count part, the zero part and log alpha.
  const zeroTerms = saved.covariance.zero_terms ?? [];
  const q = saved.covariance.terms.length + zeroTerms.length + (saved.covariance.log_alpha ? 1 : 0);
  const zeroIndex = new Map(zeroTerms.map((t, k) => [t, saved.covariance.terms.length + k]));
  const zeroCoefficients = saved.zero_part?.coefficients ?? [];
  const gamma = Float64Array.from(zeroCoefficients, (c) => c.estimate);
  const zpos = Int32Array.from(zeroCoefficients, (c) => zeroIndex.get(c.term) ?? -1);
  const beta = new Float64Array(p);
  const pos = new Int32Array(p).fill(-1);
  // A level with no events: its estimate is −∞ (a rate of 0), but the data only say the rate is small, so its
  // rows are predicted at the upper profile limit saved with the model (a conservative plug-in of the largest
  // rate the data allow at that level), and say so.
  const upper = new Float64Array(p).fill(NaN);
  saved.coefficients.forEach((c, j) => {
    beta[j] = c.status === "estimated" ? c.estimate! : c.status === "no_events" ? -Infinity : NaN;
    if (c.status === "estimated") pos[j] = covIndex.get(c.term) ?? -1;
    if (c.status === "no_events" && typeof c.upper_limit === "number") upper[j] = c.upper_limit;
  });
  const phi = saved.family === "quasipoisson" ? saved.dispersion_phi : 1;
  const v = new Float64Array(q * q);
  // A model-based quasi-Poisson covariance is scaled by phi here; a cluster-robust one is final as saved.
  const covScale = saved.covariance.type && saved.covariance.type !== "model" ? 1 : phi;
  for (let r = 0; r < q; r++) for (let c = 0; c < q; c++) v[r * q + c] = saved.covariance.matrix[r][c] * covScale;
  const l = q > 0 ? cholesky({ p: q, data: v }) : new Float64Array(0);
  if (l === null)
    throw new InputError("the saved covariance matrix is not positive definite; refit and save the model again.");

  // Draws of the coefficient deviations L·z (shared by all rows) and of alpha.
  const gen = normalGenerator(o.seed);
  const D = o.draws;
  const dev = new Float64Array(D * q);
  const z = new Float64Array(q);
  for (let d = 0; d < D; d++) {
    for (let k = 0; k < q; k++) z[k] = gen();
    for (let r = 0; r < q; r++) {
      let s = 0;
      for (let k = 0; k <= r; k++) s += l[r * q + k] * z[k];
      dev[d * q + r] = s;
    }
  }
  const alpha = typeof saved.alpha === "number" ? saved.alpha : 0;
  const alphas = new Float64Array(D).fill(alpha);
  if (alpha > 0 && saved.covariance.log_alpha) {
    // Drawn jointly with the coefficients: log alpha is the covariance's last row.
    for (let d = 0; d < D; d++) alphas[d] = alpha * Math.exp(dev[d * q + q - 1]);
  } else if (alpha > 0 && saved.alpha_std_error) {
    const sd = saved.alpha_std_error / alpha; // log alpha ~ N(log alpha-hat, (se/alpha)²)
    for (let d = 0; d < D; d++) alphas[d] = alpha * Math.exp(sd * gen());
  }
  const zq = normalQuantile(1 - (1 - o.level) / 2);
  const quasi = saved.family === "quasipoisson";
  return { beta, pos, upper, v, q, dev, alphas, alpha, phi, zq, quasi, gamma, zpos };
}

/**
 * Row i's linear predictor at the estimates (a level with no events at its
 * upper limit), with the estimated columns it uses (idx, positions in the
 * covariance) and their values (val), both refilled; zero when the row's
 * rate is 0 (a no-events level without a saved limit).
 */
export function rowLinear(
  pd: PredictionDesign,
  prep: Prepared,
  i: number,
  idx: number[],
  val: number[],
): { eta: number; zero: boolean; atLimit: number | null } {
  const { beta, pos, upper } = prep;
  idx.length = 0;
  val.length = 0;
  let eta = pd.offset[i];
  let zero = false;
  let atLimit: number | null = null;
  for (const s of pd.matrix.slots) {
    const c = s.cols === null ? s.colStart : s.cols[i];
    if (c < 0) continue;
    const x = s.values === null ? 1 : s.values[i];
    if (beta[c] === -Infinity && x !== 0) {
      if (Number.isFinite(upper[c])) {
        eta += upper[c] * x;
        atLimit = c;
      } else zero = true;
    }
    if (pos[c] < 0) continue;
    eta += beta[c] * x;
    idx.push(pos[c]);
    val.push(x);
  }
  return { eta, zero, atLimit };
}

/** The rows of each group (ids 0 … count − 1), and each group's observed total (null when a row has no count). */
export function groupMembers(
  pd: PredictionDesign,
  ids: Int32Array,
  count: number,
): { members: number[][]; observed: (number | null)[] } {
  const members: number[][] = Array.from({ length: count }, () => []);
  for (let i = 0; i < pd.n; i++) members[ids[i]].push(i);
  const observed = members.map((rows) => {
    let total: number | null = 0;
    for (const i of rows) total = Number.isNaN(pd.observed[i]) || total === null ? null : total + pd.observed[i];
    return total;
  });
  return { members, observed };
}

/** The row's mean under each draw of the estimates (into mus). */
export function drawMeans(prep: Prepared, eta: number, idx: number[], val: number[], mus: Float64Array): void {
  const { dev, q } = prep;
  for (let d = 0; d < mus.length; d++) {
    let e = eta;
    for (let a = 0; a < idx.length; a++) e += dev[d * q + idx[a]] * val[a];
    mus[d] = Math.exp(e);
  }
}

/** The predictions of rows from … to − 1 (0-based) of the new rows. */
export function predictRange(
  pd: PredictionDesign,
  saved: ModelFile,
  o: PredictOptions,
  from: number,
  to: number,
): PredictedRow[] {
  const prep = prepare(pd, saved, o);
  const { upper, v, q, alphas, phi, zq, quasi } = prep;
  const D = o.draws;
  const rows: PredictedRow[] = [];
  const mus = new Float64Array(D);
  const idx: number[] = [];
  const val: number[] = [];
  for (let i = from; i < to; i++) {
    const { eta, zero, atLimit } = rowLinear(pd, prep, i, idx, val);
    const obs = Number.isNaN(pd.observed[i]) ? null : pd.observed[i];
    if (zero || eta === -Infinity) {
      rows.push({
        row: pd.fileRows ? pd.fileRows[i] : i + 2,
        expected: 0,
        mean_ci: [0, 0],
        prediction_interval: [0, 0],
        observed: obs,
        upper_tail_p: obs === null ? null : obs === 0 ? 1 : 0,
        flag_limit: 0,
        flagged: obs !== null && obs > 0,
        flag_chance: 0,
        note: zero
          ? "a level with no events in the fitted data and no upper limit in the model file (saved by an older version): its rate is taken as 0; refit and save the model to predict with its upper profile limit"
          : null,
      });
      continue;
    }
    let varEta = 0;
    for (let a = 0; a < idx.length; a++)
      for (let b = 0; b < idx.length; b++) varEta += val[a] * val[b] * v[idx[a] * q + idx[b]];
    const se = Math.sqrt(Math.max(0, varEta));
    const expected = atLimit === null ? Math.exp(eta) : 0;
    drawMeans(prep, eta, idx, val, mus);
    // Quasi-Poisson: a negative binomial with the same mean and variance phi·mu.
    const dispersion = quasi ? (m: number) => (phi > 1 ? (phi - 1) / m : 0) : alphas;
    const table = predictiveTable(mus, dispersion, obs);
    const tail = (1 - o.level) / 2;
    const lo = tableQuantile(table.pmf, tail);
    const hi = tableQuantile(table.pmf, 1 - tail);
    const { limit, chance } = flagLimit(table.pmf, o.flagLevel);
    const upperTail = table.upperTail;
    const limitNote =
      atLimit === null
        ? null
        : `${saved.coefficients[atLimit].term} had no events in the fitted data, so its estimate is a rate of 0; the mean interval, prediction interval, tail probability and flag use its upper ${saved.coefficients[atLimit].upper_limit_level ?? ""} profile limit (rate ratio ${Math.exp(upper[atLimit]).toPrecision(4)}), the largest rate the data allow`;
    rows.push({
      row: pd.fileRows ? pd.fileRows[i] : i + 2,
      expected,
      mean_ci: atLimit === null ? [Math.exp(eta - zq * se), Math.exp(eta + zq * se)] : [0, Math.exp(eta)],
      // At a no-events level the rate may be 0, so the interval for a new count starts at 0.
      prediction_interval: [atLimit === null ? lo : 0, hi],
      observed: obs,
      upper_tail_p: upperTail,
      flag_limit: limit,
      flagged: obs !== null && obs > limit,
      flag_chance: chance,
      note: limitNote,
    });
  }
  return rows;
}

/** How the predictions of an excess-zero family are made. */
function zeroMethod(saved: ModelFile, o: PredictOptions): string {
  const hurdle = saved.zero_part?.probability_of === "non_zero_count";
  const count = saved.alpha !== null ? "NB2" : "Poisson";
  const parts = saved.zero_part?.boundary ? "the count part's coefficients" : "both parts' coefficients";
  const drawn = saved.covariance.log_alpha ? `${parts} and log alpha` : parts;
  const tail = +((1 - o.level) / 2).toPrecision(6);
  return (
    `expected count ${hurdle ? "p·λ/(1 − f(0))" : "(1 − π)·λ"} at the estimates; mean interval: the ${tail} and ${+(1 - tail).toPrecision(6)} quantiles of that mean over the draws; ` +
    `prediction interval and tail probability: the ${hurdle ? "hurdle" : "zero-inflated"} ${count} distribution mixed over ${o.draws} joint draws of ${drawn} from their asymptotic normal distribution (${saved.covariance.type ?? "model"} covariance; seed ${o.seed}); flagged when the observed count is above the ${o.flagLevel} quantile`
  );
}

/** The result record around the rows' predictions. */
export function predictResult(saved: ModelFile, o: PredictOptions, rows: PredictedRow[]): PredictResult {
  const D = o.draws;
  const alpha = saved.family === "negbin" ? (saved.alpha ?? 0) : 0;
  const method = saved.zero_part
    ? zeroMethod(saved, o)
    : `mean interval: delta method on the log scale (Wald ${o.level}); prediction interval and tail probability: the ${saved.family === "negbin" ? "negative-binomial" : saved.family === "quasipoisson" ? "negative binomial with variance phi·mu" : "Poisson"} ` +
      `distribution mixed over ${D} draws of the coefficients${alpha > 0 ? " and log alpha" : ""} from their asymptotic normal distribution (seed ${o.seed}); flagged when the observed count is above the ${o.flagLevel} quantile`;
  return {
    schema: "tallyfit.predict/1",
    model: saved.model,
    family: saved.family,
    level: o.level,
    flag_level: o.flagLevel,
    draws: D,
    seed: o.seed,
    method,
    rows,
    n_flagged: rows.filter((r) => r.flagged).length,
    adjustment: "none",
    chance_flags: { rows: rows.reduce((a, r) => a + r.flag_chance, 0), groups: null },
    warnings: [],
  };
}
