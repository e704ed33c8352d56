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
import { negbinCdf, poissonCdf } from "../math/distributions.js";
import { normalGenerator } from "../math/random.js";

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
}

/** Smallest k with F(k) ≥ q (0 < q < 1) for a non-decreasing F on the whole numbers, searched out from `start`. */
export function quantile(F: (k: number) => number, q: number, start: number): number {
  let hi = Math.max(0, Math.floor(start));
  let step = Math.max(1, Math.ceil(Math.sqrt(hi + 1)));
  let lo: number;
  if (F(hi) >= q) {
    lo = hi - step;
    while (lo >= 0 && F(lo) >= q) {
      hi = lo;
      step *= 2;
      lo = hi - step;
    }
    lo = Math.max(lo, -1); // F(−1) = 0 < q
  } else {
    lo = hi;
    hi = lo + step;
    while (F(hi) < q) {
      lo = hi;
      step *= 2;
      hi = lo + step;
      if (hi > 1e15) return Infinity;
    }
  }
  while (hi - lo > 1) {
    const mid = Math.floor((lo + hi) / 2);
    if (F(mid) >= q) hi = mid;
    else lo = mid;
  }
  return hi;
}

export function predictRows(pd: PredictionDesign, saved: ModelFile, o: PredictOptions): PredictResult {
  const p = pd.columns.length;
  const covIndex = new Map(saved.covariance.terms.map((t, k) => [t, k]));
  const q = saved.covariance.terms.length;
  const beta = new Float64Array(p);
  const pos = new Int32Array(p).fill(-1);
  saved.coefficients.forEach((c, j) => {
    beta[j] = c.status === "estimated" ? c.estimate! : c.status === "no_events" ? -Infinity : NaN;
    if (c.status === "estimated") pos[j] = covIndex.get(c.term) ?? -1;
  });
  const phi = saved.family === "quasipoisson" ? saved.dispersion_phi : 1;
  const v = new Float64Array(q * q);
  for (let r = 0; r < q; r++) for (let c = 0; c < q; c++) v[r * q + c] = saved.covariance.matrix[r][c] * phi;
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
  const alpha = saved.family === "negbin" ? (saved.alpha ?? 0) : 0;
  const alphas = new Float64Array(D).fill(alpha);
  if (alpha > 0 && saved.alpha_std_error) {
    const sd = saved.alpha_std_error / alpha; // log alpha ~ N(log alpha-hat, (se/alpha)²)
    for (let d = 0; d < D; d++) alphas[d] = alpha * Math.exp(sd * gen());
  }
  const zq = normalQuantile(1 - (1 - o.level) / 2);
  const rows: PredictedRow[] = [];
  const mus = new Float64Array(D);
  const idx: number[] = [];
  const val: number[] = [];
  for (let i = 0; i < pd.n; i++) {
    idx.length = 0;
    val.length = 0;
    let eta = pd.offset[i];
    let zero = false;
    for (const s of pd.matrix.slots) {
      const c = s.cols === null ? s.colStart : s.cols[i];
      if (c < 0) continue;
      const x = s.values === null ? 1 : s.values[i];
      if (beta[c] === -Infinity && x !== 0) zero = true;
      if (pos[c] < 0) continue;
      eta += beta[c] * x;
      idx.push(pos[c]);
      val.push(x);
    }
    const obs = Number.isNaN(pd.observed[i]) ? null : pd.observed[i];
    if (zero || eta === -Infinity) {
      rows.push({
        row: i + 2,
        expected: 0,
        mean_ci: [0, 0],
        prediction_interval: [0, 0],
        observed: obs,
        upper_tail_p: obs === null ? null : obs === 0 ? 1 : 0,
        flag_limit: 0,
        flagged: obs !== null && obs > 0,
      });
      continue;
    }
    let varEta = 0;
    for (let a = 0; a < idx.length; a++)
      for (let b = 0; b < idx.length; b++) varEta += val[a] * val[b] * v[idx[a] * q + idx[b]];
    const se = Math.sqrt(Math.max(0, varEta));
    const expected = Math.exp(eta);
    for (let d = 0; d < D; d++) {
      let e = eta;
      for (let a = 0; a < idx.length; a++) e += dev[d * q + idx[a]] * val[a];
      mus[d] = Math.exp(e);
    }
    const cdf = (k: number): number => {
      let s = 0;
      for (let d = 0; d < D; d++) {
        const m = mus[d];
        // Quasi-Poisson: a negative binomial with the same mean and variance phi·mu.
        const a = saved.family === "quasipoisson" ? (phi > 1 ? (phi - 1) / m : 0) : alphas[d];
        s += a > 0 ? negbinCdf(k, m, a) : poissonCdf(k, m);
      }
      return s / D;
    };
    const tail = (1 - o.level) / 2;
    const lo = quantile(cdf, tail, expected);
    const hi = quantile(cdf, 1 - tail, expected);
    const limit = quantile(cdf, o.flagLevel, hi);
    const upper = obs === null ? null : obs === 0 ? 1 : Math.max(0, 1 - cdf(obs - 1));
    rows.push({
      row: i + 2,
      expected,
      mean_ci: [Math.exp(eta - zq * se), Math.exp(eta + zq * se)],
      prediction_interval: [lo, hi],
      observed: obs,
      upper_tail_p: upper,
      flag_limit: limit,
      flagged: obs !== null && obs > limit,
    });
  }
  const method =
    `mean interval: delta method on the log scale (Wald ${o.level}); prediction interval and tail probability: the ${saved.family === "negbin" ? "negative-binomial" : saved.family === "quasipoisson" ? "negative binomial with variance phi·mu" : "Poisson"} ` +
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
  };
}
