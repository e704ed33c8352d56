// tallyfit check: the dispersion and zero-count tests, the verdict in the exit code.
import { analyzeCheckWithFits } from "../../analysis/check.js";
import { diagnosticsOf } from "../../analysis/fit.js";
import { clusteringOf, orderKeyOf } from "../../design/clusters.js";
import { EXIT, InputError } from "../../errors.js";
import { ZERO_FAMILIES } from "../../fit/zero-likelihood.js";
import { formulaText, parseFormula } from "../../formula/formula.js";
import { summarizeFit } from "../../infer/summary.js";
import { renderCheckText } from "../../report/check-text.js";
import { renderJson } from "../../report/json.js";
import { loadDesigns } from "../input.js";
import { type ModelOptions, oneOf, parseProbability, plotKind } from "../options.js";
import { addPlot, finish, plotReference, plotSvg, textLayout } from "../output.js";
import { checkPage } from "../../report/pages.js";
import { displaySafe } from "../../report/safe-text.js";
import { RunOutputs } from "../run-outputs.js";
import { clearProgressLine, fittingProgress, progressOnTerminal } from "../terminal.js";
import { mergeChoice } from "./shared.js";

export type CheckCliOptions = ModelOptions & {
  family: string;
  alpha: string;
  cluster: string[];
  orderBy?: string;
  zeroTerms?: string;
};

export async function runCheck(file: string | undefined, opts: CheckCliOptions): Promise<number> {
  if (opts.model.length !== 1) throw new InputError('check needs one --model "COUNT ~ TERMS".');
  oneOf("--format", opts.format, ["text", "json", "markdown", "html"]);
  const family = oneOf("--family", opts.family, ["poisson", "negbin", "quasipoisson", ...ZERO_FAMILIES]);
  const zeroFamily = (ZERO_FAMILIES as readonly string[]).includes(family);
  if (opts.zeroTerms && !zeroFamily)
    throw new InputError(
      "--zero-terms describes the zero part of zip, zinb, hurdle-poisson or hurdle-negbin; give one of those families.",
    );
  const zeroTerms = opts.zeroTerms?.trim() || "1";
  const testLevel = parseProbability("--alpha", opts.alpha, "0.05");
  const merge = mergeChoice(opts);
  const outputs = new RunOutputs([file ?? "-"]);
  if (opts.output) outputs.claim(opts.output, "--output");
  if (opts.plot) outputs.claim(opts.plot, "--plot");
  if (opts.cluster.length > 1)
    throw new InputError("check reads dependence within one clustering: give --cluster once (e.g. --cluster clinic).");
  if (opts.orderBy && opts.cluster.length === 0)
    throw new InputError("--order-by orders the rows within the clusters of --cluster; give --cluster COL as well.");
  if (opts.cluster.length && opts.weights)
    throw new InputError("the dependence reading of --cluster does not take --weights: give one row per count.");
  const alsoRead = [
    ...opts.cluster.map((column) => ({ column, option: "--cluster" })),
    ...(opts.orderBy ? [{ column: opts.orderBy, option: "--order-by" }] : []),
  ];
  const response = parseFormula(opts.model[0], { intercept: opts.intercept }).response;
  const zeroModel = formulaText(response, zeroTerms);
  const { designs, control, labels } = await loadDesigns(
    file,
    opts,
    zeroFamily ? [opts.model[0], zeroModel] : [opts.model[0]],
    alsoRead,
    zeroFamily ? null : "count",
  );
  const design = designs[0];
  const cluster = opts.cluster.length ? clusteringOf(opts.cluster[0], labels.get(opts.cluster[0])!) : undefined;
  const orderBy =
    cluster && opts.orderBy
      ? {
          column: opts.orderBy,
          key: orderKeyOf(opts.orderBy, labels.get(opts.orderBy)!, design.rowIndex, cluster, design.source),
        }
      : null;
  if (opts.plot) plotKind(opts.plot);
  const onProgress = fittingProgress(opts, design.n);
  const { check, poisson } = analyzeCheckWithFits(design, {
    control,
    testLevel,
    merge,
    onProgress,
    family,
    zero: zeroFamily ? { design: designs[1], terms: zeroTerms } : undefined,
    cluster,
    orderBy,
  });
  if (onProgress && progressOnTerminal()) clearProgressLine();
  let picture: string | undefined;
  if (opts.plot || opts.format === "html") {
    // The picture's forest panel shows 95% Wald intervals (check has no interval options of its own).
    const summary = summarizeFit(design, poisson, { level: 0.95 });
    const title = `Poisson fit of ${summary.model} (check)`;
    const d = diagnosticsOf(design, poisson);
    if (opts.plot) addPlot(outputs, opts.plot, title, d, summary);
    picture = plotSvg(title, d, summary);
  }
  const content =
    opts.format === "json"
      ? renderJson({ schema: check.schema, check })
      : opts.format === "html"
        ? checkPage(check, "html", picture ? { svg: picture } : undefined)
        : opts.format === "markdown"
          ? checkPage(check, "markdown", opts.plot ? { svg: "", file: plotReference(opts) } : undefined)
          : renderCheckText(displaySafe(check), textLayout(opts));
  await finish(outputs, opts, content);
  return check.flagged ? EXIT.flagged : EXIT.ok;
}
