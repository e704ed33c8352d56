// The check command's composition: the Poisson and negative-binomial fits, then the dispersion and zero-count tests.
import type { Design } from "../design/design.js";
import type { CountFit } from "../fit/count-fit.js";
import type { FitControl } from "../fit/kernel/types.js";
import { InputError } from "../errors.js";
import type { Clustering } from "../design/clusters.js";
import { type CheckResult, runChecks, withDependence } from "../infer/check.js";
import { dependenceReading } from "../infer/dependence.js";
import { momentChecks, runModelChecks } from "../infer/model-check.js";
import { ZERO_FAMILIES, type ZeroFamily, isNegbinForm } from "../fit/zero-likelihood.js";
import { zeroMoments } from "../infer/zero-summary.js";
import { analyzeZeroFit } from "./zero-fit.js";

const isZeroFamily = (f: string): f is ZeroFamily => (ZERO_FAMILIES as readonly string[]).includes(f);

/** The adequacy check of a zero-inflated or hurdle fit, from its row moments. */
function zeroModelChecks(
  design: Design,
  family: ZeroFamily,
  zero: { design: Design; terms: string },
  poisson: CountFit,
  negbin: CountFit,
  testLevel: number,
  control?: Partial<FitControl>,
): CheckResult {
  const { fit, summary } = analyzeZeroFit(design, zero.design, family, { level: 0.95, zeroTerms: zero.terms, control });
  const m = zeroMoments(fit);
  return momentChecks(
    design,
    {
      family,
      name: family,
      mean: m.mean,
      variance: m.variance,
      p0: m.p0,
      pearsonDf: summary.df_residual,
      faster: isNegbinForm(family) ? "" : ` (try --family ${family === "zip" ? "zinb" : "hurdle-negbin"})`,
      slower: "",
      misfitNext: isNegbinForm(family)
        ? "Look for missing count or zero terms, groups of rows that differ, or dependence between rows (check --cluster)."
        : `The counts vary more than the ${family} allows: refit with --family ${family === "zip" ? "zinb" : "hurdle-negbin"}, or look for missing terms.`,
      alpha: fit.alpha,
      alphaStdError: summary.negbin?.alpha_std_error ?? null,
      boundary: isNegbinForm(family) ? fit.boundary.alpha : true,
    },
    poisson,
    negbin,
    testLevel,
  );
}
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
    family?: "poisson" | "negbin" | "quasipoisson" | ZeroFamily;
    /** For a zero-inflated or hurdle family: the zero part's design on the same rows, and its terms. */
    zero?: { design: Design; terms: string };
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
    o.family && isZeroFamily(o.family)
      ? zeroModelChecks(design, o.family, o.zero!, poisson, negbin, o.testLevel, o.control)
      : o.family && o.family !== "poisson"
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
