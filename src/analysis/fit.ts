// Compositions of the stages that the commands run: fit → infer for one
// model, with the family chosen by the dispersion check for --family auto.
import type { Design } from "../design/design.js";
import { estimatePatterns, mergePatterns, patternKeyFor, type PatternMerge } from "../design/patterns.js";
import type { FitControl } from "../fit/kernel/types.js";
import { fitCounts, type FamilyChoice, type FamilyName, type CountFit } from "../fit/count-fit.js";
import { type CheckResult, dispersionFlagged, runChecks } from "../infer/check.js";
import { profileContext, profileOf } from "../infer/intervals.js";
import { inferencePlan, runJob, runJobs, type InferencePlan, type JobResult } from "../infer/parallel.js";
import type { ProfileResult } from "../infer/profile.js";
import { type Clustering, type ClusterCovariance, clusterCovariance } from "../infer/cluster.js";
import { sandwichCovariance } from "../infer/robust.js";
import { summarizeFit, type FitSummary } from "../infer/summary.js";
import { waldTermTests } from "../infer/wald-terms.js";
import { termTestContext, type TermTest } from "../infer/terms.js";
import { quantileResiduals, type Rootogram, rootogram } from "../infer/diagnostics.js";
import { fitGee } from "../fit/gee.js";
import type { WorkingCorrelation } from "../fit/working-correlation.js";
import { unitDeviance } from "../fit/family.js";
import { FitError } from "../errors.js";
import { collectAfterStage } from "../math/collect.js";
import { geeCovariance, geeSummaryOf, geeWarnings, type GeeSummary } from "../infer/gee-inference.js";

export interface AnalysisOptions {
  family: FamilyChoice;
  control?: Partial<FitControl>;
  level: number;
  intervals: "wald" | "profile" | "both";
  robust?: boolean;
  /** Clusterings of the rows (--cluster): the covariance becomes cluster-robust; intervals must be Wald. */
  clusters?: Clustering[];
  /**
   * Generalized estimating equations within the one clustering (--gee): the
   * working correlation and, for AR(1), the order of the rows in a cluster.
   */
  gee?: { structure: WorkingCorrelation; order: Float64Array | null; orderBy: string | null };
  /** Test level of the dispersion check (used by --family auto). */
  testLevel?: number;
  /** Tests for dropping each term (default true). */
  termTests?: boolean;
  /** Merge rows that share a covariate pattern before IRLS (default "auto"). */
  merge?: MergeChoice;
  /** Progress messages (IRLS iterations), for a terminal. */
  onProgress?: (message: string) => void;
  /** Values of numeric terms the baseline rate is stated at (others at their means). */
  baselineAt?: Record<string, number>;
  /** Rate ratios of numeric terms per so many units. */
  ratioPer?: Record<string, number>;
}

export type MergeChoice = "auto" | "always" | "never";

/** Below this many rows "auto" never merges: the fit is quick anyway. */
export const MERGE_MIN_ROWS = 10000;

/**
 * The merged patterns a family's fit may run over: "always" merges, "auto"
 * only when there are at least MERGE_MIN_ROWS rows and the patterns are at
 * most half as many (so each IRLS pass does at most half the work). A sample
 * of the rows rules out, cheaply, a merge that cannot reach that.
 */
export function patternsFor(design: Design, family: FamilyName, merge: MergeChoice = "auto"): PatternMerge | null {
  if (merge === "never") return null;
  const key = patternKeyFor(family);
  if (merge === "always") return mergePatterns(design, key);
  if (design.n < MERGE_MIN_ROWS || estimatePatterns(design, key) > design.n / 2) return null;
  return mergePatterns(design, key, Math.floor(design.n / 2));
}

/** Fit one family, over merged patterns when patternsFor says so. */
export function fitFamily(
  design: Design,
  family: FamilyName,
  control?: Partial<FitControl>,
  merge: MergeChoice = "auto",
  onProgress?: (message: string) => void,
  poisson?: CountFit,
): CountFit {
  const patterns = patternsFor(design, family, merge);
  const over = patterns ? ` over ${patterns.patterns.toLocaleString("en")} patterns` : "";
  const onIteration = onProgress
    ? (it: number, dev: number) =>
        onProgress(`fitting the ${family} model${over}: IRLS iteration ${it}, deviance ${dev.toPrecision(10)}`)
    : undefined;
  // The negative binomial on the rows starts from a Poisson fit: over merged patterns when they are few
  // (at most 1/32 of the rows, so that merging and expanding back, some three passes over the rows, cost less
  // than the fit's passes they save; at 10M rows and 1/8, with the passes split between two threads, merging
  // made the whole NB2 fit no faster, 25.0 s against 24.2 s, and 110 MB larger).
  if (
    family === "negbin" &&
    !patterns &&
    !poisson &&
    merge !== "never" &&
    design.n >= MERGE_MIN_ROWS &&
    estimatePatterns(design, "covariates") <= design.n / 32
  ) {
    const pm = mergePatterns(design, "covariates", Math.floor(design.n / 32));
    const onStart = onProgress
      ? (it: number, dev: number) =>
          onProgress(
            `fitting the Poisson start over ${pm!.patterns.toLocaleString("en")} patterns: IRLS iteration ${it}, deviance ${dev.toPrecision(10)}`,
          )
      : undefined;
    if (pm) poisson = fitCounts(design, { family: "poisson", control, patterns: pm, onIteration: onStart });
  }
  return fitCounts(design, {
    family,
    control,
    patterns,
    onIteration,
    poisson: family === "negbin" && !patterns ? poisson : undefined,
  });
}

