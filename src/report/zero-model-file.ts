// Writing the saved-model record of an excess-zero fit: both parts, and the
// joint covariance of [β, γ, log α] that predict draws from.
import type { Design } from "../design/design.js";
import { FitError } from "../errors.js";
import type { ZeroFit } from "../fit/zero-fit.js";
import { isHurdle, isNegbinForm } from "../fit/zero-likelihood.js";
import type { ModelFile } from "../io/model-file.js";
import { calendarOf, modelHeadOf, modelVariablesOf } from "./model-file.js";

export interface ZeroCovarianceKind {
  /** observed-information (the fit's own), robust-HC0 (--robust) or a cluster-robust one (--cluster). */
  type: "observed-information" | "robust-HC0" | "cluster-CR1" | "two-way-cluster-CR1";
  clusters?: { column: string; count: number }[];
}

export function zeroModelFileOf(
  count: Design,
  zero: Design,
  fit: ZeroFit,
  columns: { count: number[]; zero: number[] },
  meta: { version: string; sha256: string },
  kind: ZeroCovarianceKind,
): ModelFile {
  const cov = kind.type === "observed-information" ? fit.covariance : fit.sandwichCovariance;
  if (!cov)
    throw new FitError(
      `${count.source}: the ${fit.family} fit has no covariance for every estimate (the information is not positive definite), so predict could not draw from it; the model file was not written.`,
    );
  const p = columns.count.length;
  const r = columns.zero.length;
  const nb = isNegbinForm(fit.family);
  // Parameters at a boundary (no excess zeros; alpha → 0) are held at their estimates and not drawn.
  const keep = [
    ...columns.count.map((_, k) => k),
    ...(fit.boundary.zeroPart ? [] : columns.zero.map((_, k) => p + k)),
    ...(nb && !fit.boundary.alpha ? [p + r] : []),
  ];
  const m = cov.p;
  const position = new Map(columns.count.map((c, k) => [c, k]));
  const logAlphaVar = nb && !fit.boundary.alpha ? cov.data[(p + r) * m + p + r] : null;
  return {
    ...modelHeadOf(count, meta, fit.family),
    coefficients: count.columns.map((c, j) => {
      const k = position.get(j);
      return k === undefined
        ? { term: c.name, status: "aliased", estimate: null }
        : { term: c.name, status: "estimated", estimate: fit.beta[k] };
    }),
    covariance: {
      terms: columns.count.map((c) => count.columns[c].name),
      zero_terms: fit.boundary.zeroPart ? [] : columns.zero.map((c) => zero.columns[c].name),
      log_alpha: nb && !fit.boundary.alpha,
      matrix: keep.map((a) => keep.map((b) => cov.data[a * m + b])),
      type: kind.type,
      ...(kind.clusters ? { clusters: kind.clusters } : {}),
    },
    dispersion_phi: 1,
    alpha: nb ? fit.alpha : null,
    alpha_std_error: logAlphaVar !== null ? fit.alpha * Math.sqrt(logAlphaVar) : null,
    zero_part: {
      probability_of: isHurdle(fit.family) ? "non_zero_count" : "structural_zero",
      model: zero.model.text,
      ...modelVariablesOf(zero),
      coefficients: columns.zero.map((c, k) => ({
        term: zero.columns[c].name,
        status: "estimated" as const,
        estimate: fit.gamma[k],
      })),
      boundary: fit.boundary.zeroPart,
    },
    ...calendarOf(count),
  };
}
