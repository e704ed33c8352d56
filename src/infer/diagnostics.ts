// Diagnostics for pictures: rootogram frequencies and randomized quantile residuals.
import { negbinCdf, poissonCdf } from "../math/distributions.js";
import { normalQuantile } from "../math/distributions.js";
import { lgamma } from "../math/distributions.js";
import { uniformGenerator } from "../math/random.js";
import { predictiveTable } from "./predictive.js";

/** P(Y = k) under the Poisson (alpha = 0) or NB2 with mean mu. */
export function countPmf(k: number, mu: number, alpha: number): number {
  if (mu <= 0) return k === 0 ? 1 : 0;
  if (alpha > 0) {
    const r = 1 / alpha;
    return Math.exp(
      lgamma(k + r) - lgamma(r) - lgamma(k + 1) + r * Math.log(r / (r + mu)) + k * Math.log(mu / (r + mu)),
    );
  }
  return Math.exp(k * Math.log(mu) - mu - lgamma(k + 1));
}

export interface Rootogram {
  /**
   * The lower end of each bar's bin: with binWidth 1 every count value has its
   * own bar; larger counts are put in bins of binWidth values, so that every
   * observed count is shown and none is cut off.
   */
  counts: number[];
  binWidth: number;
  observed: number[];
  expected: number[];
  /** Beyond the last bin: no row is there (the bins reach the largest count); the expected frequency that is. */
  tailObserved: number;
  tailExpected: number;
}

/** Bars at most; larger counts are binned. */
const MAX_BARS = 60;

/**
 * Observed and expected frequencies of each count value, or of bins of count
 * values (Tukey 1977's rootogram plots their square roots): expected =
 * Σ_i w_i·P(Y_i in bin), from each row's fitted distribution (see
 * predictive.ts). The bins reach the largest count; the expected frequencies,
 * tail included, sum to the number of rows.
 */
export function rootogram(y: Float64Array, mu: Float64Array, alpha: number, weights: Float64Array | null): Rootogram {
  let top = 0;
  for (let i = 0; i < y.length; i++) if (y[i] > top) top = y[i];
  const binWidth =
    [1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10000].find((w) => Math.ceil((top + 1) / w) <= MAX_BARS) ??
    Math.ceil((top + 1) / MAX_BARS);
  const bins = Math.ceil((top + 1) / binWidth);
  const observed = new Array(bins).fill(0);
  const expected = new Array(bins).fill(0);
  let tailExp = 0;
  const one = new Float64Array(1),
    oneAlpha = Float64Array.of(alpha);
  for (let i = 0; i < y.length; i++) {
    const w = weights ? weights[i] : 1;
    observed[Math.floor(y[i] / binWidth)] += w;
    one[0] = mu[i];
    const { pmf } = predictiveTable(one, oneAlpha, null);
    let inside = 0;
    const end = Math.min(pmf.length, bins * binWidth);
    for (let k = 0; k < end; k++) {
      expected[Math.floor(k / binWidth)] += w * pmf[k];
      inside += pmf[k];
    }
    tailExp += w * Math.max(0, 1 - inside);
  }
  const counts = observed.map((_, j) => j * binWidth);
  return { counts, binWidth, observed, expected, tailObserved: 0, tailExpected: tailExp };
}

/**
 * Randomized quantile residuals (Dunn and Smyth 1996, J. Computational and
 * Graphical Statistics 5:236–244): r = Φ⁻¹(u), u uniform between F(y − 1) and
 * F(y) of the fitted distribution; standard normal when the model is right.
 */
export function quantileResiduals(y: Float64Array, mu: Float64Array, alpha: number, seed = 1): Float64Array {
  const u = uniformGenerator(seed);
  const out = new Float64Array(y.length);
  for (let i = 0; i < y.length; i++) {
    const cdf = (k: number) => (alpha > 0 ? negbinCdf(k, mu[i], alpha) : poissonCdf(k, mu[i]));
    const a = y[i] > 0 ? cdf(y[i] - 1) : 0;
    const b = cdf(y[i]);
    const p = a + u() * (b - a);
    out[i] = normalQuantile(Math.min(1 - 1e-16, Math.max(1e-16, p)));
  }
  return out;
}