export interface FitAnalysis {
  /** The fit whose coefficients are reported: with --gee, the independence fit with the GEE's estimates and means. */
  countFit: CountFit;
  /** The cluster-robust covariance, with --cluster (the GEE's robust covariance with --gee). */
  cluster?: ClusterCovariance;
  summary: FitSummary;
  check: CheckResult | null;
}

/** The fit (for --family auto: both fits, and the check that chose between them). */
function fitForAnalysis(
  design: Design,
  o: AnalysisOptions,
): { mf: CountFit; check: CheckResult | null; familyChoice?: { requested: string; reason: string } } {
  if (o.family !== "auto") return { mf: fitFamily(design, o.family, o.control, o.merge, o.onProgress), check: null };
  const pois = fitFamily(design, "poisson", o.control, o.merge, o.onProgress);
  const nb = fitFamily(design, "negbin", o.control, o.merge, o.onProgress, pois);
  const check = runChecks(design, pois, nb, o.testLevel ?? 0.05);
  const flagged = dispersionFlagged(check);
  return {
    mf: flagged.length > 0 ? nb : pois,
    check,
    familyChoice: {
      requested: "auto",
      reason:
        flagged.length > 0
          ? `the dispersion check flagged (${flagged.map((t) => t.short).join(", ")}) at ${o.testLevel ?? 0.05}, so the negative binomial is used`
          : `no dispersion test flagged at ${o.testLevel ?? 0.05}, so the Poisson model is kept`,
    },
  };
}

type Fitted = ReturnType<typeof fitForAnalysis> & {
  gee?: { summary: GeeSummary; warnings: string[]; cluster: ClusterCovariance };
};

/**
 * With --gee: solve the estimating equations from the independence fit, and
 * put the GEE estimates and means in its place (the deviance recomputed at
 * them); the reported covariance is the GEE's robust one.
 */
function withGee(design: Design, fitted: Fitted, o: AnalysisOptions): Fitted {
  if (!o.gee || !o.clusters || o.clusters.length !== 1) return fitted;
  const mf = fitted.mf;
  const clustering = o.clusters[0];
  const quasi = mf.family === "quasipoisson";
  o.onProgress?.(`solving the ${o.gee.structure} GEE within ${clustering.count} ${clustering.column} clusters…`);
  const g = fitGee(design, mf.fit, {
    structure: o.gee.structure,
    clusters: clustering,
    order: o.gee.order,
    estimateScale: quasi,
    maxIter: o.control?.maxIter ? Math.max(o.control.maxIter, 100) : 100,
  });
  if (!g)
    throw new FitError(
      `the ${o.gee.structure} estimating equations could not be solved from the independence fit (a singular information or overflowing means); try --gee independence or fewer terms`,
    );
  let deviance = 0;
  for (let i = 0; i < design.n; i++)
    deviance += (design.weights ? design.weights[i] : 1) * unitDeviance(design.y[i], g.mu[i], mf.fit.alpha);
  const summary = geeSummaryOf(
    design,
    mf.fit.estimable,
    g,
    clustering,
    o.gee.orderBy,
    quasi,
    mf.family === "negbin" ? mf.fit.alpha : null,
  );
  return {
    ...fitted,
    mf: {
      ...mf,
      fit: { ...mf.fit, beta: g.beta, mu: g.mu, eta: g.eta, deviance, converged: mf.fit.converged && g.converged },
    },
    gee: { summary, warnings: geeWarnings(g, summary), cluster: geeCovariance(g, clustering) },
  };
}

/** The profile limits and term tests the options ask for, as independent jobs. */
function planFor(design: Design, mf: CountFit, o: AnalysisOptions): InferencePlan {
  return inferencePlan(
    o.intervals === "wald" ? null : profileContext(design, mf, o.level),
    // With --robust the term tests are Wald tests from the sandwich (no refits; see assemble).
    o.termTests !== false && !o.robust && !o.clusters?.length && design.model.terms.length > 0
      ? termTestContext(design, mf)
      : null,
  );
}

