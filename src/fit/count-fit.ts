// Fitting stage entry point: fits the requested family and the figures that
// need a second fit (the intercept-only deviance, the Poisson fit beneath a negative
// binomial), and the constrained fits that profile likelihoods need.
import type { Design } from "../design/design.js";
import type { PatternMerge } from "../design/patterns.js";
import { FitError } from "../errors.js";
import { CountTable } from "./count-table.js";
import { unitDeviance } from "./family.js";
import { DEFAULT_CONTROL, type FitControl, type FitSetup, type GlmFit, type Workspace } from "./kernel/types.js";
import { deriveSetup, prepareFit } from "./kernel/setup.js";
import { devianceAt } from "./kernel/deviance.js";
import { driftWarnings, fitGlm } from "./kernel/glm.js";
import { linearPredictorFrom } from "../design/matrix-columns.js";
import { fitNegbin, negbinLogLik } from "./negbin.js";

export type FamilyName = "poisson" | "negbin" | "quasipoisson";
export type FamilyChoice = FamilyName | "auto";

export interface NegbinPart {
  alpha: number;
  alphaStdError: number | null;
  boundary: boolean;
  logLik: number;
  poissonLogLik: number;
  /** Coefficients of the Poisson fit beneath (estimated or at −∞), for its AIC; its means are not kept (memory). */
  poissonParameters: number;
  outerIterations: number;
}

export interface CountFit {
  family: FamilyName;
  fit: GlmFit;
  nullDeviance: number;
  control: FitControl;
  negbin: NegbinPart | null;
  /**
   * When IRLS ran over merged covariate patterns: the merge and the fit on the
   * patterns, which the constrained fits of term tests and profiles reuse.
   * Everything else in this record is per row of the design.
   */
  patterns: { merge: PatternMerge; fit: CountFit } | null;
}

/**
 * What the constrained fits of term tests and profile limits need of a fit:
 * a CountFit is one; fitBaseOf makes a lean copy to send to a worker thread.
 */
export interface FitBase {
  family: FamilyName;
  control: FitControl;
  fit: Pick<GlmFit, "beta" | "status" | "setup" | "deviance">;
  negbin: Pick<NegbinPart, "alpha" | "logLik" | "boundary"> | null;
}

/** The parts of a fit that constrained fits use, without per-row arrays they rebuild or do not need. */
export function fitBaseOf(mf: FitBase): FitBase {
  const s = mf.fit.setup;
  return {
    family: mf.family,
    control: mf.control,
    fit: {
      beta: mf.fit.beta,
      status: mf.fit.status,
      deviance: mf.fit.deviance,
      setup: {
        status: s.status,
        inFit: s.inFit,
        active: s.active,
        order: s.order,
        center: s.center,
        scale: s.scale,
        rowsAtZero: s.rowsAtZero,
        cells: s.cells,
        parentCells: s.parentCells,
        slotValues: s.slotValues,
      },
    },
    negbin: mf.negbin ? { alpha: mf.negbin.alpha, logLik: mf.negbin.logLik, boundary: mf.negbin.boundary } : null,
  };
}

export interface FitModelOptions {
  family: FamilyName;
  control?: Partial<FitControl>;
  /** Fit over these merged patterns of the design (see design/patterns.ts), then return per-row results. */
  patterns?: PatternMerge | null;
  /** Progress: called after each IRLS iteration of the model's own fits. */
  onIteration?: (iteration: number, deviance: number) => void;
  /**
   * Negative binomial: the Poisson model it starts from and is tested against,
   * already fitted on these rows (a CountFit of family poisson, merged or not).
   */
  poisson?: CountFit;
}

