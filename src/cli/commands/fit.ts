// tallyfit fit: one model, its report, and optionally the model file and picture.
import { analyzeFitParallel, diagnosticsOf, noEventsUpperLimits } from "../../analysis/fit.js";
import { analyzeInEngine } from "../../analysis/sums-fit.js";
import { naturalCompare } from "../../design/naming.js";
import { EXIT, InputError } from "../../errors.js";
import type { FamilyChoice } from "../../fit/count-fit.js";
import { summarizeGroups } from "../../infer/groups.js";
import { clusteringOf, orderKeyOf } from "../../design/clusters.js";
import { WORKING_CORRELATIONS } from "../../fit/working-correlation.js";
import { ZERO_FAMILIES, type ZeroFamily } from "../../fit/zero-likelihood.js";
import {
  autoZeroFit,
  renderZeroReport,
  runZeroFit,
  saveZeroModel,
  unsupportedOption,
  zeroModelOf,
  zeroTermsOf,
} from "./fit-zero.js";
import type { FitCliOptions } from "./fit-options.js";
import type { CountSpread } from "../../infer/ratio-limits.js";
import type { FitSummary } from "../../infer/summary.js";
import { renderFitText } from "../../report/fit-text.js";
import { renderFitCsv } from "../../report/fit-csv.js";
import { fitPage } from "../../report/pages.js";
import { renderJson } from "../../report/json.js";
import { modelFileOf } from "../../report/model-file.js";
import { loadDesigns } from "../input.js";
import { oneOf, parseColumnNumbers, parsePositive, parseProbability, plotKind } from "../options.js";
import { addPlot, finish, plotReference, plotSvg, textLayout } from "../output.js";
import { displaySafe } from "../../report/safe-text.js";
import { RunOutputs } from "../run-outputs.js";
import { clearProgressLine, fittingProgress, progressOnTerminal } from "../terminal.js";
import { mergeChoice } from "./shared.js";

import { VERSION } from "../version.js";

export type { FitCliOptions } from "./fit-options.js";

export { VERSION };

/** How the counts vary about the fitted means, for the O/E limits of --summary-by. */
function spreadOf(summary: FitSummary): CountSpread {
  if (summary.family === "negbin" && summary.negbin) return { family: "negbin", alpha: summary.negbin.alpha };
  if (summary.family === "quasipoisson") return { family: "quasipoisson", phi: summary.dispersion.phi_used };
  return { family: "poisson" };
}

