// The check command's composition: the Poisson and negative-binomial fits, then the dispersion and zero-count tests.
import type { Design } from "../design/design.js";
import type { CountFit } from "../fit/count-fit.js";
import type { FitControl } from "../fit/kernel/types.js";
import { InputError } from "../errors.js";
import type { Clustering } from "../design/clusters.js";
import { type CheckResult, runChecks, withDependence } from "../infer/check.js";
import { dependenceReading } from "../infer/dependence.js";
import { runModelChecks } from "../infer/model-check.js";
import { residualDf } from "../infer/fit-statistics.js";
import { fitFamily, type MergeChoice } from "./fit.js";

/** The dispersion and zero-count check of a model. */
export function analyzeCheck(design: Design, o: Parameters<typeof analyzeCheckWithFits>[1]): CheckResult {
  return analyzeCheckWithFits(design, o).check;
}

/** The check together with the Poisson and negative-binomial fits it used. */
export function analyzeCheckWithFits(
  design: Design,
  o: {
    control?: Partial<FitControl>;
    testLevel: number;
    merge?: MergeChoice;
    onProgress?: (message: string) => void;
    /** The family whose adequacy is tested (default: the Poisson, with the dispersion tests). */
    family?: "poisson" | "negbin" | "quasipoisson";
    /** Rows grouped by cluster (--cluster): adds the dependence reading. */
    cluster?: Clustering;
    /** The order within clusters (--order-by): adds the lag-1 serial correlation. */
    orderBy?: { column: string; key: Float64Array } | null;
  },
): { check: CheckResult; poisson: CountFit; negbin: CountFit } {
  const poisson = fitFamily(design, "poisson", o.control, o.merge, o.onProgress);
  const df = residualDf(design, poisson.fit);
  if (!(df > 0))
    throw new InputError(
      `${design.source}: the model has as many coefficients as rows, so no residual variation is left to check (${df} residual df); drop terms before checking the dispersion.`,
    );
  const negbin = fitFamily(design, "negbin", o.control, o.merge, o.onProgress, poisson);
  let check =
    o.family && o.family !== "poisson"
      ? runModelChecks(
          design,
          o.family === "negbin" ? negbin : { ...poisson, family: "quasipoisson" },
          poisson,
          negbin,
          o.testLevel,
        )
      : runChecks(design, poisson, negbin, o.testLevel);
  if (o.cluster) {
    const alpha = negbin.negbin?.boundary ? 0 : negbin.fit.alpha;
    check = withDependence(
      check,
      dependenceReading(design.y, negbin.fit.mu, alpha, o.cluster, o.orderBy ?? null, o.testLevel),
    );
  }
  return { check, poisson, negbin };
}
