// Inference stage: a fitted model → the figures users publish and check.
// Standard errors are the square roots of the diagonal of the inverse
// expected (Fisher) information X'WX at the estimate (GlmFit.covariance),
// times sqrt(phi) for quasi-Poisson, or the sandwich estimate with --robust.
import { rowDeviance, rowsUsed } from "../design/collapsed.js";
import { isoDate } from "../design/calendar.js";
import type { Design } from "../design/design.js";
import type { FamilyName, CountFit } from "../fit/count-fit.js";
import {
  chiSquareUpperTail,
  normalQuantile,
  normalTwoSidedP,
  studentQuantile,
  studentTwoSidedP,
} from "../math/distributions.js";
import type { ProfileResult } from "./profile.js";
import { boundaryLrTest, fitStatistics } from "./fit-statistics.js";
import { type ClusterCovariance, clusterWarnings } from "./cluster.js";
import { sandwichCovariance } from "./robust.js";
import type { TermTest } from "./terms.js";
import type { GroupSummary } from "./groups.js";
import type { GeeSummary } from "./gee-inference.js";
import type { ZeroFamily } from "../fit/zero-likelihood.js";

export interface ZeroPartSummary {
  terms: string;
  /** What exp(coefficient) is the odds of: a structural zero (zero-inflated) or a non-zero count (hurdle). */
  odds_of: "structural zero" | "non-zero count";
  coefficients: CoefficientRow[];
  /** The likelihood is largest with π → 0 for some rows: the zero part is at its boundary and has no standard errors. */
  boundary: boolean;
}
import { type Seasonality, seasonalityOf } from "./seasonality.js";
import { type Baseline, baselineOf } from "./baseline.js";
import { type Source, sourceOf } from "./source.js";

export type { FamilyName } from "../fit/count-fit.js";

export type ProfileSideStatus = "limit" | "open" | "failed";

export interface CoefficientRow {
  term: string;
  estimate: number | null;
  std_error: number | null;
  /** Wald statistic (z, or t for quasi-Poisson). */
  z: number | null;
  p_value: number | null;
  rate_ratio: number | null;
  /** Wald limits on the rate-ratio scale (odds-ratio scale in a zero part). */
  wald: [number | null, number | null] | null;
  /** Zero part: exp(estimate), the odds ratio (rate_ratio is then null). */
  odds_ratio?: number | null;
  /** Profile-likelihood limits on the rate-ratio scale (0 for an open lower side, null for an unbounded or failed upper side). */
  profile: [number | null, number | null] | null;
  /**
   * How each profile side came out: "limit" (a crossing was found), "open" (the
   * likelihood never falls far enough on that side, so the limit is 0 or
   * unbounded by nature), or "failed" (the computation did not succeed; the
   * reason is in the warnings). null when no profile was computed.
   */
  profile_status: { lower: ProfileSideStatus; upper: ProfileSideStatus } | null;
  aliased: boolean;
  status: "estimated" | "aliased" | "no_events";
  /** For factor-level terms: the factor, the level and its reference (null: the column is the level itself, no reference). */
  levels: { factor: string; level: string; reference: string | null }[];
  /**
   * What exp(estimate) is: a rate ratio against the reference, or, for the
   * levels of the factor that takes the intercept's place in a model without
   * one, the rate itself per unit of exposure (then rate_ratio is null and
   * rate holds it).
   */
  measure: "rate_ratio" | "rate" | "odds_ratio" | "odds";
  rate?: number | null;
  kind: "intercept" | "numeric" | "indicator" | "slope";
  term_group: string;
  /** With --ratio-per: rate_ratio, wald and profile are per this many units of the numeric term (estimate and std_error stay per unit). */
  per_units?: number;
}

export interface NegbinSummary {
  alpha: number;
  alpha_std_error: number | null;
  /** Wald interval on log alpha, back-transformed. */
  alpha_ci: [number, number] | null;
  alpha_ci_method: "wald-log";
  lr_stat: number;
  lr_p_value: number;
  boundary: boolean;
  poisson_log_likelihood: number;
  poisson_aic: number;
}

