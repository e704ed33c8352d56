// The predictive distribution of one new count: a mixture, over draws of the
// estimates, of Poisson or NB2 distributions. Each draw's probabilities are
// built once by the ratio recurrences of the two families (Johnson, Kemp and
// Kotz, Univariate Discrete Distributions, 3rd ed., 2005, §4.2 and §5.3),
// p(k+1)/p(k) = mu/(k+1) for the Poisson and (k + r)/(k + 1) · mu/(mu + r) for
// the NB2 (r = 1/alpha), from p(0) on a rescaled scale so that nothing
// overflows; the mixture's distribution function, quantiles and upper tail
// then come from one table instead of thousands of incomplete-beta or gamma
// evaluations per query.

/** The mixture's probabilities p[k] for k = 0 … p.length − 1, and its upper tail at the observed count. */
export interface PredictiveTable {
  pmf: Float64Array;
  /** P(Y ≥ observed) summed term by term from the observed count up (keeps relative accuracy in the far tail). */
  upperTail: number | null;
}

/** Size, relative to the largest term, below which the rest of a draw's tail is left out. */
const TAIL_EPS = 1e-14;
/** The upper tail at the observed count is carried until the rest is below this share of it, times TAIL_EPS. */
const TAIL_REL = 1e4;
/** Rescale the running term when it grows past this (p(mode)/p(0) can exceed the largest double). */
const BIG = 1e280;
const LOG_BIG = Math.log(BIG);
/** No count beyond this is tabulated. */
const K_CAP = 50_000_000;

/**
 * The mixture of D distributions with means mus[d] and dispersions alphas[d]
 * (0: Poisson), each weighted 1/D; observed (or null) is the count whose upper
 * tail is wanted.
 */
export function predictiveTable(
  mus: Float64Array,
  alphas: Float64Array | ((mu: number, d: number) => number),
  observed: number | null,
): PredictiveTable {
  const D = mus.length;
  let pmf: Float64Array = new Float64Array(64);
  let used = 0;
  let tail = 0;
  let terms: Float64Array = new Float64Array(64);
  for (let d = 0; d < D; d++) {
    const m = mus[d];
    const a = typeof alphas === "function" ? alphas(m, d) : alphas[d];
    if (!(m > 0)) {
      pmf[0] += 1 / D;
      if (observed !== null && observed === 0) tail += 1 / D;
      used = Math.max(used, 1);
      continue;
    }
    const r = a > 0 ? 1 / a : Infinity;
    const q = a > 0 ? m / (m + r) : 0;
    // log p(0): −mu for the Poisson, −r·log(1 + mu/r) for the NB2.
    const log0 = a > 0 ? -r * Math.log1p(m / r) : -m;
    const mode = a > 0 ? Math.max(0, Math.floor(((r - 1) * m) / r)) : Math.floor(m);
    // Past the mode the terms fall, and what is left is below t·ρ/(1 − ρ), with ρ the largest ratio still to
    // come: the current one (Poisson, or NB2 with r > 1, whose ratios fall), else its limit mu/(mu + r).
    const rhoFixed = a > 0 && r < 1 ? q : -1;
    const from = observed === null ? mode : Math.max(mode, observed);
    if (log0 > -700 && m < 600) {
      // The common case: p(0) is a normal double and p(mode)/p(0) cannot overflow, so the terms go straight
      // into the mixture, weighted 1/D: first up to the mode (and the observed count), then on into the tail
      // until what is left is negligible.
      let t = Math.exp(log0) / D;
      if (from + 2 > pmf.length) pmf = grow(pmf, from + 2);
      let k = 0;
      let peak = 0;
      for (; k < from; k++) {
        if (k === mode) peak = t;
        pmf[k] += t;
        t *= a > 0 ? (k + r) * inv(k + 1) * q : m * inv(k + 1);
      }
      if (k === mode) peak = t;
      let tailD = 0;
      for (;;) {
        if (k >= pmf.length) pmf = grow(pmf, k + 1);
        pmf[k] += t;
        if (observed !== null) tailD += t;
        const ratio = a > 0 ? (k + r) * inv(k + 1) * q : m * inv(k + 1);
        if (t === 0) break;
        const rho = rhoFixed > 0 ? rhoFixed : ratio;
        const needed = observed !== null ? Math.min(tailD * TAIL_REL, peak) : peak;
        if (rho < 1 && t * rho <= TAIL_EPS * needed * (1 - rho)) break;
        if (k >= K_CAP) break;
        t *= ratio;
        k++;
      }
      tail += tailD;
      used = Math.max(used, k + 1);
      continue;
    }
    let logScale = log0;
    let t = 1; // p(k) / exp(logScale)
    let peak = 0;
    let k = 0;
    let tailD = 0;
    for (;;) {
      if (k >= terms.length) terms = grow(terms, k + 1);
      terms[k] = t;
      if (observed !== null && k >= observed) tailD += t;
      if (t > peak) peak = t;
      const ratio = a > 0 ? ((k + r) / (k + 1)) * q : m / (k + 1);
      if (k >= from) {
        if (t === 0) break;
        const rho = rhoFixed > 0 ? rhoFixed : ratio;
        // Relative to the draw's largest term, and to its own upper tail at the observed count.
        const needed = observed !== null ? Math.min(tailD, peak) : peak;
        if (rho < 1 && t * rho <= TAIL_EPS * needed * (1 - rho)) break;
      }
      if (k >= K_CAP) break;
      t *= ratio;
      if (t > BIG) {
        // Rescale what is stored so far (terms far below the new scale become 0, as they are negligible).
        for (let j = 0; j <= k; j++) terms[j] /= BIG;
        tailD /= BIG;
        peak /= BIG;
        t /= BIG;
        logScale += LOG_BIG;
      }
      k++;
    }
    const n = k + 1;
    if (n > pmf.length) pmf = grow(pmf, n);
    const w = Math.exp(logScale) / D;
    for (let j = 0; j < n; j++) pmf[j] += terms[j] * w;
    tail += tailD * w;
    used = Math.max(used, n);
  }
  return { pmf: pmf.subarray(0, used), upperTail: observed === null ? null : observed === 0 ? 1 : Math.min(1, tail) };
}