/** Deviance of the model with only an intercept (same offset, weights and alpha): the yardstick for how much the terms explain. */
export function nullDeviance(design: Design, alpha: number): number {
  const { y, offset, weights } = design;
  if (design.matrix.interceptCol < 0) {
    let d = 0;
    for (let i = 0; i < y.length; i++) d += (weights ? weights[i] : 1) * unitDeviance(y[i], Math.exp(offset[i]), alpha);
    return d;
  }
  if (alpha === 0) {
    // Poisson closed form: exp(b0) = Σwy / Σw·exp(offset); the deviance is
    // 2Σw[y log y − y(offset + b0)] (Σw(y − mu) = 0 at b0), y log y tabulated by count.
    let sy = 0,
      se = 0;
    for (let i = 0; i < y.length; i++) {
      const w = weights ? weights[i] : 1;
      sy += w * y[i];
      se += w * Math.exp(offset[i]);
    }
    const b0 = Math.log(sy / se);
    const table = CountTable.of(y, 0);
    if (table === null) {
      let d = 0;
      for (let i = 0; i < y.length; i++)
        d += (weights ? weights[i] : 1) * unitDeviance(y[i], (Math.exp(offset[i]) * sy) / se, 0);
      return d;
    }
    const { counts, ylogy } = table;
    let d = 0;
    for (let i = 0; i < counts.length; i++) {
      const k = counts[i];
      d += (weights ? weights[i] : 1) * (ylogy[k] - k * (offset[i] + b0));
    }
    return 2 * d;
  }
  // The exposures themselves when the offset is only their log (no copy of a column of the rows' length).
  return negbinInterceptOnlyDeviance(
    y,
    offset,
    weights,
    alpha,
    design.exposure && design.offsetName === null ? design.exposure : null,
  );
}

/**
 * NB2 deviance of the intercept-only model at fixed alpha: Newton's method on
 * the one coefficient b0 (score Σw(y − mu)/(1 + α·mu), observed information
 * Σw·mu(1 + α·y)/(1 + α·mu)², mu = exposure·e^b0), kept inside a bracket on
 * the sign of the score, from the Poisson value log(Σwy / Σw·exposure).
 */
function negbinInterceptOnlyDeviance(
  y: Float64Array,
  offset: Float64Array,
  weights: Float64Array | null,
  alpha: number,
  exposure: Float64Array | null,
): number {
  const n = y.length;
  const ex = exposure ?? Float64Array.from(offset, Math.exp);
  let sy = 0,
    se = 0;
  for (let i = 0; i < n; i++) {
    const w = weights ? weights[i] : 1;
    sy += w * y[i];
    se += w * ex[i];
  }
  let b = Math.log(sy / se),
    lo = -Infinity,
    hi = Infinity;
  for (let it = 0; it < 200; it++) {
    const c = Math.exp(b);
    let score = 0,
      info = 0;
    for (let i = 0; i < n; i++) {
      const w = weights ? weights[i] : 1,
        m = c * ex[i],
        q = 1 / (1 + alpha * m);
      score += w * (y[i] - m) * q;
      info += w * m * (1 + alpha * y[i]) * q * q;
    }
    if (score > 0) lo = b;
    else hi = b;
    let next = b + score / info;
    if (!(next > lo && next < hi))
      next = Number.isFinite(lo) && Number.isFinite(hi) ? 0.5 * (lo + hi) : b + Math.sign(score);
    const moved = Math.abs(next - b);
    b = next;
    if (moved <= 1e-13 * (1 + Math.abs(b))) break;
  }
  const c = Math.exp(b);
  let d = 0;
  for (let i = 0; i < n; i++) d += (weights ? weights[i] : 1) * unitDeviance(y[i], c * ex[i], alpha);
  return d;
}

function requireConverged(f: GlmFit): void {
  if (!f.converged)
    throw new FitError(
      `IRLS did not converge in ${f.iterations} iterations (deviance ${f.deviance}); raise --max-iter or --tolerance, or simplify the model.`,
    );
}

/**
 * A factor whose reference level has no events makes every rate ratio against
 * it infinite (the intercept drifts to −∞): say so and name the remedy.
 */
