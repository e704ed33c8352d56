// The report record of an excess-zero fit (zip, zinb, hurdle-poisson,
// hurdle-negbin): the count part as rate ratios in `coefficients`, the zero
// part as odds ratios in `zero_part.coefficients` (the same fields), alpha in
// `negbin`, observed zeros against the model's expectation, and the
// likelihood figures. Standard errors are from the inverse observed
// information (zero-fit.ts), or the sandwich with --robust or --cluster (then
// Student's t on G − 1 df); Wald tests and limits against the normal otherwise.
import type { Design } from "../design/design.js";
import type { ZeroFit } from "../fit/zero-fit.js";
import type { ZeroProfile } from "../fit/zero-profile.js";
import { isHurdle, isNegbinForm } from "../fit/zero-likelihood.js";
import {
  chiSquareUpperTail,
  normalQuantile,
  normalTwoSidedP,
  studentQuantile,
  studentTwoSidedP,
} from "../math/distributions.js";
import { boundaryLrTest } from "./fit-statistics.js";
import type { CoefficientRow, FitSummary, NegbinSummary } from "./summary.js";
import { sourceOf } from "./source.js";

export interface ZeroSummaryOptions {
  level: number;
  countColumns: number[];
  zeroColumns: number[];
  zeroTerms: string;
  /** NB2 forms: the log-likelihood and parameter count of the Poisson form, for the likelihood-ratio test of alpha. */
  poissonForm?: { logLik: number; parameters: number };
  familyChoice?: { requested: string; reason: string };
  /** Profile-likelihood limits (log scale) by "count:k" or "zero:k", when computed. */
  profiles?: Map<string, ZeroProfile>;
  /** The sandwich the fit computed: per row (--robust) or summed within one clustering (--cluster, t on G − 1). */
  sandwich?: { kind: "robust" } | { kind: "cluster"; clusters: { column: string; count: number }[] };
}

/** A profile on the ratio scale: an open lower side is 0, an open or failed upper side null. */
function profileOf(pr: ZeroProfile | undefined): Pick<CoefficientRow, "profile" | "profile_status"> {
  if (!pr) return { profile: null, profile_status: null };
  return {
    profile: [
      pr.lower !== null ? Math.exp(pr.lower) : pr.status.lower === "open" ? 0 : null,
      pr.upper !== null ? Math.exp(pr.upper) : null,
    ],
    profile_status: pr.status,
  };
}

function rows(
  design: Design,
  cols: number[],
  est: Float64Array,
  cov: { p: number; data: Float64Array } | null,
  offset: number,
  crit: number,
  odds: boolean,
  noSe: boolean,
  pOf: (z: number) => number,
  profiles?: Map<string, ZeroProfile>,
): CoefficientRow[] {
  const refs = new Map(design.factors.map((f) => [f.name, f.reference]));
  return cols.map((c, k) => {
    const col = design.columns[c];
    const b = est[k];
    const v = cov && !noSe ? cov.data[(offset + k) * cov.p + offset + k] : Number.NaN;
    const se = v > 0 ? Math.sqrt(v) : null;
    const z = se === null ? null : b / se;
    const wald: [number, number] | null = se === null ? null : [Math.exp(b - crit * se), Math.exp(b + crit * se)];
    return {
      term: col.name,
      estimate: b,
      std_error: se,
      z,
      p_value: z === null ? null : pOf(z),
      rate_ratio: odds ? null : Math.exp(b),
      ...(odds ? { odds_ratio: Math.exp(b) } : {}),
      wald,
      ...profileOf(profiles?.get(`${odds ? "zero" : "count"}:${k}`)),
      aliased: false,
      status: "estimated" as const,
      levels: col.levels.map((l) => ({
        factor: l.factor,
        level: l.level,
        reference: l.contrast ? (refs.get(l.factor) ?? null) : null,
      })),
      measure: odds
        ? c === design.matrix.interceptCol
          ? ("odds" as const)
          : ("odds_ratio" as const)
        : ("rate_ratio" as const),
      kind: col.kind,
      term_group: col.term < 0 ? "intercept" : design.termLabels[col.term],
    };
  });
}

