// What a GEE fit reports: its robust covariance in the form the Wald tests
// and limits of clustered counts use, and the JSON block of the working
// correlation, scale and model-based standard errors.
import type { Design } from "../design/design.js";
import type { GeeFit } from "../fit/gee.js";
import type { WorkingCorrelation } from "../fit/working-correlation.js";
import { type Clustering, type ClusterCovariance, type ClusterCovarianceType, dominantClusters } from "./cluster.js";

export interface GeeSummary {
  working_correlation: WorkingCorrelation;
  /** The working-correlation parameter ρ (0 under independence). */
  correlation: number;
  /** The column that orders the rows within a cluster (AR(1)); null: not used. */
  order_by: string | null;
  /** φ: the Pearson moment estimate for the quasi-Poisson, else 1 (it scales only the model-based errors). */
  scale: number;
  scale_estimated: boolean;
  cluster_column: string;
  clusters: number;
  cluster_sizes: { min: number; max: number; mean: number };
  iterations: number;
  converged: boolean;
  /** NB2: alpha held at its maximum-likelihood value under independence. */
  negbin_alpha_held: number | null;
  /** Model-based standard errors √diag(φ·B⁻¹), by design column (null: not estimated), beside the robust ones reported. */
  model_std_errors: (number | null)[];
}

/** The GEE's robust (CR1) covariance as the covariance of clustered counts: t on G − 1 df. */
export function geeCovariance(g: GeeFit, clustering: Clustering): ClusterCovariance {
  return {
    covariance: g.robustCovariance,
    type: `gee-${g.structure}-CR1` as ClusterCovarianceType,
    clusters: [{ column: clustering.column, count: g.clusters }],
    df: g.clusters - 1,
    eigenvaluesClipped: 0,
    dominant: dominantClusters(clustering),
  };
}

export function geeSummaryOf(
  design: Design,
  estimable: number[],
  g: GeeFit,
  clustering: Clustering,
  orderBy: string | null,
  scaleEstimated: boolean,
  alpha: number | null,
): GeeSummary {
  const pos = new Map(estimable.map((c, k) => [c, k]));
  const q = g.modelCovariance.p;
  return {
    working_correlation: g.structure,
    correlation: g.correlation,
    order_by: g.structure === "ar1" ? orderBy : null,
    scale: g.scale,
    scale_estimated: scaleEstimated,
    cluster_column: clustering.column,
    clusters: g.clusters,
    cluster_sizes: g.clusterSizes,
    iterations: g.iterations,
    converged: g.converged,
    negbin_alpha_held: alpha,
    model_std_errors: design.columns.map((_, c) => {
      const k = pos.get(c);
      return k === undefined ? null : Math.sqrt(g.modelCovariance.data[k * q + k]);
    }),
  };
}

/** Warnings a GEE fit adds to the report. */
export function geeWarnings(g: GeeFit, s: GeeSummary): string[] {
  const out: string[] = [];
  if (!g.converged)
    out.push(
      `the estimating equations did not settle within ${g.iterations} scoring steps; the GEE estimates may be inaccurate`,
    );
  if (g.correlation !== g.correlationRaw)
    out.push(
      `the moment estimate of the working correlation (${g.correlationRaw.toPrecision(3)}) lies outside the range where the ${s.working_correlation} structure is valid for clusters of up to ${s.cluster_sizes.max} rows; it was held at ${g.correlation.toPrecision(3)}`,
    );
  out.push(
    "GEE estimates rest on estimating equations, not a likelihood: the deviance, log-likelihood, AIC and BIC shown are those of the independence model at the GEE estimates and do not rank GEE models",
  );
  return out;
}
