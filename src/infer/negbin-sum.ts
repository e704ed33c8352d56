// The distribution of a total of independent NB2 counts with a common alpha
// and different means (a clinic's week of days): T = Σ Y_i has probability
// generating function Π_i (1 + αμ_i(1 − s))^(−1/α), the exponential of a
// power series, which gives the recursion
//   p_0 = Π_i (1 + αμ_i)^(−1/α),   k·p_k = Σ_{j=1..k} c_j·p_{k−j},
//   c_j = (1/α)·Σ_i q_i^j,  q_i = αμ_i/(1 + αμ_i)
// (the convolution of negative binomials as a compound Poisson sum; Furman
// 2007, Statist. Probab. Lett. 77:169–172, recalled from memory). Exact up to
// rounding; the terms are kept on a rescaled scale so that nothing under- or
// overflows, and c_j is cut where it falls below 1e-24 of c_1 (in the far tail
// every term of the sum is of a size, so the cut sets the relative accuracy of
// probabilities down to about 1e-12 of the largest, to about 1e-9).

const BIG = 1e280;
const LOG_BIG = Math.log(BIG);

/** How far a total's table must reach: mean + 20 standard deviations + 30 (and past `atLeast`). */
export function negbinSumReach(mus: ArrayLike<number>, alpha: number, atLeast = 0): number {
  let m = 0,
    v = 0;
  for (let i = 0; i < mus.length; i++) {
    m += mus[i];
    v += mus[i] + alpha * mus[i] * mus[i];
  }
  return Math.max(Math.ceil(m + 20 * Math.sqrt(v) + 30), atLeast + 1);
}

/** Number of terms c_j the recursion uses before they fall below 1e-24 of c_1. */
export function negbinSumTerms(mus: ArrayLike<number>, alpha: number, reach: number): number {
  let qMax = 0;
  for (let i = 0; i < mus.length; i++) qMax = Math.max(qMax, (alpha * mus[i]) / (1 + alpha * mus[i]));
  if (qMax <= 0) return 1;
  return Math.min(reach, Math.ceil(Math.log(1e-24) / Math.log(qMax)) + 1);
}

/**
 * P(T = k) for k = 0 … reach (alpha > 0; means ≥ 0). With `stopAfter`, the
 * table ends early, past that count and the mean, once what is left of the
 * tail is below 1e-16 of both the largest probability and the tail from that count.
 */
export function negbinSumPmf(mus: ArrayLike<number>, alpha: number, reach: number, stopAfter?: number): Float64Array {
  const n = mus.length;
  const q = new Float64Array(n);
  let logP0 = 0;
  for (let i = 0; i < n; i++) {
    q[i] = (alpha * mus[i]) / (1 + alpha * mus[i]);
    logP0 -= Math.log1p(alpha * mus[i]) / alpha;
  }
  const J = negbinSumTerms(mus, alpha, reach);
  const c = new Float64Array(J + 1);
  const pow = Float64Array.from(q);
  for (let j = 1; j <= J; j++) {
    let s = 0;
    for (let i = 0; i < n; i++) {
      s += pow[i];
      pow[i] *= q[i];
    }
    c[j] = s / alpha;
  }
  let mean = 0;
  for (let i = 0; i < n; i++) mean += mus[i];
  const p = new Float64Array(reach + 1);
  p[0] = 1;
  let logScale = 0;
  // For the early stop: the largest term so far, and the terms from stopAfter on (rescaled units).
  let peak = 1;
  let tail = stopAfter === 0 ? 1 : 0;
  let end = reach;
  for (let k = 1; k <= reach; k++) {
    let s = 0;
    const top = Math.min(k, J);
    for (let j = 1; j <= top; j++) s += c[j] * p[k - j];
    p[k] = s / k;
    if (p[k] > BIG) {
      for (let j = 0; j <= k; j++) p[j] /= BIG;
      peak /= BIG;
      tail /= BIG;
      logScale += LOG_BIG;
    }
    if (stopAfter !== undefined) {
      if (p[k] > peak) peak = p[k];
      if (k >= stopAfter) tail += p[k];
      // Past the mean and the observed count the terms fall; what is left is below p_k·ρ/(1 − ρ), ρ the last
      // ratio (the ratios fall toward max q_i), so stop when that is negligible beside the peak and the tail.
      const rho = p[k - 1] > 0 ? p[k] / p[k - 1] : 1;
      if (k > stopAfter && k > mean && rho < 1 && (p[k] * rho) / (1 - rho) < 1e-16 * Math.min(peak, tail)) {
        end = k;
        break;
      }
    }
  }
  const w = logP0 + logScale;
  const out = new Float64Array(end + 1);
  for (let k = 0; k <= end; k++) out[k] = p[k] > 0 ? Math.exp(Math.log(p[k]) + w) : 0;
  return out;
}
