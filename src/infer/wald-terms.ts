// Wald tests for dropping each term, from a given covariance of the
// estimates (the sandwich with --robust): W = bᵀV⁻¹b over the term's
// columns, against chi-square on their number (Wald 1943; for sandwich
// covariances, e.g. Boos and Stefanski, Essential Statistical Inference, 2013, §7.2).
import type { Design } from "../design/design.js";
import type { CountFit } from "../fit/count-fit.js";
import { chiSquareUpperTail, fUpperTail } from "../math/distributions.js";
import { cholesky, choleskySolve, type SymMatrix } from "../math/linalg.js";
import { type TermTest, termPlan } from "./terms.js";

/** Wald tests of every term with the covariance `cov` over the fit's estimated columns. */
export function waldTermTests(design: Design, mf: CountFit, cov: SymMatrix, denominatorDf?: number): TermTest[] {
  return termPlan(design, mf).map((step, ti) => {
    const term = design.termLabels[ti];
    // With a cluster covariance: F = W/df on (df, G − 1) (Cameron and Miller 2015, §VI.B).
    const test = denominatorDf ? ("Wald F" as const) : ("Wald chi-square" as const);
    if ("note" in step) return { term, df: 0, statistic: null, p_value: null, test, note: step.note };
    if (step.cols.some((c) => mf.fit.status[c] === "no_events"))
      return {
        term,
        df: 0,
        statistic: null,
        p_value: null,
        test,
        note: "a level has no events, so its estimate is not finite and a Wald test does not exist; the likelihood-ratio test without --robust does",
      };
    const w = waldStatistic(mf, cov, step.cols);
    if (w === null)
      return { term, df: 0, statistic: null, p_value: null, test, note: "its covariance is singular; no Wald test" };
    const k = step.cols;
    if (denominatorDf) {
      const f = w / k.length;
      return { term, df: k.length, statistic: f, p_value: fUpperTail(f, k.length, denominatorDf), test, note: null };
    }
    return { term, df: k.length, statistic: w, p_value: chiSquareUpperTail(w, k.length), test, note: null };
  });
}

/**
 * W = bᵀV⁻¹b for the estimates b of the given (estimated) design columns and
 * their block V of `cov` (over the fit's estimable columns); null when V is singular.
 */
export function waldStatistic(mf: Pick<CountFit, "fit">, cov: SymMatrix, cols: number[]): number | null {
  const pos = new Map(mf.fit.estimable.map((c, k) => [c, k]));
  const k = cols.map((c) => pos.get(c)!);
  const v: SymMatrix = { p: k.length, data: new Float64Array(k.length * k.length) };
  k.forEach((r, i) => {
    k.forEach((s, j) => {
      v.data[i * k.length + j] = cov.data[r * cov.p + s];
    });
  });
  const b = Float64Array.from(cols, (c) => mf.fit.beta[c]);
  const l = cholesky(v);
  if (l === null) return null;
  const sol = choleskySolve(l, k.length, b);
  let w = 0;
  for (let i = 0; i < k.length; i++) w += b[i] * sol[i];
  return w;
}
