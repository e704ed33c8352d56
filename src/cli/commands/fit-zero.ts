// tallyfit fit --family zip|zinb|hurdle-poisson|hurdle-negbin: the count part
// and the zero part (--zero-terms) fitted together by maximum likelihood.
import { analyzeZeroFit, type ZeroAnalysis } from "../../analysis/zero-fit.js";
import { type Clustering, clusteringOf } from "../../design/clusters.js";
import type { Design } from "../../design/design.js";
import { EXIT, InputError } from "../../errors.js";
import type { ZeroFamily } from "../../fit/zero-likelihood.js";
import { formulaText, parseFormula } from "../../formula/formula.js";
import { renderJson } from "../../report/json.js";
import { fitPage } from "../../report/pages.js";
import { displaySafe } from "../../report/safe-text.js";
import { renderZeroText } from "../../report/zero-text.js";
import { loadDesigns } from "../input.js";
import { oneOf, parseProbability } from "../options.js";
import { finish, textLayout } from "../output.js";
import { RunOutputs } from "../run-outputs.js";
import type { FitCliOptions } from "./fit-options.js";
import type { FitSummary } from "../../infer/summary.js";
import { ZERO_FAMILIES } from "../../fit/zero-likelihood.js";
import type { ModelFile } from "../../io/model-file.js";
import { type ZeroCovarianceKind, zeroModelFileOf } from "../../report/zero-model-file.js";
import { VERSION } from "../version.js";

/** The zero part's terms (--zero-terms; an intercept by default). */
export function zeroTermsOf(opts: FitCliOptions): string {
  return opts.zeroTerms?.trim() || "1";
}

/** The first option given that the excess-zero families do not take yet, or null. */
export function unsupportedOption(opts: FitCliOptions): string | null {
  try {
    refuseUnsupported(opts);
    return null;
  } catch (e) {
    return (e as Error).message.split(" does not go")[0];
  }
}

/**
 * --family auto when the check found more zeros than either plain model
 * expects: fit the four excess-zero families (zero part: --zero-terms, or an
 * intercept) and keep the one with the smallest AIC when it beats the plain
 * family's AIC. Returns the report to print, or null to keep the plain fit.
 */
export function autoZeroFit(
  opts: FitCliOptions,
  plain: { family: string; aic: number; excessZeros: boolean; reason: string },
  level: number,
  /** The count and zero designs on the same rows (loaded with the plain fit's), or null when an option blocks the zero families. */
  designs: [Design, Design] | null,
  clusters: Clustering[],
): { summary: FitSummary; analysis: ZeroAnalysis; note: null } | { summary: null; note: string } | null {
  if (!plain.excessZeros) return null;
  if (!designs)
    return {
      summary: null,
      note: `the check found more zeros than either plain model expects, but the zero-inflated and hurdle families were not tried because ${unsupportedOption(opts)} does not go with them yet`,
    };
  const zeroTerms = zeroTermsOf(opts);
  // The covariance asked for (--robust, --cluster) goes with the zero families too; the AIC does not depend on it.
  const covariance = { robust: !!opts.robust, clusters };
  const tried: { family: ZeroFamily; aic: number; summary: FitSummary; analysis: ZeroAnalysis }[] = [];
  for (const family of ZERO_FAMILIES)
    try {
      const analysis = analyzeZeroFit(designs[0], designs[1], family, { level, zeroTerms, ...covariance });
      if (analysis.summary.converged)
        tried.push({ family, aic: analysis.summary.aic, summary: analysis.summary, analysis });
    } catch {
      // A family that cannot be fitted here is not a candidate.
    }
  tried.sort((a, b) => a.aic - b.aic);
  const best = tried[0];
  if (!best || best.aic >= plain.aic) return null;
  const listed = tried.map((t) => `${t.family} ${t.aic.toFixed(1)}`).join(", ");
  // The chosen family's report with the intervals asked for (profile limits are computed for it alone).
  if ((opts.intervals ?? "both") !== "wald" && !opts.robust && opts.cluster.length === 0)
    best.summary = analyzeZeroFit(designs[0], designs[1], best.family, { level, zeroTerms, profiles: true }).summary;
  best.summary.family_choice = {
    requested: "auto",
    used: best.family,
    reason: `${plain.reason}; the check also found more zeros than either plain model expects, so the zero-inflated and hurdle families were fitted (zero part ~ ${zeroTerms}) and ${best.family} has the smallest AIC (${listed}; ${plain.family} ${plain.aic.toFixed(1)})`,
  };
  return { summary: best.summary, analysis: best.analysis, note: null };
}