function checkReferenceEvents(design: Design): void {
  if (design.matrix.interceptCol < 0) return;
  design.model.terms.forEach((t, ti) => {
    if (t.variables.length !== 1) return;
    const f = design.factors.find((x) => x.name === t.variables[0]);
    const slot = design.matrix.slots.find((s) => s.term === ti);
    if (!f || !slot || slot.cols === null || slot.values !== null) return;
    let rows = 0,
      events = 0;
    for (let i = 0; i < design.n; i++)
      if (slot.cols[i] < 0) {
        rows++;
        events += design.y[i];
      }
    if (rows > 0 && events === 0) {
      const withEvents = f.levels.filter((l) => l !== f.reference);
      throw new FitError(
        `the reference level '${f.reference}' of '${f.name}' has no events in its ${rows} rows, so every rate ratio against it is infinite. ` +
          `Choose a reference level with events, for example --ref ${f.name}=${withEvents[0]}.`,
      );
    }
  });
}

/** Fit the model; a fit that does not meet the convergence rule is a FitError (exit 3). */
export function fitCounts(design: Design, options: FitModelOptions): CountFit {
  const control = { ...DEFAULT_CONTROL, ...options.control };
  checkReferenceEvents(design);
  const pm = options.patterns;
  if (pm) {
    if (options.family === "negbin" && pm.by === "covariates")
      throw new Error(
        "the negative binomial can only be fitted over patterns that also share the offset and the count",
      );
    // A Poisson fit of the rows is not one of the patterns' (their rows differ): the inner fit makes its own.
    const inner = fitCounts(pm.design, {
      family: options.family,
      control: options.control,
      onIteration: options.onIteration,
    });
    const fit = expandFit(design, pm, inner.fit);
    return {
      family: inner.family,
      fit,
      // The NB merge keeps every row's likelihood term, so its figures are exact; the Poisson merge changes the saturated model.
      nullDeviance: pm.by === "covariates" ? nullDeviance(design, 0) : inner.nullDeviance,
      control,
      negbin: inner.negbin,
      patterns: { merge: pm, fit: inner },
    };
  }
  if (options.family === "negbin") {
    const nb = fitNegbin(design.matrix, design, {
      control,
      onIteration: options.onIteration,
      poisson: options.poisson?.fit,
      // One pair of row-length eta and mu arrays for the Poisson start and the fits after it.
      workspace: {},
    });
    requireConverged(nb.fit);
    return {
      family: "negbin",
      fit: nb.fit,
      nullDeviance: nullDeviance(design, nb.alpha),
      control,
      negbin: {
        alpha: nb.alpha,
        alphaStdError: nb.alphaStdError,
        boundary: nb.boundary,
        logLik: nb.logLik,
        poissonLogLik: nb.poissonLogLik,
        poissonParameters: nb.poisson.status.filter((st) => st === "estimated" || st === "no_events").length,
        outerIterations: nb.outerIterations,
      },
      patterns: null,
    };
  }
  const fit = fitGlm(design.matrix, design, { control, onIteration: options.onIteration });
  requireConverged(fit);
  return { family: options.family, fit, nullDeviance: nullDeviance(design, 0), control, negbin: null, patterns: null };
}

/**
 * A fit over merged patterns, stated per row of the design: eta_i = eta_p +
 * (offset_i − offset_p), the deviance summed over rows. Coefficients and the
 * information matrix are those of the pattern fit (X'WX is the same sum over
 * rows or over patterns). The setup keeps the pattern fit's centring and
 * scaling, so covarianceScaled stays valid against the rows' own matrix.
 */
