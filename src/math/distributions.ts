// Tail probabilities and quantiles. Special functions come from the @stdlib
// packages (ports of the FreeBSD/Cephes/Boost routines) so that tiny tail
// probabilities keep their relative accuracy; quantiles of the normal and
// Student t come from jStat, which refines them by Newton steps.
import { lazyModule as lazy } from "./lazy.js";

type F1 = (x: number) => number;
const erfcFn = lazy<F1>("@stdlib/math-base-special-erfc");
const gammaincFn = lazy<(x: number, a: number, regularized?: boolean, upper?: boolean) => number>(
  "@stdlib/math-base-special-gammainc",
);
const gammaincinvFn = lazy<(p: number, a: number, upper?: boolean) => number>("@stdlib/math-base-special-gammaincinv");
const gammalnFn = lazy<F1>("@stdlib/math-base-special-gammaln");
const digammaFn = lazy<F1>("@stdlib/math-base-special-digamma");
const trigammaFn = lazy<F1>("@stdlib/math-base-special-trigamma");
const betaincFn = lazy<(x: number, a: number, b: number) => number>("@stdlib/math-base-special-betainc");
type Dist2 = { cdf(x: number, a: number, b: number): number; inv(p: number, a: number, b: number): number };
type Dist1 = { cdf(x: number, a: number): number; inv(p: number, a: number): number };
const jstatFn = lazy<{ jStat: { normal: Dist2; chisquare: Dist1; studentt: Dist1; centralF: Dist2 } }>("jstat");

const erfc: F1 = (x) => erfcFn()(x);
const gammainc = (x: number, a: number, regularized?: boolean, upper?: boolean) =>
  gammaincFn()(x, a, regularized, upper);
const gammaincinv = (p: number, a: number) => gammaincinvFn()(p, a);
const jStat = {
  get normal() {
    return jstatFn().jStat.normal;
  },
  get studentt() {
    return jstatFn().jStat.studentt;
  },
  get centralF() {
    return jstatFn().jStat.centralF;
  },
};

export const lgamma: F1 = (x) => gammalnFn()(x);
export const digamma: F1 = (x) => digammaFn()(x);
export const trigamma: F1 = (x) => trigammaFn()(x);

/** Two-sided p-value of a standard normal statistic, 2·Φ(−|z|) = erfc(|z|/√2). */
export function normalTwoSidedP(z: number): number {
  if (!Number.isFinite(z)) return Number.isNaN(z) ? NaN : 0;
  return erfc(Math.abs(z) / Math.SQRT2);
}

/** Upper tail of the standard normal, 1 − Φ(z) = erfc(z/√2)/2. */
export function normalUpperTail(z: number): number {
  return 0.5 * erfc(z / Math.SQRT2);
}

/** Standard normal quantile Φ⁻¹(p). */
export function normalQuantile(p: number): number {
  return jStat.normal.inv(p, 0, 1);
}

/** Upper tail P(X ≥ x) of chi-square with df degrees of freedom: Q(df/2, x/2). */
export function chiSquareUpperTail(x: number, df: number): number {
  if (!(df > 0)) return NaN;
  if (!(x > 0)) return 1;
  if (x === Infinity) return 0;
  return gammainc(x / 2, df / 2, true, true);
}

/** Chi-square quantile: the x with P(X ≤ x) = p, from the inverse regularised incomplete gamma. */
export function chiSquareQuantile(p: number, df: number): number {
  if (p <= 0) return 0;
  if (p >= 1) return Infinity;
  return 2 * gammaincinv(p, df / 2);
}

/** Upper tail of Student's t, two-sided. */
export function studentTwoSidedP(t: number, df: number): number {
  if (!Number.isFinite(df)) return normalTwoSidedP(t);
  const c = jStat.studentt.cdf(-Math.abs(t), df);
  return 2 * c;
}

export function studentQuantile(p: number, df: number): number {
  if (!Number.isFinite(df)) return normalQuantile(p);
  return jStat.studentt.inv(p, df);
}

/** Upper tail of the F distribution. */
export function fUpperTail(f: number, df1: number, df2: number): number {
  if (!(f > 0)) return 1;
  return 1 - jStat.centralF.cdf(f, df1, df2);
}

/** Quantile of the F distribution on (df1, df2): the f with P(F ≤ f) = p. */
export function fQuantile(p: number, df1: number, df2: number): number {
  return jStat.centralF.inv(p, df1, df2);
}

/** P(Y ≤ k) for a Poisson(mu): the upper regularised incomplete gamma Q(k + 1, mu). */
export function poissonCdf(k: number, mu: number): number {
  if (k < 0) return 0;
  if (mu <= 0) return 1;
  return gammainc(mu, k + 1, true, true);
}

/** P(Y ≤ k) for the NB2 with mean mu and dispersion alpha: I_p(1/alpha, k + 1), p = 1/(1 + alpha·mu). */
export function negbinCdf(k: number, mu: number, alpha: number): number {
  if (k < 0) return 0;
  if (mu <= 0) return 1;
  if (!(alpha > 0)) return poissonCdf(k, mu);
  const r = 1 / alpha;
  return betaincFn()(1 / (1 + alpha * mu), r, k + 1);
}
