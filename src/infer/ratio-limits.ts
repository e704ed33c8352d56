// Limits for an observed-to-expected ratio θ = O/E of a group's total count,
// under the family the model was fitted with:
//  * Poisson: the exact (Garwood 1936) limits for a Poisson count, divided by E.
//  * Quasi-Poisson: the same limits for O/φ (a Poisson count on the scale where
//    its variance equals its mean), times φ/E, with the chi-square quantiles at
//    the fractional degrees of freedom that O/φ gives.
//  * NB2: the total of independent NB2(θ·mu_i, alpha) counts, matched in mean
//    and variance by one negative binomial with mean θ·E and size
//    k = E²/(alpha·Σmu_i²) (it does not depend on θ, and it is exact when the
//    mu_i are equal, since NB2 counts with a common mean-to-size ratio add up
//    to a negative binomial); θ's limits are where P(O' ≥ O) and P(O' ≤ O)
//    reach (1 − level)/2, the tail-inversion construction of Clopper and
//    Pearson (1934) applied to that distribution, each found by Brent's method.
import { chiSquareQuantile, negbinCdf } from "../math/distributions.js";
import { brentRoot } from "../math/roots.js";
import { garwoodInterval } from "./garwood.js";

/** How the counts vary about their means under the fitted model. */
export type CountSpread =
  | { family: "poisson" }
  | { family: "quasipoisson"; phi: number }
  | { family: "negbin"; alpha: number };

export function spreadMethod(s: CountSpread): string {
  if (s.family === "negbin" && s.alpha > 0)
    return "limits of the observed total under the NB2 sum (one negative binomial with its mean and variance), divided by the expected";
  if (s.family === "quasipoisson" && s.phi > 1)
    return "quasi-Poisson: exact Poisson limits of observed/phi, times phi, divided by the expected";
  return "exact Poisson limits of the observed count, divided by the expected";
}

/** Limits of θ = O/E for a group with observed total o, expected total e and Σmu² (the NB2 needs it). */
export function ratioLimits(
  o: number,
  e: number,
  sumMu2: number,
  spread: CountSpread,
  level: number,
): [number, number] {
  const tail = (1 - level) / 2;
  if (spread.family === "quasipoisson" && spread.phi > 1) {
    const phi = spread.phi;
    const lo = o === 0 ? 0 : chiSquareQuantile(tail, (2 * o) / phi) / 2;
    const hi = chiSquareQuantile(1 - tail, (2 * o) / phi + 2) / 2;
    return [(lo * phi) / e, (hi * phi) / e];
  }
  if (spread.family === "negbin" && spread.alpha > 0 && sumMu2 > 0) {
    // Size k of the matched negative binomial; as a dispersion for negbinCdf at mean m, alpha' = 1/k.
    const a = (spread.alpha * sumMu2) / (e * e);
    const below = (t: number) => negbinCdf(o, t * e, a) - tail; // P(O' ≤ o) − tail, falls with t
    const above = (t: number) => 1 - negbinCdf(o - 1, t * e, a) - tail; // P(O' ≥ o) − tail, rises with t
    const lower = o === 0 ? 0 : solveRising(above, o / e);
    const upper = solveFalling(below, Math.max(o, 1) / e);
    return [lower, upper];
  }
  const [lo, hi] = garwoodInterval(o, level);
  return [lo / e, hi / e];
}

/** The root of a function that rises with t > 0, bracketed by doubling and halving from t0. */
function solveRising(f: (t: number) => number, t0: number): number {
  let lo = t0,
    hi = t0;
  while (f(lo) > 0 && lo > 1e-300) lo /= 2;
  while (f(hi) < 0 && hi < 1e300) hi *= 2;
  return brentRoot(f, lo, hi, 1e-13 * t0, 200);
}

function solveFalling(f: (t: number) => number, t0: number): number {
  return solveRising((t) => -f(t), t0);
}
