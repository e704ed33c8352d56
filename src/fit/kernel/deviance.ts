// The total deviance over the rows in the fit, from the per-count tables
// when the counts are whole (McCullagh and Nelder 1989, §2.3).
import { CountTable } from "../count-table.js";
import { unitDeviance } from "../family.js";
import type { PassTables } from "./passes.js";

/**
 * Total deviance Σ w·d(y, mu) over rows [from, to), using log mu = eta: Poisson 2[y log y − y·eta − (y − mu)],
 * NB2 2[y log y − y·eta − (y + r){log(1 + alpha·y) − log(1 + alpha·mu)}].
 */
export function totalDeviance(
  y: Float64Array,
  mu: Float64Array,
  eta: Float64Array,
  pw: Float64Array | null,
  inFit: Uint8Array,
  alpha: number,
  tab: PassTables | null,
  from = 0,
  to = y.length,
): number {
  let d = 0;
  if (tab) {
    const yl = tab.ylogy,
      cnt = tab.counts;
    if (alpha === 0) {
      for (let i = from; i < to; i++) {
        if (!inFit[i]) continue;
        const k = cnt[i],
          m = mu[i];
        const u = yl[k] - k * eta[i] - (k - m);
        d += pw === null ? u : pw[i] * u;
      }
    } else {
      const nb = tab.negbinDeviance,
        r = 1 / alpha;
      for (let i = from; i < to; i++) {
        if (!inFit[i]) continue;
        const k = cnt[i],
          m = mu[i];
        const u = yl[k] - k * eta[i] - nb[k] + (k + r) * Math.log1p(alpha * m);
        d += pw === null ? u : pw[i] * u;
      }
    }
    return 2 * d;
  }
  for (let i = from; i < to; i++) if (inFit[i]) d += (pw ? pw[i] : 1) * unitDeviance(y[i], mu[i], alpha);
  return d;
}

/** Total deviance Σ w·d(y, mu) over the rows in the fit, given log mu = eta (see totalDeviance). */
export function devianceAt(
  y: Float64Array,
  mu: Float64Array,
  eta: Float64Array,
  pw: Float64Array | null,
  inFit: Uint8Array,
  alpha: number,
): number {
  return totalDeviance(y, mu, eta, pw, inFit, alpha, CountTable.of(y, alpha));
}
