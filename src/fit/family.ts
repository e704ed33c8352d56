// Count families with the log link. alpha = 0 is the Poisson; alpha > 0 is the
// NB2 negative binomial, variance = mu + alpha·mu² (Cameron and Trivedi,
// Regression Analysis of Count Data, 2nd ed., 2013, §3.3).
import { digamma, lgamma, trigamma } from "../math/distributions.js";

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

/**
 * logDensity at one alpha for many rows, with its count-only terms (log y!,
 * and for the NB2 log Γ(y + r) − log Γ(r)) computed once per whole count
 * below 65,536: the same expression in the same order, so the same value.
 */
export function logDensityAt(alpha: number): (y: number, mu: number) => number {
  const CACHE = 65536;
  const r = alpha === 0 ? 0 : 1 / alpha;
  // Per whole count y below CACHE: log y! and log Γ(y + r) − log Γ(r), filled on first use.
  const lgy = new Float64Array(CACHE),
    ratio = new Float64Array(CACHE);
  const filled = new Uint8Array(CACHE);
  const fill = (y: number) => {
    lgy[y] = lgamma(y + 1);
    if (alpha > 0) ratio[y] = lgammaRatio(y, r);
    filled[y] = 1;
  };
  const small = (y: number) => y >= 0 && y < CACHE && Number.isInteger(y);
  const logFactorial = (y: number) => {
    if (!small(y)) return lgamma(y + 1);
    if (!filled[y]) fill(y);
    return lgy[y];
  };
  const lgRatio = (y: number) => {
    if (!small(y)) return lgammaRatio(y, r);
    if (!filled[y]) fill(y);
    return ratio[y];
  };
  if (alpha === 0)
    return (y, mu) => {
      if (mu === 0) return y === 0 ? 0 : -Infinity;
      return y * Math.log(mu) - mu - logFactorial(y);
    };
  return (y, mu) => {
    if (mu === 0) return y === 0 ? 0 : -Infinity;
    const lg = lgRatio(y);
    return lg - logFactorial(y) - r * Math.log1p(alpha * mu) + y * (Math.log(alpha * mu) - Math.log1p(alpha * mu));
  };
}

/** log Γ(y + r) − log Γ(r): a direct sum for small whole y, or when r is so large that the lgamma difference would cancel. */
export function lgammaRatio(y: number, r: number): number {
  if (y === 0) return 0;
  if (y <= 16 || (y <= 256 && r > 1e5)) {
    let s = 0;
    for (let k = 0; k < y; k++) s += Math.log(r + k);
    return s;
  }
  // Large r: Stirling's series for the difference, (r + y − ½)·log(1 + y/r) + y·log r − y + 1/(12(r + y)) − 1/(12r)
  // (the next terms are O(r⁻³)), where the lgamma difference itself would cancel.
  if (r > 1e5) return (r + y - 0.5) * Math.log1p(y / r) + y * Math.log(r) - y + (1 / (r + y) - 1 / r) / 12;
  return lgamma(y + r) - lgamma(r);
}

/** Σ_{j<y} 1/(r+j) and Σ_{j<y} 1/(r+j)², directly for small y, else by digamma/trigamma differences. */
export function harmonic(y: number, r: number): [number, number] {
  if (y <= 16 || (y <= 256 && r > 1e5)) {
    let d = 0,
      e = 0;
    for (let j = 0; j < y; j++) {
      const t = 1 / (r + j);
      d += t;
      e += t * t;
    }
    return [d, e];
  }
  // Large r: ψ(x) ≈ log x − 1/(2x) − 1/(12x²) and ψ′(x) ≈ 1/x + 1/(2x²) + 1/(6x³), differenced without cancellation.
  if (r > 1e5) {
    const s = r + y;
    return [
      Math.log1p(y / r) - (1 / s - 1 / r) / 2 - (1 / (s * s) - 1 / (r * r)) / 12,
      y / (r * s) + (1 / (r * r) - 1 / (s * s)) / 2 + (1 / (r * r * r) - 1 / (s * s * s)) / 6,
    ];
  }
  return [digamma(y + r) - digamma(r), trigamma(r) - trigamma(y + r)];
}

/** Harmonic sums Σ_{j<k} 1/(r+j) and Σ_{j<k} 1/(r+j)² for k = 0 … top. */
export function harmonicTables(top: number, r: number): { d: Float64Array; e: Float64Array } {
  const tabD = new Float64Array(top + 1),
    tabE = new Float64Array(top + 1);
  let d = 0,
    e = 0;
  for (let k = 0; k <= top; k++) {
    if (k > 0) {
      const t = 1 / (r + k - 1);
      d += t;
      e += t * t;
    }
    tabD[k] = d;
    tabE[k] = e;
  }
  // Long running sums drift by rounding: refresh the tail from digamma/trigamma.
  for (let k = 64; k <= top; k += 64) {
    const [dd, ee] = harmonic(k, r);
    tabD[k] = dd;
    tabE[k] = ee;
    for (let j = k + 1; j < Math.min(top + 1, k + 64); j++) {
      const t = 1 / (r + j - 1);
      tabD[j] = tabD[j - 1] + t;
      tabE[j] = tabE[j - 1] + t * t;
    }
  }
  return { d: tabD, e: tabE };
}

/**
 * ∂ℓ/∂α and ∂²ℓ/∂α² of the NB2 log-likelihood from five row sums (Cameron
 * and Trivedi 2013, §3.3), with q = 1 + α·mu, l = log q and the harmonic sums
 * d = Σ_{j<y} 1/(r+j), e = Σ_{j<y} 1/(r+j)² (r = 1/α), each weighted:
 * s1 = Σ(l − d), s2 = Σ(y − mu)/q, s3 = Σ mu/q, s4 = Σ e, s5 = Σ(y − mu)(1 + 2α·mu)/q².
 *   g = s1/α² + s2/α,  h = −2·s1/α³ + s3/α² − s4/α⁴ − s5/α²
 */
export function alphaDerivativesFromSums(s: ArrayLike<number>, alpha: number): { g: number; h: number } {
  const a2 = alpha * alpha;
  return { g: s[0] / a2 + s[1] / alpha, h: (-2 * s[0]) / (a2 * alpha) + s[2] / a2 - s[3] / (a2 * a2) - s[4] / a2 };
}

/** log Γ(k + r) − log Γ(r) − log k! for k = 0 … top: the count-only terms of the NB2 log-likelihood at r = 1/alpha. */
export function negbinCountTerms(top: number, r: number): Float64Array {
  const tab = new Float64Array(top + 1);
  for (let k = 0; k <= top; k++) tab[k] = lgammaRatio(k, r) - lgamma(k + 1);
  return tab;
}