export interface FitSummary {
  schema: "tallyfit.fit/1";
  family: FamilyName | ZeroFamily;
  family_choice: { requested: string; used: FamilyName | ZeroFamily; reason: string } | null;
  link: "log";
  level: number;
  source: Source;
  model: string;
  response: string;
  exposure: string | null;
  offset: string | null;
  weights: string | null;
  n_rows: number;
  n_used: number;
  n_dropped: number;
  dropped: { missing: number; zero_exposure_zero_count: number; zero_weight: number };
  df_residual: number;
  n_parameters: number;
  converged: boolean;
  iterations: number;
  /** IRLS ran over merged covariate patterns (null: over the rows); every figure is still per row. */
  merged_patterns: { rows: number; patterns: number; by: string } | null;
  /** The GLM deviances (null for the excess-zero families, which have none). */
  deviance: number | null;
  null_deviance: number | null;
  df_null: number;
  pearson_chi2: number;
  log_likelihood: number;
  aic: number;
  bic: number;
  dispersion: {
    pearson: number;
    deviance: number;
    pearson_p_value: number;
    deviance_p_value: number;
    phi_used: number;
  };
  references: { factor: string; level: string }[];
  baseline: Baseline | null;
  coefficients: CoefficientRow[];
  negbin?: NegbinSummary;
  test_distribution: "normal" | "t";
  standard_errors: "model" | "robust" | "cluster";
  /** With --cluster: the covariance type, the cluster columns and counts, and the df of the t reference. */
  covariance?: { type: string; clusters: { column: string; count: number }[]; t_df: number };
  /** Excess-zero families: the zero part's coefficients (odds ratios) and what they are the odds of. */
  zero_part?: ZeroPartSummary;
  /** Observed zero counts against the number the fitted model expects. */
  zeros?: { observed: number; expected: number };
  /** With --season: the fitted seasonal peak and trough and the peak-to-trough rate ratio. */
  seasonality?: Seasonality;
  /** With --date: the date column and the span of the dates used (ISO dates). */
  dates?: { column: string; first: string; last: string };
  /** With --gee: the working correlation, its parameter, the scale and the model-based standard errors. */
  gee?: GeeSummary;
  profile_reference: string | null;
  /** Tests for dropping each term (present when computed). */
  term_tests?: TermTest[];
  /** Observed against expected by group (--summary-by). */
  summary_by?: GroupSummary;
  warnings: string[];
  notices: string[];
}

export interface SummaryOptions {
  level: number;
  /** Profile limits on the log scale by design column, when computed. */
  profiles?: Map<number, ProfileResult>;
  robust?: boolean;
  /** Cluster-robust covariance (--cluster): standard errors, Wald limits and p-values come from it. */
  cluster?: ClusterCovariance;
  familyChoice?: { requested: string; reason: string };
  /** The numeric terms' values the baseline rate is stated at (others: their means). */
  baselineAt?: Record<string, number>;
  /** Rate ratios of these numeric terms per so many units (--ratio-per COL=K). */
  ratioPer?: Record<string, number>;
}