export async function runFit(file: string | undefined, opts: FitCliOptions): Promise<number> {
  if (opts.model.length !== 1)
    throw new InputError(
      opts.model.length === 0
        ? 'fit needs --model "COUNT ~ TERMS".'
        : "fit takes one --model; use `tallyfit compare` for several.",
    );
  const level = parseProbability("--level", opts.level, "0.95");
  oneOf("--format", opts.format, ["text", "json", "csv", "markdown", "html"]);
  if (opts.summaryBy && opts.format === "csv")
    throw new InputError(
      "--summary-by is not part of the CSV output (one line per coefficient); use --format text, json or markdown for the group table.",
    );
  const anyFamily = oneOf("--family", opts.family, ["poisson", "quasipoisson", "negbin", "auto", ...ZERO_FAMILIES]);
  if ((ZERO_FAMILIES as readonly string[]).includes(anyFamily)) return runZeroFit(file, opts, anyFamily as ZeroFamily);
  if (opts.zeroTerms && anyFamily !== "auto")
    throw new InputError(
      "--zero-terms describes the zero part of a zero-inflated or hurdle family: give --family zip, zinb, hurdle-poisson, hurdle-negbin or auto.",
    );
  const family = anyFamily as FamilyChoice;
  if (opts.cluster.length > 2) throw new InputError("--cluster is given once (one-way) or twice (two-way clustering).");
  if (opts.cluster.length && opts.robust)
    throw new InputError(
      "--cluster and --robust are two covariances; give one (--cluster already allows for dependence).",
    );
  const gee = opts.gee ? oneOf("--gee", opts.gee, WORKING_CORRELATIONS) : null;
  if (gee && opts.cluster.length !== 1)
    throw new InputError(
      "--gee solves the estimating equations within clusters: give the clusters with --cluster COL (once).",
    );
  if (gee && opts.weights)
    throw new InputError(
      "--gee does not take --weights: give one row per count (frequency weights are not defined for GEE here).",
    );
  if (gee === "ar1" && !opts.orderBy)
    throw new InputError(
      "--gee ar1 needs the order of the rows within a cluster: add --order-by COL (a day, week or date column).",
    );
  if (opts.orderBy && gee !== "ar1")
    throw new InputError("--order-by orders the rows within a cluster for --gee ar1; leave it out otherwise.");
  if (opts.cluster.length && opts.intervals && opts.intervals !== "wald")
    throw new InputError(
      "with --cluster only Wald limits from the cluster-robust covariance are valid: profile limits come from a likelihood that treats every row as independent. Leave out --intervals (or give --intervals wald).",
    );
  const intervals = oneOf("--intervals", opts.intervals ?? (opts.cluster.length ? "wald" : "both"), [
    "wald",
    "profile",
    "both",
  ]);
  const testLevel = parseProbability("--alpha", opts.alpha, "0.05");
  const per = parsePositive("--per", opts.per);
  const merge = mergeChoice(opts);
  const ratioPer = parseColumnNumbers("--ratio-per", opts.ratioPer, "staff_on_duty=10", true);
  const baselineAt = parseColumnNumbers("--baseline-at", opts.baselineAt, "staff_on_duty=3", false);
  // Every file this run writes is checked before the work and written all or nothing at the end.
  const outputs = new RunOutputs([file ?? "-"]);
  if (opts.output) outputs.claim(opts.output, "--output");
  if (opts.saveModel) outputs.claim(opts.saveModel, "--save-model");
  if (opts.plot) outputs.claim(opts.plot, "--plot");
  const alsoRead = [
    ...(opts.summaryBy ? [{ column: opts.summaryBy, option: "--summary-by" }] : []),
    ...opts.cluster.map((column) => ({ column, option: "--cluster" })),
    ...(opts.orderBy ? [{ column: opts.orderBy, option: "--order-by" }] : []),
  ];
  // With --family auto the zero part's design is built with the model's, on the same rows, in case the check
  // finds excess zeros and the zero families are tried (their AIC is then comparable with the plain fit's).
  const zeroModel = family === "auto" && !unsupportedOption(opts) ? zeroModelOf(opts, zeroTermsOf(opts)) : null;
  // Rows held by an engine are merged inside it: by covariate pattern for the Poisson fits (whose row-level
  // figures come back as sums), with the count and exposure in the key where row-level figures are needed.
  const pushDownKey =
    zeroModel || gee || opts.robust || alsoRead.length
      ? null
      : (family === "poisson" || family === "quasipoisson") && !opts.plot && opts.format !== "html"
        ? "covariates"
        : "count";
  const { designs, control, labels, sha256, sums } = await loadDesigns(
    file,
    opts,
    zeroModel ? [opts.model[0], zeroModel] : [opts.model[0]],
    alsoRead,
    pushDownKey,
  );
  const design = designs[0];
  if (opts.plot) plotKind(opts.plot);
  for (const [option, given] of [
    ["--ratio-per", ratioPer],
    ["--baseline-at", baselineAt],
  ] as const)
    for (const column of Object.keys(given))
      if (
        !design.columns.some((c) => (c.kind === "numeric" || c.kind === "slope") && c.name.split(":").includes(column))
      )
        throw new InputError(
          `${option} ${column}=…: '${column}' is not a numeric term of the model (${
            design.columns
              .filter((c) => c.kind === "numeric")
              .map((c) => `'${c.name}'`)
              .join(", ") || "it has none"
          }).`,
        );
  const onProgress = fittingProgress(opts, design.n);
  const clusters = opts.cluster.map((c) => clusteringOf(c, labels.get(c)!));
  const order =
    gee && opts.orderBy
      ? orderKeyOf(opts.orderBy, labels.get(opts.orderBy)!, design.rowIndex, clusters[0], design.source)
      : null;
  const analysisOptions = {
    family,
    control,
    level,
    intervals,
    robust: !!opts.robust,
    clusters,
    gee: gee ? { structure: gee, order, orderBy: opts.orderBy ?? null } : undefined,
    testLevel,
    merge,
    onProgress,
    baselineAt,
    ratioPer,
  };
  const { summary, countFit, cluster, check } = sums
    ? analyzeInEngine(design, sums, { ...analysisOptions, family: family as "poisson" | "quasipoisson" })
    : await analyzeFitParallel(design, analysisOptions);
  if (onProgress && progressOnTerminal()) clearProgressLine();
  if (family === "auto" && check) {
    // More zeros than either plain model expects: the excess-zero families are tried too.
    const zero = autoZeroFit(
      opts,
      {
        family: summary.family,
        aic: summary.aic,
        excessZeros: check.verdict.code === "excess_zeros",
        reason: summary.family_choice?.reason ?? "",
      },
      level,
      zeroModel ? [designs[0], designs[1]] : null,
      clusters,
    );

    if (zero?.note) summary.warnings.push(zero.note);
    else if (zero?.summary) {
      if (opts.format === "csv")
        throw new InputError(
          `--family auto chose ${zero.summary.family}, whose report has two parts and no CSV form; give --format text, json, markdown or html.`,
        );
      if (opts.saveModel)
        outputs.add(
          opts.saveModel,
          "--save-model",
          renderJson(saveZeroModel([designs[0], designs[1]], zero.analysis, opts, clusters, sha256)),
        );
      await finish(outputs, opts, renderZeroReport(zero.summary, opts));
      return EXIT.ok;
    }
  }
  const wide = opts.format === "text" && !opts.output && process.stdout.isTTY && (process.stdout.columns ?? 0) >= 60;
  // Row-level pictures need the rows: a fit on engine-merged covariate patterns or sums has none.
  const rowLevel = !design.collapsed || design.collapsed.by === "count";
  const diag = rowLevel && (opts.plot || wide || opts.format === "html") ? diagnosticsOf(design, countFit) : null;
  const plotTitle = `${summary.family} fit of ${summary.model}`;
  if (opts.plot && diag) addPlot(outputs, opts.plot, plotTitle, diag, summary);
  if (opts.summaryBy)
    summary.summary_by = summarizeGroups(
      opts.summaryBy,
      labels.get(opts.summaryBy)!,
      design.y,
      countFit.fit.mu,
      design.exposure,
      per,
      level,
      naturalCompare,
      spreadOf(summary),
    );
  if (opts.saveModel) {
    const model = modelFileOf(
      design,
      countFit,
      { version: VERSION, sha256 },
      noEventsUpperLimits(design, countFit, summary),
      cluster,
    );
    outputs.add(opts.saveModel, "--save-model", renderJson(model));
  }
  let content: string;
  if (opts.format === "json") content = renderJson(summary);
  else if (opts.format === "csv") content = renderFitCsv(summary);
  else if (opts.format === "markdown")
    content = fitPage(summary, "markdown", {
      intervals,
      picture: opts.plot ? { svg: "", file: plotReference(opts) } : undefined,
    });
  else if (opts.format === "html")
    content = fitPage(summary, "html", {
      intervals,
      picture: diag ? { svg: plotSvg(plotTitle, diag, summary) } : undefined,
    });
  else
    content = renderFitText(displaySafe(summary), {
      ...textLayout(opts),
      intervals,
      rootogram: wide && diag ? diag.rootogram : undefined,
    });
  await finish(outputs, opts, content);
  return EXIT.ok;
}
