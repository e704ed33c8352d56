// The check command's composition: the Poisson and negative-binomial fits, then the dispersion and zero-count tests.
import type { Design } from "../design/design.js";
import type { CountFit } from "../fit/count-fit.js";
import type { FitControl } from "../fit/kernel/types.js";
import { InputError } from "../errors.js";
import { type CheckResult, runChecks } from "../infer/check.js";
import { residualDf } from "../infer/fit-statistics.js";
import { fitFamily, type MergeChoice } from "./fit.js";

/** The dispersion and zero-count check of a model. */
export function analyzeCheck(
  design: Design,
  o: { control?: Partial<FitControl>; testLevel: number; merge?: MergeChoice },
): CheckResult {
  return analyzeCheckWithFits(design, o).check;
}

/** The check together with the Poisson and negative-binomial fits it used. */
export function analyzeCheckWithFits(
  design: Design,
  o: { control?: Partial<FitControl>; testLevel: number; merge?: MergeChoice; onProgress?: (message: string) => void },
): { check: CheckResult; poisson: CountFit; negbin: CountFit } {
  const poisson = fitFamily(design, "poisson", o.control, o.merge, o.onProgress);
  const df = residualDf(design, poisson.fit);
  if (!(df > 0))
    throw new InputError(
      `${design.source}: the model has as many coefficients as rows, so no residual variation is left to check (${df} residual df); drop terms before checking the dispersion.`,
    );
  const negbin = fitFamily(design, "negbin", o.control, o.merge, o.onProgress, poisson);
  return { check: runChecks(design, poisson, negbin, o.testLevel), poisson, negbin };
}