/** Build the report record for a fitted model. */
export function summarizeFit(design: Design, mf: CountFit, options: SummaryOptions): FitSummary {
  const fit = mf.fit;
  const stats = fitStatistics(design, fit, mf.family === "negbin");
  const df = stats.df;
  const pearsonRatio = df > 0 ? stats.pearson / df : NaN;
  // The deviance of the rows (with engine-merged covariate patterns, restored from their sums).
  const deviance = rowDeviance(design, fit.deviance);
  const devRatio = df > 0 ? deviance / df : NaN;
  const quasi = mf.family === "quasipoisson";
  const phi = quasi ? pearsonRatio : 1;
  const cl = options.cluster;
  // Wald tests and limits: Student's t on G − 1 df under clustering, on the residual df for the quasi-Poisson.
  const tDf = cl ? cl.df : df;
  const useT = cl ? cl.df > 0 : quasi && df > 0;
  const crit = useT ? studentQuantile(1 - (1 - options.level) / 2, tDf) : normalQuantile(1 - (1 - options.level) / 2);
  const pOf = (z: number) => (useT ? studentTwoSidedP(z, tDf) : normalTwoSidedP(z));
  const cov = cl ? cl.covariance : options.robust ? sandwichCovariance(design, fit) : fit.covariance;
  const seScale = cl || options.robust ? 1 : phi;
  const posOf = new Map(fit.estimable.map((c, k) => [c, k]));
  const q = cov.p;
  const refs = new Map(design.factors.map((f) => [f.name, f.reference]));
  const rateTerm = rateTermOf(design);
  const coefficients: CoefficientRow[] = design.columns.map((col, c) => {
    const st = fit.status[c];
    const levels = col.levels.map((l) => ({
      factor: l.factor,
      level: l.level,
      reference: l.contrast ? (refs.get(l.factor) ?? null) : null,
    }));
    const base = {
      term: col.name,
      levels,
      kind: col.kind,
      term_group: col.term < 0 ? "intercept" : design.termLabels[col.term],
      profile: profileRow(options.profiles?.get(c)),
      profile_status: profileStatus(options.profiles?.get(c)),
      measure: rateTerm >= 0 && col.term === rateTerm ? ("rate" as const) : ("rate_ratio" as const),
    };
    if (st === "aliased" || st === "fixed")
      return {
        ...base,
        profile: null,
        profile_status: null,
        estimate: null,
        std_error: null,
        z: null,
        p_value: null,
        rate_ratio: null,
        wald: null,
        aliased: true,
        status: "aliased" as const,
      };
    if (st === "no_events")
      return {
        ...base,
        estimate: null,
        std_error: null,
        z: null,
        p_value: null,
        ...(base.measure === "rate" ? { rate_ratio: null, rate: 0 } : { rate_ratio: 0 }),
        wald: [0, null] as [number, null],
        aliased: false,
        status: "no_events" as const,
      };
    const k = posOf.get(c)!;
    const b = fit.beta[c];
    const se = Math.sqrt(cov.data[k * q + k] * seScale);
    const zval = b / se;
    return {
      ...base,
      estimate: b,
      std_error: se,
      z: zval,
      p_value: pOf(zval),
      ...(base.measure === "rate" ? { rate_ratio: null, rate: Math.exp(b) } : { rate_ratio: Math.exp(b) }),
      wald: [Math.exp(b - crit * se), Math.exp(b + crit * se)] as [number, number],
      aliased: false,
      status: "estimated" as const,
    };
  });

  const seasonality = seasonalityOf(
    design,
    fit.beta,
    seScale === 1 ? cov : { p: cov.p, data: cov.data.map((x) => x * seScale) },
    posOf,
    crit,
    options.level,
  );
  const warnings: string[] = [...fit.warnings];
  if (seasonality && seasonality.peak_to_trough_ci[0] < 1)
    warnings.push(
      "the interval of the seasonal peak-to-trough rate ratio reaches below 1, which no such ratio can be: the seasonal pattern is not clearly told apart from none (see the test of the season terms)",
    );
  for (const row of coefficients) {
    if (row.status === "aliased")
      warnings.push(
        `${row.term} is aliased (a linear combination of earlier columns) and was left out of the fit; no estimate is shown for it`,
      );
    if (row.status === "no_events")
      warnings.push(
        `${row.term}: every row of this level has a zero count, so its rate ratio has no finite estimate (it is 0); its lower limit is 0 and no Wald interval exists`,
      );
  }
  if (options.profiles)
    for (const [c, pr] of options.profiles)
      for (const [side, r] of [
        ["lower", pr.lower],
        ["upper", pr.upper],
      ] as const)
        if (r.value === null && r.reason && !(fit.status[c] === "no_events" && side === "lower"))
          warnings.push(
            `${design.columns[c].name}: the ${side} profile limit is ${r.open ? (side === "lower" ? "0 (open)" : "unbounded") : "not available"}: ${r.reason}`,
          );
  if (cl) warnings.push(...clusterWarnings(cl.clusters, cl.dominant));
  if (options.robust && options.profiles)
    warnings.push(
      "with --robust, the Wald limits use sandwich standard errors; the profile limits remain likelihood-based (model-based)",
    );

  let negbin: NegbinSummary | undefined;
  if (mf.negbin) {
    const nb = mf.negbin;
    const lr = boundaryLrTest(nb.logLik, nb.poissonLogLik);
    const zq = normalQuantile(1 - (1 - options.level) / 2);
    const ci: [number, number] | null =
      nb.alphaStdError !== null && nb.alpha > 0
        ? [
            nb.alpha * Math.exp(-zq * (nb.alphaStdError / nb.alpha)),
            nb.alpha * Math.exp(zq * (nb.alphaStdError / nb.alpha)),
          ]
        : null;

    negbin = {
      alpha: nb.alpha,
      alpha_std_error: nb.alphaStdError,
      alpha_ci: ci,
      alpha_ci_method: "wald-log",
      lr_stat: lr.stat,
      lr_p_value: lr.p,
      boundary: nb.boundary,
      poisson_log_likelihood: nb.poissonLogLik,
      poisson_aic: -2 * nb.poissonLogLik + 2 * nb.poissonParameters,
    };
    if (nb.boundary)
      warnings.push(
        "alpha is estimated at 0: the likelihood is largest with no extra-Poisson variation, so the negative binomial reduces to the Poisson here",
      );
  }
  if (!fit.converged)
    warnings.push(
      `IRLS stopped after ${fit.iterations} iterations without meeting the convergence rule; the estimates may be inaccurate (raise --max-iter)`,
    );

  const finalCov = seScale === 1 ? cov : { p: cov.p, data: cov.data.map((x) => x * seScale) };
  const baseline = baselineOf(design, fit.beta, finalCov, posOf, crit, options.baselineAt ?? {});
  if (options.ratioPer) scaleRatios(design, coefficients, options.ratioPer);
  const profileRef = !options.profiles
    ? null
    : quasi
      ? `deviance difference / phi against F(1, ${df})`
      : "likelihood ratio against chi-square(1)";
  return {
    schema: "tallyfit.fit/1",
    family: mf.family,
    family_choice: options.familyChoice
      ? { requested: options.familyChoice.requested, used: mf.family, reason: options.familyChoice.reason }
      : null,
    link: "log",
    level: options.level,
    source: sourceOf(design),
    model: design.model.text,
    response: design.model.response,
    exposure: design.exposureName,
    offset: design.offsetName,
    weights: design.weightsName,
    n_rows: design.nRows,
    n_used: rowsUsed(design),
    n_dropped: design.nRows - rowsUsed(design),
    dropped: {
      missing: design.dropped.missing,
      zero_exposure_zero_count: design.dropped.zeroExposureZeroCount,
      zero_weight: design.dropped.zeroWeight,
    },
    df_residual: df,
    n_parameters: stats.nPar,
    converged: fit.converged,
    iterations: mf.negbin && !mf.negbin.boundary ? mf.negbin.outerIterations : fit.iterations,
    merged_patterns: mf.patterns
      ? { rows: mf.patterns.merge.rows, patterns: mf.patterns.merge.patterns, by: mf.patterns.merge.by }
      : null,
    deviance,
    null_deviance: rowDeviance(design, mf.nullDeviance),
    df_null: stats.nEff - (design.matrix.interceptCol >= 0 ? 1 : 0),
    pearson_chi2: stats.pearson,
    log_likelihood: stats.logLik,
    aic: stats.aic,
    bic: stats.bic,
    dispersion: {
      pearson: pearsonRatio,
      deviance: devRatio,
      pearson_p_value: df > 0 ? chiSquareUpperTail(stats.pearson, df) : NaN,
      deviance_p_value: df > 0 ? chiSquareUpperTail(deviance, df) : NaN,
      phi_used: phi,
    },
    references: design.factors.map((f) => ({ factor: f.name, level: f.reference })),
    baseline,
    coefficients,
    ...(negbin ? { negbin } : {}),
    test_distribution: useT ? "t" : "normal",
    standard_errors: cl ? "cluster" : options.robust ? "robust" : "model",
    ...(cl ? { covariance: { type: cl.type, clusters: cl.clusters, t_df: cl.df } } : {}),
    ...(seasonality ? { seasonality } : {}),
    ...(design.calendar
      ? {
          dates: {
            column: design.calendar.column,
            first: isoDate(design.calendar.firstDay),
            last: isoDate(design.calendar.lastDay),
          },
        }
      : {}),
    profile_reference: profileRef,
    warnings: [...design.notices, ...warnings],
    notices: design.notices,
  };
}

