// The fit command's composition for the excess-zero families: the plain
// Poisson (and NB2) fit for starting values and aliasing, the zero model,
// for the NB2 forms also the Poisson form (the likelihood-ratio test of
// alpha), then the report record.
import type { Design } from "../design/design.js";
import { FitError, InputError } from "../errors.js";
import { fitCounts } from "../fit/count-fit.js";
import type { FitControl } from "../fit/kernel/types.js";
import { fitZeroModel, type ZeroFit } from "../fit/zero-fit.js";
import { profileZeroModel } from "../fit/zero-profile.js";
import { chiSquareQuantile } from "../math/distributions.js";
import { isHurdle, isNegbinForm, type ZeroFamily } from "../fit/zero-likelihood.js";
import type { FitSummary } from "../infer/summary.js";
import { summarizeZeroFit } from "../infer/zero-summary.js";
import { screenRank, symZeros } from "../math/linalg.js";
import { columnValues } from "../design/matrix-columns.js";
import type { Clustering } from "../design/clusters.js";
import { clusterWarnings, dominantClusters } from "../infer/cluster.js";

export interface ZeroAnalysis {
  fit: ZeroFit;
  summary: FitSummary;
  /** The count part's estimable columns and the zero part's columns, as the fit's parameters are laid out. */
  columns: { count: number[]; zero: number[] };
}

/** The zero part's columns; an aliased one is an input error (the zero terms repeat each other). */
function zeroColumnsOf(zero: Design, zeroTerms: string): number[] {
  const p = zero.columns.length;
  const values = zero.columns.map((_, c) => columnValues(zero.matrix, c));
  const g = symZeros(p);
  for (let a = 0; a < p; a++)
    for (let b = 0; b < p; b++) {
      let s = 0;
      for (let i = 0; i < zero.n; i++) s += values[a][i] * values[b][i];
      g.data[a * p + b] = s;
    }
  const keep = screenRank(g);
  const dropped = zero.columns.filter((_, c) => !keep[c]).map((c) => c.name);
  if (dropped.length)
    throw new InputError(
      `--zero-terms "${zeroTerms}": ${dropped.join(", ")} ${dropped.length === 1 ? "is" : "are"} aliased with earlier zero-part columns (a linear combination of them); drop ${dropped.length === 1 ? "it" : "them"}.`,
    );
  return zero.columns.map((_, c) => c);
}

export function analyzeZeroFit(
  count: Design,
  zero: Design,
  family: ZeroFamily,
  o: {
    level: number;
    zeroTerms: string;
    control?: Partial<FitControl>;
    familyChoice?: { requested: string; reason: string };
    /** HC0 sandwich standard errors (--robust). */
    robust?: boolean;
    /** Cluster-robust (CR1) standard errors for one clustering, or two-way for two (--cluster). */
    clusters?: Clustering[];
    /** Profile-likelihood limits too (not with a sandwich, whose limits are Wald). */
    profiles?: boolean;
  },
): ZeroAnalysis {
  const plain = fitCounts(count, { family: "poisson", control: o.control });
  const noEvents = plain.fit.status.flatMap((s, c) => (s === "no_events" ? [count.columns[c].name] : []));
  if (noEvents.length)
    throw new InputError(
      `${count.source}: ${noEvents.join(", ")} ${noEvents.length === 1 ? "has" : "have"} no events, so ${noEvents.length === 1 ? "its" : "their"} count-part coefficient is not finite; the excess-zero families do not take such a level yet (merge or drop it).`,
    );
  let zeros = 0;
  for (let i = 0; i < count.n; i++) if (count.y[i] === 0) zeros++;
  if (zeros === 0)
    throw new InputError(
      `${count.source}: no zero counts among the rows used, so a zero part has nothing to describe; fit --family ${isNegbinForm(family) ? "negbin" : "poisson"} instead.`,
    );
  if (zeros === count.n) throw new FitError(`${count.source}: every count is zero; no count part can be fitted.`);
  const countColumns = plain.fit.estimable;
  const countStart = Float64Array.from(countColumns, (c) => plain.fit.beta[c]);
  const zeroColumns = zeroColumnsOf(zero, o.zeroTerms);
  const base = { countColumns, countStart, zeroColumns, maxIter: Math.max(500, o.control?.maxIter ?? 0) };
  let logAlphaStart: number | undefined;
  if (isNegbinForm(family)) {
    const nb = fitCounts(count, { family: "negbin", control: o.control });
    logAlphaStart = Math.log(Math.max(nb.fit.alpha, 0.01));
  }
  const clustered = o.clusters?.length ? o.clusters : null;
  const sandwich = clustered
    ? clustered.map((c) => ({ ids: c.ids, count: c.count }))
    : o.robust
      ? [{ ids: null, count: count.n }]
      : undefined;
  const fit = fitZeroModel(count, zero, { ...base, family, logAlphaStart, sandwich });
  let poissonForm: { logLik: number; parameters: number } | undefined;
  if (isNegbinForm(family)) {
    const pf = fitZeroModel(count, zero, { ...base, family: isHurdle(family) ? "hurdle-poisson" : "zip" });
    poissonForm = { logLik: pf.logLik, parameters: countColumns.length + zeroColumns.length };
  }
  const profiles =
    o.profiles && !o.robust && !clustered
      ? profileZeroModel(count, zero, { ...base, family }, fit, chiSquareQuantile(o.level, 1))
      : undefined;
  const summary = summarizeZeroFit(count, zero, fit, {
    profiles,
    level: o.level,
    countColumns,
    zeroColumns,
    zeroTerms: o.zeroTerms,
    poissonForm,
    familyChoice: o.familyChoice,
    sandwich: clustered
      ? { kind: "cluster", clusters: clustered.map((c) => ({ column: c.column, count: c.count })) }
      : o.robust
        ? { kind: "robust" }
        : undefined,
  });
  if (clustered)
    summary.warnings.push(
      ...clusterWarnings(
        clustered.map((c) => ({ column: c.column, count: c.count })),
        clustered.flatMap(dominantClusters),
      ),
    );
  return { fit, summary, columns: { count: countColumns, zero: zeroColumns } };
}
