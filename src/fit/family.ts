// Count families with the log link. alpha = 0 is the Poisson; alpha > 0 is the
// NB2 negative binomial, variance = mu + alpha·mu² (Cameron and Trivedi,
// Regression Analysis of Count Data, 2nd ed., 2013, §3.3).
import { lgamma } from "../infer/distributions.js";

const maxCounts = new WeakMap<Float64Array, number>();
const countCodes = new WeakMap<Float64Array, Int32Array | null>();

/** Counts up to this size are tabulated: per-count terms are looked up, not recomputed per row. */
export const TABLE_LIMIT = 1 << 20;

/**
 * The largest count, remembered per array (the response does not change
 * between fits); Infinity when some count is not a whole number (the summed
 * counts of merged patterns under fractional weights), which turns off the
 * tables indexed by count.
 */
export function maxCount(y: Float64Array): number {
  let t = maxCounts.get(y);
  if (t === undefined) {
    t = 0;
    for (let i = 0; i < y.length; i++) {
      const v = y[i];
      if (v > t) t = v;
      if (v !== Math.floor(v)) { t = Infinity; break; }
    }
    maxCounts.set(y, t);
  }
  return t;
}

/** The counts as 32-bit integers for table lookups, remembered per array (null: not tabulable, see maxCount). */
export function countIndex(y: Float64Array): Int32Array | null {
  let c = countCodes.get(y);
  if (c === undefined) {
    c = maxCount(y) <= TABLE_LIMIT ? Int32Array.from(y) : null;
    countCodes.set(y, c);
  }
  return c;
}

/** Variance function V(mu). */
export function variance(mu: number, alpha: number): number {
  return mu + alpha * mu * mu;
}

/** y·log(y/mu), taken as 0 at y = 0. */
function ylogy(y: number, mu: number): number {
  return y > 0 ? y * Math.log(y / mu) : 0;
}

/** Unit deviance d(y, mu): twice the log-likelihood shortfall from the saturated fit. */
export function unitDeviance(y: number, mu: number, alpha: number): number {
  if (alpha === 0) return 2 * (ylogy(y, mu) - (y - mu));
  const r = 1 / alpha;
  // 2[y log(y/mu) − (y + 1/alpha) log((1 + alpha y)/(1 + alpha mu))]
  return 2 * (ylogy(y, mu) - (y + r) * (Math.log1p(alpha * y) - Math.log1p(alpha * mu)));
}

/** Log-likelihood of one observation, with the log y! (or log-gamma) terms. */
export function logDensity(y: number, mu: number, alpha: number): number {
  if (alpha === 0) {
    if (mu === 0) return y === 0 ? 0 : -Infinity;
    return y * Math.log(mu) - mu - lgamma(y + 1);
  }
  if (mu === 0) return y === 0 ? 0 : -Infinity;
  const r = 1 / alpha;
  // log Γ(y + r) − log Γ(r) − log y! + r log(r/(r+mu)) + y log(mu/(r+mu))
  const lg = lgammaRatio(y, r);
  return lg - lgamma(y + 1) - r * Math.log1p(alpha * mu) + y * (Math.log(alpha * mu) - Math.log1p(alpha * mu));
}

/** log Γ(y + r) − log Γ(r): a direct sum for small whole y, or when r is so large that the lgamma difference would cancel. */
export function lgammaRatio(y: number, r: number): number {
  if (y === 0) return 0;
  if (y <= 16 || (y <= 256 && r > 1e5)) {
    let s = 0;
    for (let k = 0; k < y; k++) s += Math.log(r + k);
    return s;
  }
  return lgamma(y + r) - lgamma(r);
}
