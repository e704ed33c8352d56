// Profile-likelihood limits: the set of values b of one coefficient whose
// likelihood-ratio statistic against the maximum, with the other parameters
// re-maximised, stays below the chi-square(1) quantile (Venzon and Moolgavkar
// 1988 describe the problem; here each side's crossing is found by secant
// steps on the signed root statistic from the Wald limit, safeguarded by
// Brent's root finder once bracketed).
import { brentRoot } from "../math/roots.js";

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

/**
 * One side of the profile: solve r(b) = √crit for the signed root
 * r(b) = √stat(b), which is close to linear in b, by secant steps from the
 * Wald limit; as soon as the crossing is bracketed, a secant step that leaves
 * the bracket is replaced by Brent's method on it.
 */
function searchSide(
  stat: (b: number) => number,
  bhat: number,
  step0: number,
  crit: number,
  dir: 1 | -1,
  count: { n: number },
): ProfileSide {
  const target = Math.sqrt(crit);
  const r = (b: number) => {
    count.n++;
    return Math.sqrt(stat(b));
  };
  let b0 = bhat,
    r0 = 0;
  let b1 = bhat + dir * step0;
  let r1: number;
  let inner = bhat,
    rInner = 0; // best point known to be inside (r < target)
  let outer = NaN,
    rOuter = NaN; // a point known to be outside (r ≥ target)
  let flat = 0;
  try {
    r1 = r(b1);
    for (let it = 0; it < 60; it++) {
      if (r1 < target) {
        if (Math.abs(b1 - bhat) > Math.abs(inner - bhat)) {
          inner = b1;
          rInner = r1;
        }
      } else if (Number.isNaN(outer) || Math.abs(b1 - bhat) < Math.abs(outer - bhat)) {
        outer = b1;
        rOuter = r1;
      }
      if (Math.abs(r1 - target) < 1e-10 * target) return { value: b1, open: false };
      if (!Number.isNaN(outer)) {
        // Bracketed: a secant step inside the bracket, else Brent on it.
        const slope = (r1 - r0) / (b1 - b0);
        const next = slope !== 0 && Number.isFinite(slope) ? b1 + (target - r1) / slope : NaN;
        const lo = Math.min(inner, outer),
          hi = Math.max(inner, outer);
        if (!(next > lo && next < hi) || it > 8) {
          const root = brentRoot((x) => r(x) - target, inner, outer, 1e-11, 100, rInner - target, rOuter - target);
          return { value: root, open: false };
        }
        if (Math.abs(next - b1) < 1e-11 * (1 + Math.abs(b1))) return { value: next, open: false };
        b0 = b1;
        r0 = r1;
        b1 = next;
        r1 = r(b1);
        continue;
      }
      // Not yet bracketed: extrapolate the secant outward, at least doubling the distance.
      const slope = (r1 - r0) / (b1 - b0);
      if (r1 - r0 < 1e-7) flat++;
      else flat = 0;
      if (Math.abs(b1 - bhat) >= REACH || flat >= 3)
        return {
          value: null,
          open: true,
          reason: "the likelihood does not fall enough on this side: the data put no bound here",
        };
      let next = slope > 0 ? b1 + (target - r1) / slope : NaN;
      const far = bhat + 2 * (b1 - bhat);
      if (!Number.isFinite(next) || dir * (next - b1) <= 0) next = far;
      next = dir > 0 ? Math.min(next, far, bhat + REACH) : Math.max(next, far, bhat - REACH);
      // Overshoot slightly so the next point tends to bracket the crossing.
      next = b1 + 1.02 * (next - b1);
      b0 = b1;
      r0 = r1;
      b1 = next;
      r1 = r(b1);
    }
  } catch (e) {
    return {
      value: null,
      open: false,
      reason: `the constrained fit failed near log rate ratio ${b1.toPrecision(4)} (${(e as Error).message})`,
    };
  }
  return { value: null, open: false, reason: "the profile search did not settle" };
}

/** Profile limits around an estimate, starting from the Wald half-width. */
export function profileLimits(
  stat: (b: number) => number,
  bhat: number,
  waldHalfWidth: number,
  crit: number,
): ProfileResult {
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
  let lo = guess,
    hi = guess;
  let sLo = stat(lo);
  count.n++;
  let sHi = sLo;
  let step = 1;
  if (sLo >= crit) {
    while (sLo >= crit) {
      hi = lo;
      sHi = sLo;
      lo -= step;
      step *= 2;
      sLo = stat(lo);
      count.n++;
      if (step > 1e3) break;
    }
  } else {
    while (sHi < crit) {
      lo = hi;
      sLo = sHi;
      hi += step;
      step *= 2;
      sHi = stat(hi);
      count.n++;
      if (step > 1e3) break;
    }
  }
  if (!(sLo < crit && sHi >= crit))
    return {
      lower: { value: null, open: true, reason: "no events: the rate ratio can be 0" },
      upper: { value: null, open: false, reason: "the profile could not be bracketed" },
      evaluations: count.n,
    };
  const root = brentRoot(
    (x) => {
      count.n++;
      return stat(x) - crit;
    },
    lo,
    hi,
    1e-10,
    100,
    sLo - crit,
    sHi - crit,
  );
  return {
    lower: { value: null, open: true, reason: "no events: the rate ratio can be 0" },
    upper: { value: root, open: false },
    evaluations: count.n,
  };
}
