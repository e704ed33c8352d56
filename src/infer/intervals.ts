// Profile-likelihood limits for every coefficient of a fitted model.
import type { Design } from "../design/design.js";
import { constrainedStatistic, noEventsGuess, type ModelFit } from "../fit/model.js";
import { chiSquareQuantile, normalQuantile, studentQuantile } from "./distributions.js";
import { quasiPhi, residualDf } from "./summary.js";
import { profileLimits, profileUpperFromMinusInfinity, type ProfileResult } from "./profile.js";

/**
 * Profile limits on the log scale for each design column that was estimated
 * or has no events. For quasi-Poisson the statistic is the deviance
 * difference divided by phi, referred to F(1, df) (= t² on df).
 */
export function profileAll(design: Design, mf: ModelFit, level: number): Map<number, ProfileResult> {
  const quasi = mf.family === "quasipoisson";
  const phi = quasi ? quasiPhi(design, mf.fit) : 1;
  const df = residualDf(design, mf.fit);
  const tq = quasi && df > 0 ? studentQuantile(1 - (1 - level) / 2, df) : NaN;
  const crit = quasi && df > 0 ? tq * tq : chiSquareQuantile(level, 1);
  const zq = quasi && df > 0 ? tq : normalQuantile(1 - (1 - level) / 2);
  const out = new Map<number, ProfileResult>();
  const q = mf.fit.covariance.p;
  // The constrained fits run where the fit ran: over merged patterns, if it did.
  const fd = mf.patterns ? mf.patterns.merge.design : design;
  const fm = mf.patterns ? mf.patterns.fit : mf;
  mf.fit.status.forEach((st, c) => {
    if (st === "estimated") {
      const k = mf.fit.estimable.indexOf(c);
      const se = Math.sqrt(mf.fit.covariance.data[k * q + k] * phi);
      const stat = constrainedStatistic(fd, fm, c);
      out.set(c, profileLimits((b) => stat(b) / phi, mf.fit.beta[c], zq * se, crit));
    } else if (st === "no_events") {
      const stat = constrainedStatistic(fd, fm, c);
      out.set(c, profileUpperFromMinusInfinity((b) => stat(b) / phi, noEventsGuess(fd, fm, c, crit * phi), crit));
    }
  });
  return out;
}
