// tallyfit fit --family zip|zinb|hurdle-poisson|hurdle-negbin: the count part
// and the zero part (--zero-terms) fitted together by maximum likelihood.
import { analyzeZeroFit } from "../../analysis/zero-fit.js";
import { EXIT, InputError } from "../../errors.js";
import type { ZeroFamily } from "../../fit/zero-likelihood.js";
import { parseFormula } from "../../formula/formula.js";
import { renderJson } from "../../report/json.js";
import { displaySafe } from "../../report/safe-text.js";
import { renderZeroText } from "../../report/zero-text.js";
import { loadDesigns } from "../input.js";
import { oneOf, parseProbability } from "../options.js";
import { finish, textLayout } from "../output.js";
import { RunOutputs } from "../run-outputs.js";
import type { FitCliOptions } from "./fit-options.js";

/** Options of `fit` the excess-zero families do not take yet, each with the reason. */
function refuseUnsupported(opts: FitCliOptions): void {
  const not = (given: boolean, option: string, why: string) => {
    if (given) throw new InputError(`${option} does not go with the zero-inflated and hurdle families yet: ${why}.`);
  };
  not(opts.cluster.length > 0 || !!opts.gee, "--cluster/--gee", "their covariances follow in a later version");
  not(!!opts.robust, "--robust", "its sandwich follows in a later version");
  not(
    !!opts.intervals && opts.intervals !== "wald",
    "--intervals profile|both",
    "only Wald limits are computed for them",
  );
  not(!!opts.saveModel, "--save-model", "predict does not take these families yet");
  not(!!opts.summaryBy, "--summary-by", "the group table follows in a later version");
  not(!!opts.plot, "--plot", "the picture follows in a later version");
  not(!!opts.date, "--date", "calendar terms follow in a later version");
}

export async function runZeroFit(file: string | undefined, opts: FitCliOptions, family: ZeroFamily): Promise<number> {
  oneOf("--format", opts.format, ["text", "json"]);
  refuseUnsupported(opts);
  const level = parseProbability("--level", opts.level, "0.95");
  const zeroTerms = opts.zeroTerms?.trim() || "1";
  const outputs = new RunOutputs([file ?? "-"]);
  if (opts.output) outputs.claim(opts.output, "--output");
  const response = parseFormula(opts.model[0], { intercept: opts.intercept }).response;
  // Both parts on the same rows: the rows complete for the count terms and the zero terms.
  const zeroModel = `${/^[A-Za-z_.][A-Za-z0-9_.]*$/.test(response) ? response : `\`${response}\``} ~ ${zeroTerms}`;
  try {
    parseFormula(zeroModel);
  } catch (e) {
    if (e instanceof InputError) throw new InputError(e.message.replace(/^--model:/, "--zero-terms:"));
    throw e;
  }
  const { designs } = await loadDesigns(file, opts, [opts.model[0], zeroModel]);
  const control = { maxIter: Number(opts.maxIter) };
  const { summary } = analyzeZeroFit(designs[0], designs[1], family, { level, zeroTerms, control });
  const content = opts.format === "json" ? renderJson(summary) : renderZeroText(displaySafe(summary), textLayout(opts));
  await finish(outputs, opts, content);
  return EXIT.ok;
}
