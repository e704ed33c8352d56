// Fitting stage entry point: chooses the family and returns the fit with the
// figures that need a second fit (the null deviance), and the constrained
// fits that profile likelihoods need.
import type { Design } from "../design/design.js";
import { FitError } from "../errors.js";
import type { FamilyName } from "../infer/summary.js";
import { poissonNullDeviance } from "../infer/summary.js";
import { fitGlm, linearPredictorFrom, prepareFit, type FitControl, type FitSetup, type GlmFit } from "./irls.js";

export type FamilyChoice = "poisson" | "quasipoisson" | "negbin" | "auto";

export interface ModelFit {
  family: FamilyName;
  fit: GlmFit;
  nullDeviance: number;
  control: FitControl;
}

export interface FitModelOptions {
  family: FamilyChoice;
  control?: Partial<FitControl>;
}

/** Fit the model; a fit that does not meet the convergence rule is a FitError (exit 3). */
export function fitModel(design: Design, options: FitModelOptions): ModelFit {
  if (options.family === "negbin" || options.family === "auto") throw new FitError(`family '${options.family}' is not available in this build.`);
  const control = { maxIter: 50, tolerance: 1e-10, ...options.control };
  const fit = fitGlm(design.matrix, design, { control });
  if (!fit.converged)
    throw new FitError(
      `IRLS did not converge in ${fit.iterations} iterations (deviance ${fit.deviance}); raise --max-iter or --tolerance, or simplify the model.`,
    );
  return { family: options.family, fit, nullDeviance: poissonNullDeviance(design), control };
}

/**
 * The likelihood-ratio statistic 2(ℓ̂ − ℓ(b)) with coefficient `col` held at b
 * and every other parameter re-maximised (for the Poisson this is the
 * deviance difference D(b) − D̂). Warm-starts each fit from the previous one.
 */
export function constrainedStatistic(design: Design, mf: ModelFit, col: number): (b: number) => number {
  let setup: FitSetup | null = null;
  let start: Float64Array = new Float64Array(mf.fit.beta);
  const control = { maxIter: 100, tolerance: Math.min(mf.control.tolerance, 1e-12) };
  return (b: number) => {
    const fixed = new Map([[col, b]]);
    if (setup === null) setup = prepareFit(design.matrix, design, fixed);
    const f = fitGlm(design.matrix, design, { fixed, setup, start, control, alpha: mf.fit.alpha });
    if (f.warnings.length === 0) start = f.beta;
    return Math.max(0, f.deviance - mf.fit.deviance);
  };
}

/** A starting value for the upper limit of a no-events coefficient: where 2·e^b·E reaches crit. */
export function noEventsGuess(design: Design, mf: ModelFit, col: number, crit: number): number {
  const beta = new Float64Array(mf.fit.beta);
  beta[col] = 0;
  const eta = linearPredictorFrom(design.matrix, beta, design.offset);
  let e = 0;
  for (const s of design.matrix.slots) {
    if (s.cols === null) continue;
    for (let i = 0; i < design.n; i++) if (s.cols[i] === col && Number.isFinite(eta[i])) e += (design.weights ? design.weights[i] : 1) * Math.exp(eta[i]);
  }
  return e > 0 && Number.isFinite(e) ? Math.log(crit / (2 * e)) : 0;
}