/**
 * Each row's mean, variance and P(Y = 0) under a fitted excess-zero model, from
 * the count distribution's E[Y²] = λ + λ² + αλ² and f(0): zero-inflated,
 * mean (1 − π)λ and E[Y²](1 − π); hurdle, mean pλ/(1 − f(0)) and pE[Y²]/(1 − f(0)).
 */
export function zeroMoments(z: ZeroFit): { mean: Float64Array; variance: Float64Array; p0: Float64Array } {
  const n = z.lambda.length;
  const mean = new Float64Array(n),
    variance = new Float64Array(n),
    p0 = new Float64Array(n);
  const hurdle = isHurdle(z.family);
  const a = z.alpha;
  for (let i = 0; i < n; i++) {
    const lam = z.lambda[i],
      q = z.zeroProb[i];
    const f0 = a > 0 ? (1 + a * lam) ** (-1 / a) : Math.exp(-lam);
    const ey2 = lam + lam * lam + a * lam * lam;
    if (hurdle) {
      mean[i] = (q * lam) / (1 - f0);
      variance[i] = (q * ey2) / (1 - f0) - mean[i] * mean[i];
      p0[i] = 1 - q;
    } else {
      mean[i] = (1 - q) * lam;
      variance[i] = (1 - q) * ey2 - mean[i] * mean[i];
      p0[i] = q + (1 - q) * f0;
    }
  }
  return { mean, variance, p0 };
}

