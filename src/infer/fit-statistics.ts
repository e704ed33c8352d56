// Figures of a fit that every report and test shares: Pearson chi-square,
// log-likelihood, information criteria, residual degrees of freedom, the
// quasi-Poisson dispersion and the boundary test of alpha = 0.
import type { Design } from "../design/design.js";
import { logDensityAt, variance } from "../fit/family.js";
import type { GlmFit } from "../fit/kernel/types.js";
import { chiSquareUpperTail } from "../math/distributions.js";

/**
 * Goodness-of-fit figures that do not depend on how the standard errors are
 * made. `negbin` counts alpha as a parameter even when it is estimated at 0.
 */
export function fitStatistics(design: Design, fit: GlmFit, negbin = fit.alpha > 0) {
  const { y, weights } = design;
  const density = logDensityAt(fit.alpha);
  let pearson = 0,
    ll = 0,
    nEff = 0;
  for (let i = 0; i < y.length; i++) {
    const w = weights ? weights[i] : 1;
    nEff += w;
    const mu = fit.mu[i];
    if (mu > 0) pearson += (w * (y[i] - mu) ** 2) / variance(mu, fit.alpha);
    ll += w * density(y[i], mu);
  }
  const c = design.collapsed;
  if (c?.y2e) {
    // Covariate patterns merged in the engine: the row-level figures from their sums (design/collapsed.ts).
    pearson = 0;
    for (let p = 0; p < y.length; p++) {
      const mu = fit.mu[p];
      if (mu > 0) pearson += (c.y2e[p] * Math.exp(design.offset[p])) / mu - 2 * y[p] + mu;
    }
    ll += c.logLikShift;
    nEff = c.observations;
  }
  if (c?.figures) {
    // Per-iteration sums: the engine summed the rows at the estimate.
    pearson = c.figures.pearson;
    ll = c.figures.logLik;
    nEff = c.observations;
  }
  let k = 0;
  for (const s of fit.status) if (s === "estimated" || s === "no_events") k++;
  const nPar = k + (negbin ? 1 : 0);
  const df = nEff - k;
  return {
    pearson,
    logLik: ll,
    nEff,
    nCoef: k,
    nPar,
    df,
    aic: -2 * ll + 2 * nPar,
    bic: -2 * ll + Math.log(nEff) * nPar,
  };
}

/** Residual degrees of freedom: rows (summed weights) less the coefficients estimated or at −∞. */
export function residualDf(design: Design, fit: GlmFit): number {
  let nEff = design.collapsed && !design.weights ? design.collapsed.observations : design.n;
  if (design.weights) {
    nEff = 0;
    for (let i = 0; i < design.n; i++) nEff += design.weights[i];
  }
  let k = 0;
  for (const s of fit.status) if (s === "estimated" || s === "no_events") k++;
  return nEff - k;
}

/** Quasi-Poisson dispersion phi = Pearson chi-square / residual df (McCullagh and Nelder 1989, §4.5.2). */
export function quasiPhi(design: Design, fit: GlmFit): number {
  const st = fitStatistics(design, fit);
  return st.df > 0 ? st.pearson / st.df : NaN;
}

/** Likelihood-ratio test of alpha = 0 on the boundary: p = ½·P(χ²₁ ≥ LR) (Self and Liang 1987). */
export function boundaryLrTest(llNegbin: number, llPoisson: number): { stat: number; p: number } {
  const stat = Math.max(0, 2 * (llNegbin - llPoisson));
  return { stat, p: stat > 0 ? 0.5 * chiSquareUpperTail(stat, 1) : 1 };
}
