// Tail probabilities and quantiles. Special functions come from the @stdlib
// packages (ports of the FreeBSD/Cephes/Boost routines) so that tiny tail
// probabilities keep their relative accuracy; quantiles of the normal and
// Student t come from jStat, which refines them by Newton steps.
import erfc from "@stdlib/math-base-special-erfc";
import gammainc from "@stdlib/math-base-special-gammainc";
import gammaincinv from "@stdlib/math-base-special-gammaincinv";
import gammalnStd from "@stdlib/math-base-special-gammaln";
import digammaStd from "@stdlib/math-base-special-digamma";
import trigammaStd from "@stdlib/math-base-special-trigamma";
import jstatPkg from "jstat";

const { jStat } = jstatPkg;

export const lgamma: (x: number) => number = gammalnStd;
export const digamma: (x: number) => number = digammaStd;
export const trigamma: (x: number) => number = trigammaStd;

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
