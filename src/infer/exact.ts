// Exact intervals for a Poisson count and the predictive distributions of counts.
import { createRequire } from "node:module";
import { chiSquareQuantile, regularizedGammaInc as gammainc } from "./distributions.js";

const require = createRequire(import.meta.url);
let betaincFn: ((x: number, a: number, b: number) => number) | null = null;
const betainc = (x: number, a: number, b: number) => (betaincFn ??= require("@stdlib/math-base-special-betainc"))(x, a, b);

/**
 * Exact (Garwood 1936) limits for the mean of a Poisson count y:
 * [χ²(α/2; 2y)/2, χ²(1 − α/2; 2y + 2)/2], with the lower limit 0 at y = 0.
 */
export function garwoodInterval(y: number, level = 0.95): [number, number] {
  const a = 1 - level;
  const lo = y === 0 ? 0 : chiSquareQuantile(a / 2, 2 * y) / 2;
  const hi = chiSquareQuantile(1 - a / 2, 2 * y + 2) / 2;
  return [lo, hi];
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
  return betainc(1 / (1 + alpha * mu), r, k + 1);
}
