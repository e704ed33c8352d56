// The seasonal pattern of a model with annual harmonics (--season K): the
// fitted log-rate curve s(t) = Σ_k a_k·sin(2πkt/365.25) + b_k·cos(2πkt/365.25),
// its peak and trough (days after 1 January), and the peak-to-trough rate
// ratio exp(s(peak) − s(trough)) after Stolwijk, Straatman and Zielhuis
// (1999, J. Epidemiol. Community Health 53:235–238), with an interval by the
// delta method on the log scale: at the extremes the derivative in t is 0, so
// to first order only the coefficients vary, along the gradient
// (sin ωk·t_p − sin ωk·t_t, cos ωk·t_p − cos ωk·t_t).
import type { Design } from "../design/design.js";
import { YEAR_DAYS } from "../design/calendar.js";
import type { SymMatrix } from "../math/linalg.js";

export interface Seasonality {
  harmonics: number;
  /** Days after 1 January (0 ≤ day < 365.25) at which the fitted curve is highest and lowest. */
  peak_day: number;
  trough_day: number;
  peak_to_trough: number;
  peak_to_trough_ci: [number, number];
  method: string;
}

const omega = (k: number) => (2 * Math.PI * k) / YEAR_DAYS;

function curve(a: number[], b: number[], t: number): number {
  let s = 0;
  for (let k = 0; k < a.length; k++) s += a[k] * Math.sin(omega(k + 1) * t) + b[k] * Math.cos(omega(k + 1) * t);
  return s;
}

/** The t in [0, 365.25) where sign·s(t) is largest: a grid of 0.05 days, then golden-section refinement. */
function extreme(a: number[], b: number[], sign: 1 | -1): number {
  const step = 0.05;
  let best = 0,
    bestValue = -Infinity;
  for (let t = 0; t < YEAR_DAYS; t += step) {
    const v = sign * curve(a, b, t);
    if (v > bestValue) {
      bestValue = v;
      best = t;
    }
  }
  let lo = best - step,
    hi = best + step;
  const g = (Math.sqrt(5) - 1) / 2;
  for (let i = 0; i < 60; i++) {
    const x1 = hi - g * (hi - lo),
      x2 = lo + g * (hi - lo);
    if (sign * curve(a, b, x1) >= sign * curve(a, b, x2)) hi = x2;
    else lo = x1;
  }
  const t = (lo + hi) / 2;
  return ((t % YEAR_DAYS) + YEAR_DAYS) % YEAR_DAYS;
}

/**
 * The seasonality of a fit whose design has K harmonic pairs, from its
 * coefficients and their covariance `cov` over the estimable columns `pos`
 * (already final: scaled, robust or cluster-robust as reported); `crit` is
 * the interval's critical value. null when a harmonic is not estimated.
 */
export function seasonalityOf(
  design: Design,
  beta: Float64Array,
  cov: SymMatrix,
  pos: Map<number, number>,
  crit: number,
  level: number,
): Seasonality | null {
  const K = design.calendar?.season ?? 0;
  if (K === 0) return null;
  const colOf = (name: string) => design.columns.findIndex((c) => c.name === name);
  const sinCols = Array.from({ length: K }, (_, k) => colOf(`season_sin${k + 1}`));
  const cosCols = Array.from({ length: K }, (_, k) => colOf(`season_cos${k + 1}`));
  const cols = [...sinCols, ...cosCols];
  if (cols.some((c) => c < 0 || !pos.has(c))) return null;
  const a = sinCols.map((c) => beta[c]);
  const b = cosCols.map((c) => beta[c]);
  const peak = extreme(a, b, 1);
  const trough = extreme(a, b, -1);
  const logRatio = curve(a, b, peak) - curve(a, b, trough);
  const grad = [
    ...a.map((_, k) => Math.sin(omega(k + 1) * peak) - Math.sin(omega(k + 1) * trough)),
    ...b.map((_, k) => Math.cos(omega(k + 1) * peak) - Math.cos(omega(k + 1) * trough)),
  ];
  let v = 0;
  cols.forEach((ci, i) => {
    cols.forEach((cj, j) => {
      v += grad[i] * grad[j] * cov.data[pos.get(ci)! * cov.p + pos.get(cj)!];
    });
  });
  const se = Math.sqrt(Math.max(v, 0));
  return {
    harmonics: K,
    peak_day: peak,
    trough_day: trough,
    peak_to_trough: Math.exp(logRatio),
    peak_to_trough_ci: [Math.exp(logRatio - crit * se), Math.exp(logRatio + crit * se)],
    method: `delta method on the log scale, ${+(level * 100).toFixed(2)}% (Stolwijk, Straatman and Zielhuis 1999)`,
  };
}