let inverses = Float64Array.from({ length: 1024 }, (_, k) => 1 / k);

/** 1/k from a table (a division per term would cost more than the rest of the step). */
function inv(k: number): number {
  if (k >= inverses.length) {
    if (k > 1 << 22) return 1 / k;
    inverses = Float64Array.from({ length: 2 * k }, (_, j) => 1 / j);
  }
  return inverses[k];
}

function grow(a: Float64Array, need: number): Float64Array {
  const b = new Float64Array(Math.max(need, a.length * 2));
  b.set(a);
  return b;
}

/** One draw's table added to a mixture of `draws` draws (p/draws term by term), grown when the table is longer. */
export function addDraw(mixture: Float64Array, p: Float64Array, draws: number): Float64Array {
  let out = mixture;
  if (p.length > mixture.length) {
    // Exactly as long as the longest table, so that the mixture's end is where its tables end.
    out = new Float64Array(p.length);
    out.set(mixture);
  }
  for (let k = 0; k < p.length; k++) out[k] += p[k] / draws;
  return out;
}

/** The smallest k with P(Y ≤ k) ≥ level, from the table (the table's end when the rest is negligible). */
export function tableQuantile(pmf: Float64Array, level: number): number {
  let s = 0;
  for (let k = 0; k < pmf.length; k++) {
    s += pmf[k];
    if (s >= level) return k;
  }
  return pmf.length - 1;
}

/** The flag limit (the flag-level quantile) and the chance of a count beyond it, from the table. */
export function flagLimit(pmf: Float64Array, flagLevel: number): { limit: number; chance: number } {
  const limit = tableQuantile(pmf, flagLevel);
  let below = 0;
  for (let k = 0; k <= limit && k < pmf.length; k++) below += pmf[k];
  return { limit, chance: Math.max(0, 1 - below) };
}