function assemble(
  design: Design,
  o: AnalysisOptions,
  fitted: Fitted,
  plan: InferencePlan,
  results: JobResult[],
): FitAnalysis {
  const profiles = plan.profiles ? new Map<number, ProfileResult>() : undefined;
  const tests: TermTest[] = [];
  plan.jobs.forEach((job, j) => {
    if (job.kind === "profile") profiles!.set(job.col, results[j] as ProfileResult);
    else tests.push(results[j] as TermTest);
  });
  const cluster =
    fitted.gee?.cluster ?? (o.clusters?.length ? clusterCovariance(design, fitted.mf.fit, o.clusters) : undefined);
  const summary = summarizeFit(design, fitted.mf, {
    level: o.level,
    profiles,
    robust: o.robust,
    cluster,
    familyChoice: fitted.familyChoice,
    baselineAt: o.baselineAt,
    ratioPer: o.ratioPer,
  });
  if (fitted.gee) {
    summary.gee = fitted.gee.summary;
    summary.warnings.push(...fitted.gee.warnings);
  }
  if (plan.terms) summary.term_tests = tests;
  else if (cluster && o.termTests !== false && design.model.terms.length > 0)
    summary.term_tests = waldTermTests(design, fitted.mf, cluster.covariance, cluster.df);
  else if (o.robust && o.termTests !== false && design.model.terms.length > 0)
    summary.term_tests = waldTermTests(design, fitted.mf, sandwichCovariance(design, fitted.mf.fit));
  return { countFit: fitted.mf, summary, check: fitted.check, cluster };
}

/** Fit one model and summarise it; --family auto fits both and lets the check decide. */
export function analyzeFit(design: Design, o: AnalysisOptions): FitAnalysis {
  const fitted = withGee(design, fitForAnalysis(design, o), o);
  const plan = planFor(design, fitted.mf, o);
  const workspace = {};
  return assemble(
    design,
    o,
    fitted,
    plan,
    plan.jobs.map((job) => runJob(plan, job, workspace)),
  );
}

/**
 * The same analysis, with the constrained fits of profile limits and term
 * tests shared between this thread and a worker thread on large data (see
 * infer/parallel.ts). The result is the same as analyzeFit's.
 */
export async function analyzeFitParallel(design: Design, o: AnalysisOptions): Promise<FitAnalysis> {
  const fitted = withGee(design, fitForAnalysis(design, o), o);
  const plan = planFor(design, fitted.mf, o);
  const nProfiles = plan.jobs.filter((j) => j.kind === "profile").length,
    nTerms = plan.jobs.length - nProfiles;
  if (plan.jobs.length > 0)
    o.onProgress?.(
      `refitting for ${[nProfiles ? `${nProfiles} profile limits` : "", nTerms ? `${nTerms} term tests` : ""].filter(Boolean).join(" and ")}…`,
    );
  const onJob = o.onProgress
    ? (k: number, n: number) => o.onProgress?.(`refits: job ${k} of ${n} started…`)
    : undefined;
  // The fits' dropped arrays go before the constrained fits allocate theirs.
  collectAfterStage(design.n);
  return assemble(design, o, fitted, plan, await runJobs(plan, undefined, false, onJob));
}

/**
 * The upper profile limits (log scale) of the levels with no events, for the
 * model file: taken from the summary when it has profile limits, else computed.
 */
export function noEventsUpperLimits(
  design: Design,
  mf: CountFit,
  summary: FitSummary,
): { level: number; limits: Map<number, number | null> } {
  const limits = new Map<number, number | null>();
  const cols = mf.fit.status.flatMap((st, c) => (st === "no_events" ? [c] : []));
  if (cols.length === 0) return { level: summary.level, limits };
  const ctx = cols.some((c) => !summary.coefficients[c].profile) ? profileContext(design, mf, summary.level) : null;
  for (const c of cols) {
    const row = summary.coefficients[c];
    const upper = row.profile ? row.profile[1] : ctx ? profileOf(ctx, c).upper.value : null;
    limits.set(c, row.profile ? (upper === null ? null : Math.log(upper)) : upper);
  }
  return { level: summary.level, limits };
}

/** What the diagnostic picture shows, for a fit: rootogram, residuals, fitted means. */
export interface Diagnostics {
  rootogram: Rootogram;
  residuals: Float64Array;
  fitted: Float64Array;
}

export function diagnosticsOf(design: Design, mf: CountFit, seed = 1): Diagnostics {
  const alpha = mf.family === "negbin" ? mf.fit.alpha : 0;
  return {
    rootogram: rootogram(design.y, mf.fit.mu, alpha, design.weights),
    residuals: quantileResiduals(design.y, mf.fit.mu, alpha, seed),
    fitted: mf.fit.mu,
  };
}