/**
 * Without an intercept, the first term made of factors alone whose levels are
 * all coded as indicators takes the intercept's place: its exponentiated
 * coefficients are rates, not ratios (−1: none).
 */
function rateTermOf(design: Design): number {
  if (design.matrix.interceptCol >= 0) return -1;
  for (const col of design.columns)
    if (col.kind === "indicator" && col.levels.every((l) => !l.contrast)) return col.term;
  return -1;
}

/** Profile limits on the rate-ratio scale; an open lower side is 0, an open upper side null (unbounded). */
function profileStatus(pr: ProfileResult | undefined): CoefficientRow["profile_status"] {
  if (!pr) return null;
  const side = (s: ProfileResult["lower"]): ProfileSideStatus =>
    s.value !== null ? "limit" : s.open ? "open" : "failed";
  return { lower: side(pr.lower), upper: side(pr.upper) };
}

function profileRow(pr: ProfileResult | undefined): [number | null, number | null] | null {
  if (!pr) return null;
  const lo = pr.lower.value !== null ? Math.exp(pr.lower.value) : pr.lower.open ? 0 : null;
  const hi = pr.upper.value !== null ? Math.exp(pr.upper.value) : null;
  return [lo, hi];
}

/**
 * Rate ratios per K units (--ratio-per COL=K) for the columns whose one
 * numeric part is COL (its main effect, or its slope within a factor level):
 * exp(K·b), and the interval limits raised to the power K.
 */
function scaleRatios(design: Design, rows: CoefficientRow[], per: Record<string, number>): void {
  design.columns.forEach((col, c) => {
    if (col.kind !== "numeric" && col.kind !== "slope") return;
    const numericParts = col.name.split(":").filter((part) => !part.includes("="));
    if (numericParts.length !== 1 || !Object.hasOwn(per, numericParts[0])) return;
    const k = per[numericParts[0]];
    const row = rows[c];
    row.per_units = k;
    const pow = (v: number | null) => (v === null ? null : v ** k);
    if (row.rate_ratio !== null && row.rate_ratio !== undefined) row.rate_ratio = pow(row.rate_ratio);
    if (row.wald) row.wald = [pow(row.wald[0]), pow(row.wald[1])];
    if (row.profile) row.profile = [pow(row.profile[0]), pow(row.profile[1])];
  });
}