export function summarizeZeroFit(count: Design, zero: Design, z: ZeroFit, o: ZeroSummaryOptions): FitSummary {
  const clustered = o.sandwich?.kind === "cluster" ? o.sandwich : null;
  const tDf = clustered ? Math.min(...clustered.clusters.map((c) => c.count)) - 1 : Number.POSITIVE_INFINITY;
  const crit = clustered ? studentQuantile(1 - (1 - o.level) / 2, tDf) : normalQuantile(1 - (1 - o.level) / 2);
  const pOf = (t: number) => (clustered ? studentTwoSidedP(t, tDf) : normalTwoSidedP(t));
  const cov = o.sandwich ? z.sandwichCovariance : z.covariance;
  const p = o.countColumns.length,
    r = o.zeroColumns.length;
  const nb = isNegbinForm(z.family);
  const k = p + r + (nb ? 1 : 0);
  const hurdle = isHurdle(z.family);
  const coefficients = rows(count, o.countColumns, z.beta, cov, 0, crit, false, false, pOf, o.profiles);
  const zeroRows = rows(zero, o.zeroColumns, z.gamma, cov, p, crit, true, z.boundary.zeroPart, pOf, o.profiles);
  // Observed and expected zeros, and the Pearson statistic with the model's mean and variance.
  const mom = zeroMoments(z);
  let obs0 = 0,
    exp0 = 0,
    pearson = 0,
    n = 0;
  for (let i = 0; i < count.n; i++) {
    const w = count.weights ? count.weights[i] : 1;
    exp0 += w * mom.p0[i];
    if (count.y[i] === 0) obs0 += w;
    pearson += (w * (count.y[i] - mom.mean[i]) ** 2) / mom.variance[i];
    n += w;
  }
  const df = n - k;
  const aic = -2 * z.logLik + 2 * k;
  const bic = -2 * z.logLik + Math.log(n) * k;
  const warnings: string[] = [...count.notices];
  if (z.boundary.zeroPart)
    warnings.push(
      hurdle
        ? "the zero part is at its boundary: for some rows the chance of a non-zero count goes to 0 or 1, so its coefficients have no standard errors"
        : "no excess zeros for some or all rows: the likelihood is largest with the chance of a structural zero at 0 there (π → 0), so the zero part is at its boundary and has no standard errors; the plain family may be enough",
    );
  for (const r of [...coefficients, ...zeroRows])
    for (const side of ["lower", "upper"] as const) {
      const st = r.profile_status?.[side];
      if (st === "open")
        warnings.push(
          `${r.term}: the ${side} profile limit is ${side === "lower" ? "0 (open)" : "unbounded"}: the likelihood never falls far enough on that side (the Wald interval hides this)`,
        );
      else if (st === "failed") warnings.push(`${r.term}: the ${side} profile limit could not be computed`);
    }
  if (!z.converged)
    warnings.push(
      "the maximisation did not settle; the estimates may be inaccurate (raise --max-iter or simplify the model)",
    );
  let negbin: NegbinSummary | undefined;
  if (nb) {
    const m = cov?.p ?? 0;
    const seLog = cov && !z.boundary.alpha ? Math.sqrt(cov.data[(m - 1) * m + m - 1]) : null;
    const lr = o.poissonForm ? boundaryLrTest(z.logLik, o.poissonForm.logLik) : { stat: Number.NaN, p: Number.NaN };
    negbin = {
      alpha: z.alpha,
      alpha_std_error: seLog === null ? null : z.alpha * seLog,
      alpha_ci: seLog === null ? null : [z.alpha * Math.exp(-crit * seLog), z.alpha * Math.exp(crit * seLog)],
      alpha_ci_method: "wald-log",
      lr_stat: lr.stat,
      lr_p_value: lr.p,
      boundary: z.boundary.alpha,
      poisson_log_likelihood: o.poissonForm?.logLik ?? Number.NaN,
      poisson_aic: o.poissonForm ? -2 * o.poissonForm.logLik + 2 * o.poissonForm.parameters : Number.NaN,
    };
    if (z.boundary.alpha)
      warnings.push(
        "alpha is estimated at 0: the count part has no extra-Poisson variation, so the Poisson form is enough",
      );
  }
  const ic = count.matrix.interceptCol;
  const intercept = ic >= 0 ? coefficients.find((c) => c.term === count.columns[ic].name) : undefined;
  return {
    schema: "tallyfit.fit/1",
    family: z.family,
    family_choice: o.familyChoice
      ? { requested: o.familyChoice.requested, used: z.family, reason: o.familyChoice.reason }
      : null,
    link: "log",
    level: o.level,
    source: sourceOf(count),
    model: count.model.text,
    response: count.model.response,
    exposure: count.exposureName,
    offset: count.offsetName,
    weights: count.weightsName,
    n_rows: count.nRows,
    n_used: count.n,
    n_dropped: count.nRows - count.n,
    dropped: {
      missing: count.dropped.missing,
      zero_exposure_zero_count: count.dropped.zeroExposureZeroCount,
      zero_weight: count.dropped.zeroWeight,
    },
    df_residual: df,
    n_parameters: k,
    converged: z.converged,
    iterations: z.iterations,
    merged_patterns: null,
    deviance: null,
    null_deviance: null,
    df_null: n - 1,
    pearson_chi2: pearson,
    log_likelihood: z.logLik,
    aic,
    bic,
    dispersion: {
      pearson: pearson / df,
      deviance: Number.NaN,
      pearson_p_value: df > 0 ? chiSquareUpperTail(pearson, df) : Number.NaN,
      deviance_p_value: Number.NaN,
      phi_used: 1,
    },
    references: count.factors.map((f) => ({ factor: f.name, level: f.reference })),
    baseline: intercept?.wald
      ? {
          rate: intercept.rate_ratio!,
          wald: [intercept.wald[0]!, intercept.wald[1]!],
          per: count.exposureName,
          at: [],
        }
      : null,
    coefficients,
    zero_part: {
      terms: o.zeroTerms,
      odds_of: hurdle ? "non-zero count" : "structural zero",
      coefficients: zeroRows,
      boundary: z.boundary.zeroPart,
    },
    zeros: { observed: obs0, expected: exp0 },
    ...(negbin ? { negbin } : {}),
    test_distribution: clustered ? "t" : "normal",
    standard_errors: clustered ? "cluster" : o.sandwich ? "robust" : "model",
    ...(clustered
      ? {
          covariance: {
            type: clustered.clusters.length === 2 ? "two-way-cluster-CR1" : "cluster-CR1",
            clusters: clustered.clusters,
            t_df: tDf,
          },
        }
      : {}),
    profile_reference: o.profiles
      ? "likelihood ratio against chi-square(1), the other parameters maximised again"
      : null,
    warnings,
    notices: count.notices,
  };
}
