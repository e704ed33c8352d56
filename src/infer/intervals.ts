// Profile-likelihood limits for every coefficient of a fitted model.
import type { Design } from "../design/design.js";
import { constrainedStatistic, fitBaseOf, noEventsGuess, type FitBase, type CountFit } from "../fit/count-fit.js";
import type { Workspace } from "../fit/kernel/types.js";
import { chiSquareQuantile, normalQuantile, studentQuantile } from "../math/distributions.js";
import { quasiPhi, residualDf } from "./fit-statistics.js";
import { profileLimits, profileUpperFromMinusInfinity, type ProfileResult } from "./profile.js";

/** What the profile of one coefficient needs. */
export interface ProfileContext {
  /** Where the constrained fits run: the rows, or the merged patterns the fit ran on. */
  design: Design;
  base: FitBase;
  /** Quasi-Poisson phi from the rows (1 otherwise): the statistic is divided by it. */
  phi: number;
  crit: number;
  /** Wald half-width quantile and the standard error of each design column (for the first bracket). */
  zq: number;
  se: Float64Array;
  /** The columns that get limits: estimated ones, and those with no events (one-sided). */
  columns: number[];
}

/**
 * For quasi-Poisson the statistic is the deviance difference divided by phi,
 * referred to F(1, df) (= t² on df); otherwise the likelihood ratio against
 * chi-square(1).
 */
/**
 * The profile's critical value and the Wald quantile of its first step: t² on
 * df and t for the quasi-Poisson (with residual df), chi-square(1) and z otherwise.
 */
export function profileQuantiles(quasi: boolean, df: number, level: number): { crit: number; zq: number } {
  if (quasi && df > 0) {
    const tq = studentQuantile(1 - (1 - level) / 2, df);
    return { crit: tq * tq, zq: tq };
  }
  return { crit: chiSquareQuantile(level, 1), zq: normalQuantile(1 - (1 - level) / 2) };
}

export function profileContext(design: Design, mf: CountFit, level: number): ProfileContext {
  const quasi = mf.family === "quasipoisson";
  const phi = quasi ? quasiPhi(design, mf.fit) : 1;
  const df = residualDf(design, mf.fit);
  const { crit, zq } = profileQuantiles(quasi, df, level);
  const q = mf.fit.covariance.p;
  const se = new Float64Array(mf.fit.status.length).fill(NaN);
  mf.fit.estimable.forEach((c, k) => (se[c] = Math.sqrt(mf.fit.covariance.data[k * q + k] * phi)));
  const columns: number[] = [];
  mf.fit.status.forEach((st, c) => {
    if (st === "estimated" || st === "no_events") columns.push(c);
  });
  // The constrained fits run where the fit ran: over merged patterns, if it did.
  const fd = mf.patterns ? mf.patterns.merge.design : design;
  const fm = mf.patterns ? mf.patterns.fit : mf;
  return { design: fd, base: fitBaseOf(fm), phi, crit, zq, se, columns };
}

/** Profile limits on the log scale for design column c. */
export function profileOf(ctx: ProfileContext, c: number, workspace?: Workspace): ProfileResult {
  const { design, base, phi, crit } = ctx;
  const stat = constrainedStatistic(design, base, c, workspace);
  if (base.fit.status[c] === "no_events")
    return profileUpperFromMinusInfinity((b) => stat(b) / phi, noEventsGuess(design, base, c, crit * phi), crit);
  return profileLimits((b) => stat(b) / phi, base.fit.beta[c], ctx.zq * ctx.se[c], crit);
}

/** Profile limits for each design column that was estimated or has no events. */
export function profileAll(design: Design, mf: CountFit, level: number): Map<number, ProfileResult> {
  const ctx = profileContext(design, mf, level);
  const workspace: Workspace = {};
  return new Map(ctx.columns.map((c) => [c, profileOf(ctx, c, workspace)]));
}
