// Diagnostics for pictures: rootogram frequencies and randomized quantile residuals.
import { negbinCdf, poissonCdf } from "../math/distributions.js";
import { normalQuantile } from "../math/distributions.js";
import { lgamma } from "../math/distributions.js";
import { uniformGenerator } from "../math/random.js";

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
  /** Count values 0..max shown as bars. */
  counts: number[];
  observed: number[];
  expected: number[];
  /** Rows with counts above the last bar, observed and expected. */
  tailObserved: number;
  tailExpected: number;
}

/**
 * Observed and expected frequencies of each count value (Tukey 1977's
 * rootogram plots their square roots): expected_k = Σ_i w_i·P(Y_i = k).
 * The expected frequencies, tail included, sum to the number of rows.
 */
export function rootogram(
  y: Float64Array,
  mu: Float64Array,
  alpha: number,
  weights: Float64Array | null,
  maxCount = 100,
): Rootogram {
  let top = 0;
  for (let i = 0; i < y.length; i++) if (y[i] > top) top = y[i];
  const K = Math.min(top, maxCount);
  const observed = new Array(K + 1).fill(0);
  const expected = new Array(K + 1).fill(0);
  let tailObs = 0,
    tailExp = 0;
  for (let i = 0; i < y.length; i++) {
    const w = weights ? weights[i] : 1;
    if (y[i] <= K) observed[y[i]] += w;
    else tailObs += w;
    let s = 0;
    for (let k = 0; k <= K; k++) {
      const p = countPmf(k, mu[i], alpha);
      expected[k] += w * p;
      s += p;
    }
    tailExp += w * Math.max(0, 1 - s);
  }
  return { counts: observed.map((_, k) => k), observed, expected, tailObserved: tailObs, tailExpected: tailExp };
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
