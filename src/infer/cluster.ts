// Cluster-robust covariance of the estimates for repeated counts from the same
// units (clinics, weeks): the sandwich with the rows' scores summed within
// clusters (Liang and Zeger 1986), with the CR1 small-sample factor
// G/(G − 1)·(N − 1)/(N − p) (Cameron and Miller 2015, §VI.A), and for two
// clusterings the two-way estimator V₁ + V₂ − V₁₂ of Cameron, Gelbach and
// Miller (2011), whose negative eigenvalues, when the difference makes any,
// are set to 0 (their §2.3 fix). Wald tests from it refer to Student's t on
// G − 1 degrees of freedom, G the smallest number of clusters.
import { type Clustering, clusterIntersection } from "../design/clusters.js";
import type { Design } from "../design/design.js";
import { informationOf } from "../fit/kernel/information.js";
import type { GlmFit } from "../fit/kernel/types.js";
import { clipNegativeEigenvalues } from "../math/eigen.js";
import type { SymMatrix } from "../math/linalg.js";

export type { Clustering } from "../design/clusters.js";

/** Clusters that hold more than half of the rows. */
export function dominantClusters(c: Clustering): { column: string; cluster: string; share: number }[] {
  const sizes = new Float64Array(c.count);
  let n = 0;
  for (const id of c.ids)
    if (id >= 0) {
      sizes[id]++;
      n++;
    }
  const out: { column: string; cluster: string; share: number }[] = [];
  sizes.forEach((s, id) => {
    if (s > n / 2) out.push({ column: c.column, cluster: c.names?.[id] ?? String(id), share: s / n });
  });
  return out;
}

export type ClusterCovarianceType =
  | "cluster-CR1"
  | "two-way-cluster-CR1"
  | "gee-independence-CR1"
  | "gee-exchangeable-CR1"
  | "gee-ar1-CR1";

export interface ClusterCovariance {
  covariance: SymMatrix;
  /** One- or two-way CR1, or the GEE's robust covariance (with the same CR1 factor). */
  type: ClusterCovarianceType;
  clusters: { column: string; count: number }[];
  /** Degrees of freedom of the t reference: G − 1 for the smallest G. */
  df: number;
  /** Negative eigenvalues set to 0 in the two-way sum (0 when none). */
  eigenvaluesClipped: number;
  /** Clusters that hold more than half of the rows. */
  dominant: { column: string; cluster: string; share: number }[];
}

/** CR1 covariance for one clustering. */
function oneWay(design: Design, fit: GlmFit, scores: Float64Array, c: Clustering, nCoef: number): SymMatrix {
  const v = informationOf(design.matrix, fit).clusterSandwich(scores, c.ids, c.count);
  const n = design.weights ? design.weights.reduce((a, b) => a + b, 0) : design.n;
  const factor = (c.count / (c.count - 1)) * ((n - 1) / (n - nCoef));
  return { p: v.p, data: v.data.map((x) => x * factor) };
}

/** Cluster-robust covariance over the fit's estimated columns, for one or two clusterings. */
export function clusterCovariance(design: Design, fit: GlmFit, clusterings: Clustering[]): ClusterCovariance {
  if (clusterings.length < 1 || clusterings.length > 2) throw new Error("one or two clusterings");
  // Row scores for the log link: weight·(y − mu)/(1 + alpha·mu), the same as the row sandwich's.
  const scores = new Float64Array(design.n);
  for (let i = 0; i < design.n; i++) {
    const mu = fit.mu[i];
    if (!(mu > 0)) continue;
    scores[i] = (design.weights ? design.weights[i] : 1) * ((design.y[i] - mu) / (1 + fit.alpha * mu));
  }
  const nCoef = fit.estimable.length;
  const clusters = clusterings.map((c) => ({ column: c.column, count: c.count }));
  const df = Math.min(...clusterings.map((c) => c.count)) - 1;
  if (clusterings.length === 1)
    return {
      covariance: oneWay(design, fit, scores, clusterings[0], nCoef),
      type: "cluster-CR1",
      clusters,
      df,
      eigenvaluesClipped: 0,
      dominant: dominantClusters(clusterings[0]),
    };
  const [a, b] = clusterings;
  const va = oneWay(design, fit, scores, a, nCoef);
  const vb = oneWay(design, fit, scores, b, nCoef);
  const vab = oneWay(design, fit, scores, clusterIntersection(a, b), nCoef);
  const sum: SymMatrix = { p: va.p, data: va.data.map((x, k) => x + vb.data[k] - vab.data[k]) };
  const { matrix, clipped } = clipNegativeEigenvalues(sum);
  // Only a sum with a negative eigenvalue is replaced; otherwise it stands as computed.
  return {
    covariance: clipped > 0 ? matrix : sum,
    type: "two-way-cluster-CR1",
    clusters,
    df,
    eigenvaluesClipped: clipped,
    dominant: [...dominantClusters(a), ...dominantClusters(b)],
  };
}

/** The warnings of clustered counts: few clusters (under about 30, common practice), and a cluster holding most rows. */
export function clusterWarnings(
  clusters: { column: string; count: number }[],
  dominant: { column: string; cluster: string; share: number }[],
): string[] {
  const out: string[] = [];
  for (const c of clusters)
    if (c.count < 30)
      out.push(
        `only ${c.count} clusters of '${c.column}': cluster-robust standard errors are unreliable with few clusters (fewer than about 30 is common practice for caution; Cameron and Miller 2015)`,
      );
  for (const d of dominant)
    out.push(
      `one cluster of '${d.column}' ('${d.cluster}') holds ${Math.round(100 * d.share)}% of the rows; the cluster-robust errors then rest mostly on the others`,
    );
  return out;
}
