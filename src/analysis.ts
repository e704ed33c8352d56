// Compositions of the stages that the commands run: fit → infer for one
// model, with the family chosen by the dispersion check for --family auto.
import type { Design } from "./design/design.js";
import { mergePatterns, patternKeyFor, type PatternMerge } from "./design/patterns.js";
import type { FitControl } from "./fit/irls.js";
import { fitModel, type FamilyChoice, type FamilyName, type ModelFit } from "./fit/model.js";
import { dispersionFlagged, runChecks, type CheckResult } from "./infer/check.js";
import { profileAll } from "./infer/intervals.js";
import { summarizeFit, type FitSummary } from "./infer/summary.js";
import { termTests } from "./infer/terms.js";
import { quantileResiduals, rootogram } from "./infer/diagnostics.js";

export interface AnalysisOptions {
  family: FamilyChoice;
  control?: Partial<FitControl>;
  level: number;
  intervals: "wald" | "profile" | "both";
  robust?: boolean;
  /** Test level of the dispersion check (used by --family auto). */
  testLevel?: number;
  /** Tests for dropping each term (default true). */
  termTests?: boolean;
  /** Merge rows that share a covariate pattern before IRLS (default "auto"). */
  merge?: MergeChoice;
}

export type MergeChoice = "auto" | "always" | "never";

/** Below this many rows "auto" never merges: the fit is quick anyway. */
export const MERGE_MIN_ROWS = 10000;

/**
 * The merged patterns a family's fit may run over: "always" merges, "auto"
 * only when there are at least MERGE_MIN_ROWS rows and the patterns are at
 * most half as many (so each IRLS pass does at most half the work).
 */
export function patternsFor(design: Design, family: FamilyName, merge: MergeChoice = "auto"): PatternMerge | null {
  if (merge === "never") return null;
  const key = patternKeyFor(family);
  if (merge === "always") return mergePatterns(design, key);
  return design.n < MERGE_MIN_ROWS ? null : mergePatterns(design, key, Math.floor(design.n / 2));
}

/** Fit one family, over merged patterns when patternsFor says so. */
export function fitFamily(design: Design, family: FamilyName, control?: Partial<FitControl>, merge: MergeChoice = "auto"): ModelFit {
  return fitModel(design, { family, control, patterns: patternsFor(design, family, merge) });
}

export interface FitAnalysis {
  modelFit: ModelFit;
  summary: FitSummary;
  check: CheckResult | null;
}

/** Fit one model and summarise it; --family auto fits both and lets the check decide. */
export function analyzeFit(design: Design, o: AnalysisOptions): FitAnalysis {
  let mf: ModelFit;
  let check: CheckResult | null = null;
  let familyChoice: { requested: string; reason: string } | undefined;
  if (o.family === "auto") {
    const pois = fitFamily(design, "poisson", o.control, o.merge);
    const nb = fitFamily(design, "negbin", o.control, o.merge);
    check = runChecks(design, pois, nb, o.testLevel ?? 0.05);
    const flagged = dispersionFlagged(check);
    mf = flagged.length > 0 ? nb : pois;
    familyChoice = {
      requested: "auto",
      reason: flagged.length > 0
        ? `the dispersion check flagged (${flagged.map((t) => t.short).join(", ")}) at ${o.testLevel ?? 0.05}, so the negative binomial is used`
        : `no dispersion test flagged at ${o.testLevel ?? 0.05}, so the Poisson model is kept`,
    };
  } else mf = fitFamily(design, o.family, o.control, o.merge);
  const profiles = o.intervals === "wald" ? undefined : profileAll(design, mf, o.level);
  const summary = summarizeFit(design, mf, { level: o.level, profiles, robust: o.robust, familyChoice });
  if (o.termTests !== false && design.model.terms.length > 0) summary.term_tests = termTests(design, mf);
  return { modelFit: mf, summary, check };
}

/** The dispersion and zero-count check of a model. */
export function analyzeCheck(design: Design, o: { control?: Partial<FitControl>; testLevel: number; merge?: MergeChoice }): CheckResult {
  return analyzeCheckWithFits(design, o).check;
}

/** The check together with the Poisson and negative-binomial fits it used. */
export function analyzeCheckWithFits(design: Design, o: { control?: Partial<FitControl>; testLevel: number; merge?: MergeChoice }): { check: CheckResult; poisson: ModelFit; negbin: ModelFit } {
  const poisson = fitFamily(design, "poisson", o.control, o.merge);
  const negbin = fitFamily(design, "negbin", o.control, o.merge);
  return { check: runChecks(design, poisson, negbin, o.testLevel), poisson, negbin };
}

/** What the diagnostic picture shows, for a fit: rootogram, residuals, fitted means. */
export function diagnosticsOf(design: Design, mf: ModelFit, seed = 1) {
  const alpha = mf.family === "negbin" ? mf.fit.alpha : 0;
  return {
    rootogram: rootogram(design.y, mf.fit.mu, alpha, design.weights),
    residuals: quantileResiduals(design.y, mf.fit.mu, alpha, seed),
    fitted: mf.fit.mu,
  };
}