export function zeroModelOf(opts: FitCliOptions, zeroTerms: string): string {
  const response = parseFormula(opts.model[0], { intercept: opts.intercept }).response;
  return formulaText(response, zeroTerms);
}

/** Render an excess-zero fit's report. */
export function renderZeroReport(summary: FitSummary, opts: FitCliOptions): string {
  if (opts.format === "json") return renderJson(summary);
  if (opts.format === "markdown" || opts.format === "html") return fitPage(summary, opts.format, { intervals: "both" });
  return renderZeroText(displaySafe(summary), textLayout(opts));
}

/** Options of `fit` the excess-zero families do not take yet, each with the reason. */
function refuseUnsupported(opts: FitCliOptions): void {
  const not = (given: boolean, option: string, why: string) => {
    if (given) throw new InputError(`${option} does not go with the zero-inflated and hurdle families yet: ${why}.`);
  };
  not(!!opts.gee, "--gee", "GEE is for the plain families");
  not(opts.cluster.length > 0 && !!opts.robust, "--cluster with --robust", "give one covariance");
  not(
    (opts.cluster.length > 0 || !!opts.robust) && !!opts.intervals && opts.intervals !== "wald",
    "--intervals profile|both with --robust or --cluster",
    "profile limits come from the likelihood, which treats rows as independent; with a sandwich the limits are Wald",
  );
  not(!!opts.summaryBy, "--summary-by", "the group table follows in a later version");
  not(!!opts.plot, "--plot", "the picture follows in a later version");
  not(!!opts.date, "--date", "calendar terms follow in a later version");
}

export async function runZeroFit(file: string | undefined, opts: FitCliOptions, family: ZeroFamily): Promise<number> {
  oneOf("--format", opts.format, ["text", "json", "markdown", "html"]);
  refuseUnsupported(opts);
  const level = parseProbability("--level", opts.level, "0.95");
  if (opts.intervals) oneOf("--intervals", opts.intervals, ["wald", "profile", "both"]);
  const zeroTerms = zeroTermsOf(opts);
  const outputs = new RunOutputs([file ?? "-"]);
  if (opts.output) outputs.claim(opts.output, "--output");
  if (opts.saveModel) outputs.claim(opts.saveModel, "--save-model");
  // Both parts on the same rows: the rows complete for the count terms and the zero terms.
  const zeroModel = zeroModelOf(opts, zeroTerms);
  try {
    parseFormula(zeroModel);
  } catch (e) {
    if (e instanceof InputError) throw new InputError(e.message.replace(/^--model:/, "--zero-terms:"));
    throw e;
  }
  const { designs, labels, sha256 } = await loadDesigns(
    file,
    opts,
    [opts.model[0], zeroModel],
    opts.cluster.map((column) => ({ column, option: "--cluster" })),
  );
  const control = { maxIter: Number(opts.maxIter) };
  if (opts.cluster.length > 2) throw new InputError("--cluster is given once (one-way) or twice (two-way clustering).");
  const clusters = opts.cluster.map((c) => clusteringOf(c, labels.get(c)!));
  const analysis = analyzeZeroFit(designs[0], designs[1], family, {
    level,
    zeroTerms,
    control,
    robust: !!opts.robust,
    clusters,
    profiles: (opts.intervals ?? "both") !== "wald",
  });
  const { summary } = analysis;
  if (opts.saveModel)
    outputs.add(
      opts.saveModel,
      "--save-model",
      renderJson(saveZeroModel([designs[0], designs[1]], analysis, opts, clusters, sha256)),
    );
  const content = renderZeroReport(summary, opts);
  await finish(outputs, opts, content);
  return EXIT.ok;
}

/** The model file of an excess-zero fit, with the covariance its report used. */
export function saveZeroModel(
  designs: [Design, Design],
  analysis: ZeroAnalysis,
  opts: FitCliOptions,
  clusters: Clustering[],
  sha256: string,
): ModelFile {
  const kind: ZeroCovarianceKind = clusters.length
    ? {
        type: clusters.length === 2 ? "two-way-cluster-CR1" : "cluster-CR1",
        clusters: clusters.map((c) => ({ column: c.column, count: c.count })),
      }
    : { type: opts.robust ? "robust-HC0" : "observed-information" };
  return zeroModelFileOf(designs[0], designs[1], analysis.fit, analysis.columns, { version: VERSION, sha256 }, kind);
}
