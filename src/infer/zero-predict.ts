// Predictions of new rows under an excess-zero family. Given a draw of the
// estimates (the count part, the zero part and log alpha drawn jointly from
// the saved covariance), a row's count has the zero-modified distribution of
// its family:
//   zero-inflated (Lambert 1992):  P(0) = π + (1 − π)·f(0),  P(k) = (1 − π)·f(k);
//   hurdle (Mullahy 1986):         P(0) = 1 − p,             P(k) = p·f(k)/(1 − f(0)),
// with f the Poisson or NB2 of mean λ; the predictive distribution is the
// mixture of these over the draws, as for the plain families (predict.ts).
import type { PredictionDesign } from "../design/predict-design.js";
import type { ModelFile } from "../io/model-file.js";
import { drawMeans, type PredictOptions, type PredictedRow, type Prepared, prepare, rowLinear } from "./predict.js";
import { addDraw, flagLimit, predictiveTable, tableQuantile } from "./predictive.js";

/** log f(0) of the count part: −λ (Poisson) or −log(1 + αλ)/α (NB2). */
export function logZeroProbability(lambda: number, alpha: number): number {
  return alpha > 0 ? -Math.log1p(alpha * lambda) / alpha : -lambda;
}

/** The mean of the zero-modified count: (1 − π)·λ, or p·λ/(1 − f(0)). */
export function zeroModifiedMean(lambda: number, alpha: number, prob: number, hurdle: boolean): number {
  if (!hurdle) return (1 - prob) * lambda;
  const positive = -Math.expm1(logZeroProbability(lambda, alpha));
  // As λ → 0 the truncated count is 1 with certainty.
  return positive > 0 ? (prob * lambda) / positive : prob;
}

/**
 * One draw's zero-modified distribution (pmf from 0), and its upper tail at
 * `observed` (kept to relative accuracy in the far tail as predictiveTable does).
 */
export function zeroModifiedPmf(
  lambda: number,
  alpha: number,
  prob: number,
  hurdle: boolean,
  observed: number | null,
): { pmf: Float64Array; upperTail: number | null } {
  const base = predictiveTable(Float64Array.of(lambda), Float64Array.of(alpha), observed);
  const pmf = Float64Array.from(base.pmf.length >= 2 ? base.pmf : [base.pmf[0] ?? 1, 0]);
  let scale: number;
  if (hurdle) {
    const positive = -Math.expm1(logZeroProbability(lambda, alpha));
    if (!(positive > 0)) {
      // λ → 0: a count past the hurdle is 1.
      pmf.fill(0);
      pmf[0] = 1 - prob;
      pmf[1] = prob;
      return { pmf, upperTail: observed === null ? null : observed === 0 ? 1 : observed === 1 ? prob : 0 };
    }
    scale = prob / positive;
    for (let k = 1; k < pmf.length; k++) pmf[k] *= scale;
    pmf[0] = 1 - prob;
  } else {
    scale = 1 - prob;
    for (let k = 0; k < pmf.length; k++) pmf[k] *= scale;
    pmf[0] += prob;
  }
  const upperTail = observed === null ? null : observed === 0 ? 1 : Math.min(1, scale * (base.upperTail ?? 0));
  return { pmf, upperTail };
}

/** Row i's zero-part linear predictor at the estimates, with the drawn columns it uses (zidx) and their values. */
export function zeroLinear(pd: PredictionDesign, prep: Prepared, i: number, zidx: number[], zval: number[]): number {
  zidx.length = 0;
  zval.length = 0;
  let zeta = 0;
  for (const s of pd.zeroPart!.matrix.slots) {
    const c = s.cols === null ? s.colStart : s.cols[i];
    if (c < 0) continue;
    const x = s.values === null ? 1 : s.values[i];
    zeta += prep.gamma[c] * x;
    if (prep.zpos[c] >= 0) {
      zidx.push(prep.zpos[c]);
      zval.push(x);
    }
  }
  return zeta;
}

/** The zero part's probability (π or p) under each draw (into probs). */
export function drawProbabilities(prep: Prepared, zeta: number, zidx: number[], zval: number[], probs: Float64Array) {
  const { dev, q } = prep;
  for (let d = 0; d < probs.length; d++) {
    let e = zeta;
    for (let a = 0; a < zidx.length; a++) e += dev[d * q + zidx[a]] * zval[a];
    probs[d] = 1 / (1 + Math.exp(-e));
  }
}

/** A row's count mean λ and zero-part probability under every draw, and both at the estimates. */
export interface ZeroRowDraws {
  lambdas: Float64Array;
  probs: Float64Array;
  lambda: number;
  prob: number;
}

export function zeroRowDraws(pd: PredictionDesign, prep: Prepared, i: number, draws: number): ZeroRowDraws {
  const idx: number[] = [],
    val: number[] = [],
    zidx: number[] = [],
    zval: number[] = [];
  const { eta } = rowLinear(pd, prep, i, idx, val);
  const lambdas = new Float64Array(draws);
  drawMeans(prep, eta, idx, val, lambdas);
  const zeta = zeroLinear(pd, prep, i, zidx, zval);
  const probs = new Float64Array(draws);
  drawProbabilities(prep, zeta, zidx, zval, probs);
  return { lambdas, probs, lambda: Math.exp(eta), prob: 1 / (1 + Math.exp(-zeta)) };
}

/** The predictions of rows from … to − 1 (0-based) of the new rows under an excess-zero family. */
export function predictZeroRange(
  pd: PredictionDesign,
  saved: ModelFile,
  o: PredictOptions,
  from: number,
  to: number,
): PredictedRow[] {
  const prep = prepare(pd, saved, o);
  const hurdle = saved.zero_part!.probability_of === "non_zero_count";
  const D = o.draws;
  const tail = (1 - o.level) / 2;
  const rows: PredictedRow[] = [];
  const means = new Float64Array(D);
  for (let i = from; i < to; i++) {
    const obs = Number.isNaN(pd.observed[i]) ? null : pd.observed[i];
    const r = zeroRowDraws(pd, prep, i, D);
    let pmf: Float64Array = new Float64Array(1);
    let upperTail = 0;
    for (let d = 0; d < D; d++) {
      const one = zeroModifiedPmf(r.lambdas[d], prep.alphas[d], r.probs[d], hurdle, obs);
      pmf = addDraw(pmf, one.pmf, D);
      upperTail += (one.upperTail ?? 0) / D;
      means[d] = zeroModifiedMean(r.lambdas[d], prep.alphas[d], r.probs[d], hurdle);
    }
    const sorted = Float64Array.from(means).sort();
    const at = (p: number) => sorted[Math.min(D - 1, Math.max(0, Math.round(p * (D - 1))))];
    const { limit, chance } = flagLimit(pmf, o.flagLevel);
    rows.push({
      row: pd.fileRows ? pd.fileRows[i] : i + 2,
      expected: zeroModifiedMean(r.lambda, prep.alpha, r.prob, hurdle),
      mean_ci: [at(tail), at(1 - tail)],
      prediction_interval: [tableQuantile(pmf, tail), tableQuantile(pmf, 1 - tail)],
      observed: obs,
      upper_tail_p: obs === null ? null : obs === 0 ? 1 : Math.min(1, upperTail),
      flag_limit: limit,
      flagged: obs !== null && obs > limit,
      flag_chance: chance,
      note: null,
    });
  }
  return rows;
}