export function expandFit(design: Design, pm: PatternMerge, f: GlmFit): GlmFit {
  const n = design.n;
  const pat = pm.pattern,
    offP = pm.design.offset,
    off = design.offset,
    pw = design.weights;
  const eta = new Float64Array(n),
    mu = new Float64Array(n);
  const inFit = new Uint8Array(n);
  let rowsAtZero = 0;
  for (let i = 0; i < n; i++) {
    const p = pat[i];
    if (!f.setup.inFit[p]) {
      eta[i] = -Infinity;
      if (!pw || pw[i] > 0) rowsAtZero++;
      continue;
    }
    const e = f.eta[p] + (off[i] - offP[p]);
    eta[i] = e;
    mu[i] = Math.exp(e);
    inFit[i] = 1;
  }
  const s = f.setup;
  return {
    ...f,
    mu,
    eta,
    deviance: devianceAt(design.y, mu, eta, pw, inFit, f.alpha),
    rowsAtZero,
    warnings: driftWarnings(design.y, mu, inFit),
    setup: { status: s.status, inFit, active: s.active, order: s.order, center: s.center, scale: s.scale, rowsAtZero },
  };
}

/**
 * The likelihood-ratio statistic 2(ℓ̂ − ℓ(b)) with coefficient `col` held at b
 * and every other parameter re-maximised, alpha included for the negative
 * binomial (for the Poisson this is the deviance difference D(b) − D̂).
 * Warm-starts each fit from the previous one.
 */
export function constrainedStatistic(
  design: Design,
  mf: FitBase,
  col: number,
  workspace?: Workspace,
): (b: number) => number {
  let setup: FitSetup | null = null;
  let start: Float64Array = new Float64Array(mf.fit.beta);
  const control = { maxIter: 100, tolerance: mf.control.tolerance };
  if (mf.family === "negbin" && mf.negbin && !mf.negbin.boundary) {
    const llHat = mf.negbin.logLik;
    let alpha = mf.negbin.alpha;
    // Centring is valid only while the intercept is free; a column with no events must take its rows back
    // into the fit (they were fitted exactly at −∞), so both screen afresh.
    const nbSetup =
      col === design.matrix.interceptCol || mf.fit.status[col] === "no_events"
        ? prepareFit(design.matrix, design, new Map([[col, 0]]))
        : deriveSetup(mf.fit.setup, [col]);
    return (b: number) => {
      const fixed = new Map([[col, b]]);
      const nb = fitNegbin(design.matrix, design, {
        control,
        fixed,
        start,
        startAlpha: alpha,
        warm: true,
        likelihoodOnly: true,
        setup: nbSetup,
        workspace,
      });
      if (nb.fit.warnings.length === 0) {
        start = nb.fit.beta;
        if (nb.alpha > 0) alpha = nb.alpha;
      }
      return Math.max(0, 2 * (llHat - nb.logLik));
    };
  }
  return (b: number) => {
    const fixed = new Map([[col, b]]);
    if (setup === null) setup = prepareFit(design.matrix, design, fixed);
    const f = fitGlm(design.matrix, design, {
      fixed,
      setup,
      start,
      control,
      alpha: 0,
      skipCovariance: true,
      stopOnPredicted: true,
      workspace,
    });
    if (f.warnings.length === 0) start = f.beta;
    return Math.max(0, f.deviance - mf.fit.deviance);
  };
}

/** A starting value for the upper limit of a no-events coefficient: where 2·e^b·E reaches crit. */
export function noEventsGuess(design: Design, mf: FitBase, col: number, crit: number): number {
  const beta = new Float64Array(mf.fit.beta);
  beta[col] = 0;
  const eta = linearPredictorFrom(design.matrix, beta, design.offset);
  let e = 0;
  for (const s of design.matrix.slots) {
    if (s.cols === null) continue;
    for (let i = 0; i < design.n; i++)
      if (s.cols[i] === col && Number.isFinite(eta[i]))
        e += (design.weights ? design.weights[i] : 1) * Math.exp(eta[i]);
  }
  return e > 0 && Number.isFinite(e) ? Math.log(crit / (2 * e)) : 0;
}

export { negbinLogLik };
