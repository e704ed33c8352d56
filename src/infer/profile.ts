// Profile-likelihood limits: the set of values b of one coefficient whose
// likelihood-ratio statistic against the maximum, with the other parameters
// re-maximised, stays below the chi-square(1) quantile (Venzon and Moolgavkar
// 1988 describe the problem; here each side's crossing is found by
// bracketing outward from the Wald limit and Brent's root finder).
import { brentRoot } from "./roots.js";

export interface ProfileSide {
  /** The limit on the coefficient (log) scale; null when open or not computed. */
  value: number | null;
  /** True when the profile never reaches the critical value on this side. */
  open: boolean;
  reason?: string;
}

export interface ProfileResult {
  lower: ProfileSide;
  upper: ProfileSide;
  evaluations: number;
}

/** Largest distance searched on the log scale (a rate ratio of e^40 ≈ 2·10¹⁷). */
const REACH = 40;

function searchSide(stat: (b: number) => number, bhat: number, step0: number, crit: number, dir: 1 | -1, count: { n: number }): ProfileSide {
  let inner = bhat;
  let sInner = 0;
  let step = step0;
  let b = bhat + dir * step;
  let s: number;
  let flat = 0;
  for (;;) {
    try { s = stat(b); count.n++; } catch (e) {
      return { value: null, open: false, reason: `the constrained fit failed at log rate ratio ${b.toPrecision(4)} (${(e as Error).message})` };
    }
    if (s >= crit) break;
    if (s - sInner < 1e-7) flat++; else flat = 0;
    if (Math.abs(b - bhat) >= REACH || flat >= 3)
      return { value: null, open: true, reason: "the likelihood does not fall enough on this side: the data put no bound here" };
    inner = b; sInner = s;
    step *= 2;
    b = Math.max(bhat - REACH, Math.min(bhat + REACH, b + dir * step));
  }
  const root = brentRoot((x) => { count.n++; return stat(x) - crit; }, inner, b, 1e-10, 100, sInner - crit, s - crit);
  return { value: root, open: false };
}

/** Profile limits around an estimate, starting from the Wald half-width. */
export function profileLimits(stat: (b: number) => number, bhat: number, waldHalfWidth: number, crit: number): ProfileResult {
  const count = { n: 0 };
  const step = Number.isFinite(waldHalfWidth) && waldHalfWidth > 0 ? waldHalfWidth : 1;
  const lower = searchSide(stat, bhat, step, crit, -1, count);
  const upper = searchSide(stat, bhat, step, crit, 1, count);
  return { lower, upper, evaluations: count.n };
}

/**
 * Upper limit for a coefficient whose estimate is −∞ (a level with no events):
 * the statistic rises from 0 at −∞; `guess` is a starting value near the crossing.
 */
export function profileUpperFromMinusInfinity(stat: (b: number) => number, guess: number, crit: number): ProfileResult {
  const count = { n: 0 };
  let lo = guess, hi = guess;
  let sLo = stat(lo); count.n++;
  let sHi = sLo;
  let step = 1;
  if (sLo >= crit) {
    while (sLo >= crit) { hi = lo; sHi = sLo; lo -= step; step *= 2; sLo = stat(lo); count.n++; if (step > 1e3) break; }
  } else {
    while (sHi < crit) { lo = hi; sLo = sHi; hi += step; step *= 2; sHi = stat(hi); count.n++; if (step > 1e3) break; }
  }
  if (!(sLo < crit && sHi >= crit))
    return { lower: { value: null, open: true, reason: "no events: the rate ratio can be 0" }, upper: { value: null, open: false, reason: "the profile could not be bracketed" }, evaluations: count.n };
  const root = brentRoot((x) => { count.n++; return stat(x) - crit; }, lo, hi, 1e-10, 100, sLo - crit, sHi - crit);
  return { lower: { value: null, open: true, reason: "no events: the rate ratio can be 0" }, upper: { value: root, open: false }, evaluations: count.n };
}
