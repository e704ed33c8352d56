// Does the check's model leave counts of the same cluster dependent? Two
// readings of the Pearson residuals r = (y − μ)/√(μ + αμ²) of the
// negative-binomial fit (the Poisson when alpha is 0):
// * the share of their variation between clusters, the intraclass
//   correlation of a one-way random-effects analysis of variance,
//   ICC = (MSB − MSW)/(MSB + (n₀ − 1)·MSW) with n₀ = (N − Σn_g²/N)/(G − 1),
//   tested by F = MSB/MSW on (G − 1, N − G) and with the F-based interval
//   (Searle, Linear Models, 1971, §9.8; n₀ for unequal clusters as there;
//   Donner 1986, Int. Stat. Rev. 54:67–82, reviews it);
// * the lag-1 serial correlation of the residuals within clusters in the
//   order of a column, after centring each cluster on its mean residual so
//   that a shared clinic level is not read as serial correlation:
//   ρ₁ = Σ e_j e_{j+1} / Σ e², centred by its null mean −Σ_g((n_g − 1)/n_g)/m
//   and scaled by √m (m neighbouring pairs), one-sided against the normal
//   (the large-sample null of a lag-1 autocorrelation; Box and Jenkins 1970, §2.1.6).
import type { Clustering } from "../design/clusters.js";
import { fQuantile, fUpperTail, normalUpperTail } from "../math/distributions.js";

export interface DependenceReading {
  cluster_column: string;
  clusters: number;
  residuals: string;
  icc: {
    estimate: number;
    ci: [number, number];
    level: number;
    f: number;
    df1: number;
    df2: number;
    p_value: number;
    flagged: boolean;
  };
  serial: {
    order_by: string;
    estimate: number;
    null_mean: number;
    z: number;
    pairs: number;
    p_value: number;
    flagged: boolean;
  } | null;
  reading: string;
}

/** Pearson residuals of the rows with a positive mean, in cluster order (sorted by `order` within a cluster). */
function residualsByCluster(
  y: Float64Array,
  mu: Float64Array,
  alpha: number,
  c: Clustering,
  order: Float64Array | null,
): { e: Float64Array; starts: number[] } {
  const members: number[][] = Array.from({ length: c.count }, () => []);
  for (let i = 0; i < y.length; i++) if (mu[i] > 0 && c.ids[i] >= 0) members[c.ids[i]].push(i);
  const e: number[] = [];
  const starts: number[] = [];
  for (const m of members) {
    if (m.length === 0) continue;
    if (order) m.sort((a, b) => order[a] - order[b] || a - b);
    starts.push(e.length);
    for (const i of m) e.push((y[i] - mu[i]) / Math.sqrt(mu[i] + alpha * mu[i] * mu[i]));
  }
  starts.push(e.length);
  return { e: Float64Array.from(e), starts };
}

export function dependenceReading(
  y: Float64Array,
  mu: Float64Array,
  alpha: number,
  clustering: Clustering,
  orderBy: { column: string; key: Float64Array } | null,
  testLevel: number,
  level = 0.95,
): DependenceReading {
  const { e, starts } = residualsByCluster(y, mu, alpha, clustering, orderBy?.key ?? null);
  const G = starts.length - 1;
  const N = e.length;
  let grand = 0;
  for (const v of e) grand += v;
  grand /= N;
  let ssb = 0,
    ssw = 0,
    sumN2 = 0;
  const means = new Float64Array(G);
  for (let g = 0; g < G; g++) {
    const a = starts[g],
      b = starts[g + 1],
      n = b - a;
    let m = 0;
    for (let j = a; j < b; j++) m += e[j];
    m /= n;
    means[g] = m;
    ssb += n * (m - grand) ** 2;
    for (let j = a; j < b; j++) ssw += (e[j] - m) ** 2;
    sumN2 += n * n;
  }
  const df1 = G - 1,
    df2 = N - G;
  const msb = ssb / df1,
    msw = ssw / df2;
  const n0 = (N - sumN2 / N) / df1;
  const f = msb / msw;
  const iccOf = (ratio: number) => (ratio - 1) / (ratio + n0 - 1);
  const pIcc = fUpperTail(f, df1, df2);
  const tail = (1 - level) / 2;
  const icc = {
    estimate: (msb - msw) / (msb + (n0 - 1) * msw),
    ci: [iccOf(f / fQuantile(1 - tail, df1, df2)), iccOf(f / fQuantile(tail, df1, df2))] as [number, number],
    level,
    f,
    df1,
    df2,
    p_value: pIcc,
    flagged: pIcc < testLevel,
  };
  let serial: DependenceReading["serial"] = null;
  if (orderBy) {
    let cross = 0,
      sq = 0,
      pairs = 0,
      bias = 0;
    for (let g = 0; g < G; g++) {
      const a = starts[g],
        b = starts[g + 1],
        n = b - a;
      for (let j = a; j < b; j++) {
        const d = e[j] - means[g];
        sq += d * d;
        if (j + 1 < b) cross += d * (e[j + 1] - means[g]);
      }
      if (n > 1) {
        pairs += n - 1;
        bias += (n - 1) / n;
      }
    }
    if (pairs > 0) {
      const estimate = cross / pairs / (sq / (N - G));
      const nullMean = -bias / pairs;
      const z = (estimate - nullMean) * Math.sqrt(pairs);
      const p = normalUpperTail(z);
      serial = {
        order_by: orderBy.column,
        estimate,
        null_mean: nullMean,
        z,
        pairs,
        p_value: p,
        flagged: p < testLevel,
      };
    }
  }
  const col = clustering.column;
  const parts: string[] = [];
  if (icc.flagged)
    parts.push(
      `counts from the same ${col} move together (between-cluster share of the residual variation ${icc.estimate.toFixed(3)}): use --cluster ${col} in fit and compare (or --gee exchangeable)`,
    );
  if (serial?.flagged)
    parts.push(
      `neighbouring rows of a ${col} in ${serial.order_by} order move together (lag-1 correlation ${serial.estimate.toFixed(3)}): use --cluster ${col} (or --gee ar1 --order-by ${serial.order_by})`,
    );
  return {
    cluster_column: col,
    clusters: G,
    residuals:
      alpha > 0
        ? "Pearson residuals of the negative-binomial fit"
        : "Pearson residuals of the Poisson fit (alpha is 0)",
    icc,
    serial,
    reading: parts.length
      ? `${parts.join("; ")}.`
      : `no sign that counts from the same ${col} move together${orderBy ? ` or that neighbouring rows in ${orderBy.column} order do` : ""} at ${testLevel}.`,
  };
}
