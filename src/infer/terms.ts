// Tests for dropping each model term as a whole: all of its columns held at
// 0 (moved out of the model), every other parameter re-maximised on the same
// rows. Likelihood-ratio tests for Poisson and negative binomial; F tests for
// quasi-Poisson, F = (ΔD/df)/φ on (df, residual df) (McCullagh and Nelder
// 1989, §4.5.2). A term that is part of a higher-order term in the model is
// not tested on its own (marginality): with treatment coding such a test
// would depend on the reference levels.
import type { Design } from "../design/design.js";
import { columnSums } from "../design/matrix-columns.js";
import { deriveSetup, prepareFit } from "../fit/kernel/setup.js";
import { fitGlm } from "../fit/kernel/glm.js";
import type { Workspace } from "../fit/kernel/types.js";
import { fitBaseOf, type FitBase, type CountFit } from "../fit/count-fit.js";
import { fitNegbin } from "../fit/negbin.js";
import { chiSquareUpperTail, fUpperTail } from "../math/distributions.js";
import { quasiPhi, residualDf } from "./fit-statistics.js";

export interface TermTest {
  term: string;
  df: number;
  statistic: number | null;
  p_value: number | null;
  /** LR chi-square (Poisson, NB2), F (quasi-Poisson), or Wald chi-square from the sandwich covariance (--robust). */
  test: "LR chi-square" | "F" | "Wald chi-square" | "Wald F";
  note: string | null;
}

function contains(outer: string[], inner: string[]): boolean {
  return inner.every((v) => outer.includes(v));
}

/** What one term test needs: the design and fit the constrained fits run on, and the full model's figures. */
export interface TermTestContext {
  /** Where the constrained fits run: the rows, or the merged patterns the fit ran on. */
  design: Design;
  base: FitBase;
  quasi: boolean;
  /** Pearson phi and residual df from the rows (quasi-Poisson F tests). */
  phi: number;
  df: number;
  llFull: number;
  labels: string[];
  /** Per term: the columns to drop, or why the term is not tested. */
  plan: ({ cols: number[] } | { note: string })[];
}

export function termTestContext(design: Design, mf: CountFit): TermTestContext {
  const quasi = mf.family === "quasipoisson";
  // phi and the residual df from the rows; the constrained fits run where the
  // fit itself ran (over merged patterns, if it did), against that fit.
  const df = residualDf(design, mf.fit);
  const phi = quasi ? quasiPhi(design, mf.fit) : NaN;
  const fd = mf.patterns ? mf.patterns.merge.design : design;
  const fm = mf.patterns ? mf.patterns.fit : mf;
  const llFull = fm.negbin && !fm.negbin.boundary ? fm.negbin.logLik : NaN;
  const plan = termPlan(design, mf);
  return { design: fd, base: fitBaseOf(fm), quasi, phi, df, llFull, labels: design.termLabels, plan };
}

/** Per term: the columns to drop (estimated or with no events), or why the term is not tested on its own. */
export function termPlan(design: Design, mf: CountFit): TermTestContext["plan"] {
  const terms = design.model.terms;
  return terms.map((t, ti) => {
    const higher = terms.find(
      (u, ui) => ui !== ti && u.variables.length > t.variables.length && contains(u.variables, t.variables),
    );
    if (higher) return { note: `part of ${higher.variables.join(":")}; test that term first` };
    const cols = design.termColumns[ti].filter(
      (c) => mf.fit.status[c] === "estimated" || mf.fit.status[c] === "no_events",
    );
    if (cols.length === 0) return { note: "all its columns are aliased" };
    return { cols };
  });
}

/** The test for dropping term ti. Centring stays valid while the intercept is free, which term tests never change. */
/**
 * A term's test from the deviance rise when its k columns are dropped: the
 * likelihood ratio against chi-square(k), or for the quasi-Poisson (phi
 * given) the rise / k / phi against F(k, df).
 */
export function devianceTest(rise: number, k: number, phi: number | null, df: number): { stat: number; p: number } {
  const dd = Math.max(0, rise);
  if (phi !== null) {
    const stat = dd / k / phi;
    return { stat, p: fUpperTail(stat, k, df) };
  }
  return { stat: dd, p: chiSquareUpperTail(dd, k) };
}

export function termTestOf(ctx: TermTestContext, ti: number, workspace?: Workspace): TermTest {
  const { design: fd, base: fm, quasi } = ctx;
  const label = ctx.labels[ti];
  const test = quasi ? ("F" as const) : ("LR chi-square" as const);
  const step = ctx.plan[ti];
  if ("note" in step) return { term: label, df: 0, statistic: null, p_value: null, test, note: step.note };
  const cols = step.cols;
  const fixed = new Map(cols.map((c) => [c, 0]));
  let stat: number, p: number;
  const start = warmStart(fd, fm, cols);
  // Dropping a column with no events gives its rows back to the fit (they were fitted exactly at −∞ and left
  // out): screen afresh, so that the reduced model is fitted on every row, as compare fits it.
  const setup = cols.some((c) => fm.fit.status[c] === "no_events")
    ? prepareFit(fd.matrix, fd, fixed)
    : deriveSetup(fm.fit.setup, cols);
  if (fm.family === "negbin" && fm.negbin && !fm.negbin.boundary) {
    const nb = fitNegbin(fd.matrix, fd, {
      control: fm.control,
      fixed,
      startAlpha: fm.negbin.alpha,
      start,
      warm: true,
      likelihoodOnly: true,
      setup,
      workspace,
    });
    stat = Math.max(0, 2 * (ctx.llFull - nb.logLik));
    p = chiSquareUpperTail(stat, cols.length);
  } else {
    const r = fitGlm(fd.matrix, fd, {
      control: fm.control,
      fixed,
      skipCovariance: true,
      start,
      stopOnPredicted: true,
      setup,
      workspace,
    });
    ({ stat, p } = devianceTest(r.deviance - fm.fit.deviance, cols.length, quasi ? ctx.phi : null, ctx.df));
  }
  return { term: label, df: cols.length, statistic: stat, p_value: p, test, note: null };
}

export function termTests(design: Design, mf: CountFit): TermTest[] {
  const ctx = termTestContext(design, mf);
  const workspace: Workspace = {};
  return ctx.plan.map((_, ti) => termTestOf(ctx, ti, workspace));
}

/**
 * Warm start for a model without some columns: the full estimates with those
 * columns at 0 and the intercept moved by Σ β_c·mean(x_c), so the fitted means
 * keep their overall level (an uncentred covariate would otherwise shift them by
 * orders of magnitude).
 */
function warmStart(design: Design, mf: FitBase, cols: number[]): Float64Array {
  const start = new Float64Array(mf.fit.beta);
  const ic = design.matrix.interceptCol;
  const sums = columnSums(design.matrix, cols);
  for (const c of cols) {
    if (ic >= 0 && Number.isFinite(start[c])) start[ic] += start[c] * (sums.get(c)! / design.n);
    start[c] = 0;
  }
  return start;
}
