// Flags for groups of new rows (predict --flag-by: a clinic's week): each
// group's observed total against the predictive distribution of its total
// under the saved model, mixed over the same draws of the estimates as the
// rows' predictions. Given a draw, the total is Poisson with the summed mean
// (Poisson), a negative binomial with the summed mean and variance φ·mean
// (quasi-Poisson, as for rows), or the exact sum of the rows' NB2 counts by
// the recursion of negbin-sum.ts (NB2).
import type { PredictionDesign } from "../design/predict-design.js";
import type { ModelFile } from "../io/model-file.js";
import { negbinSumPmf, negbinSumReach, negbinSumTerms } from "./negbin-sum.js";
import { drawMeans, type GroupFlag, groupMembers, type PredictOptions, prepare, rowLinear } from "./predict.js";
import { addDraw, flagLimit, predictiveTable, tableQuantile } from "./predictive.js";
import { zeroGroupFlags } from "./zero-group-flags.js";

export interface GroupFlags {
  by: string[];
  groups: GroupFlag[];
  method: string;
  /** Draws the NB2 totals mixed over (the work of the exact sums is bounded). */
  draws: number;
}

/** Work (multiply-adds) the NB2 totals may take across all draws before fewer draws are used. */
const NB_WORK = 3e8;
const NB_MIN_DRAWS = 100;

/** Mixture table of per-draw pmfs (each weighted 1/D), and the upper tail at the observed total. */
function mixNegbinSums(
  mus: Float64Array[],
  alphas: Float64Array,
  D: number,
  observed: number | null,
): { pmf: Float64Array; upperTail: number | null } {
  let pmf: Float64Array = new Float64Array(0);
  let tail = 0;
  const row = new Float64Array(mus.length);
  for (let d = 0; d < D; d++) {
    for (let i = 0; i < mus.length; i++) row[i] = mus[i][d];
    const reach = negbinSumReach(row, alphas[d], observed ?? 0);
    const p = negbinSumPmf(row, alphas[d], reach, observed ?? 0);
    pmf = addDraw(pmf, p, D);
    if (observed !== null) for (let k = observed; k < p.length; k++) tail += p[k] / D;
  }
  return { pmf, upperTail: observed === null ? null : observed === 0 ? 1 : Math.min(1, tail) };
}

/** Groups of the new rows by `ids` (0 … names.length − 1), flagged at o.flagLevel. */
export function groupFlags(
  pd: PredictionDesign,
  saved: ModelFile,
  o: PredictOptions,
  by: string[],
  ids: Int32Array,
  names: string[],
): GroupFlags {
  if (saved.zero_part) return zeroGroupFlags(pd, saved, o, by, ids, names);
  const prep = prepare(pd, saved, o);
  const D = o.draws;
  const { members, observed: totals } = groupMembers(pd, ids, names.length);
  const idx: number[] = [];
  const val: number[] = [];
  // Per group: the rows' means under every draw, and the expected total at the estimates.
  const means = members.map((rows) =>
    rows.map((i) => {
      const { eta, zero } = rowLinear(pd, prep, i, idx, val);
      const mus = new Float64Array(D);
      if (!zero && eta > -Infinity) drawMeans(prep, eta, idx, val, mus);
      return { mus, expected: zero ? 0 : Math.exp(eta) };
    }),
  );
  const negbin = saved.family === "negbin" && prep.alpha > 0;
  let dNb = D;
  if (negbin) {
    let work = 0;
    for (const g of means) {
      const atEstimate = g.map((r) => r.expected);
      const reach = negbinSumReach(atEstimate, prep.alpha);
      work += reach * negbinSumTerms(atEstimate, prep.alpha, reach);
    }
    dNb = Math.min(D, Math.max(NB_MIN_DRAWS, Math.floor(NB_WORK / Math.max(work, 1))));
  }
  const tail = (1 - o.level) / 2;
  const groups = members.map((rows, g) => {
    const observed = totals[g];
    const rowMeans = means[g].map((r) => r.mus);
    let table: { pmf: Float64Array; upperTail: number | null };
    if (negbin) table = mixNegbinSums(rowMeans, prep.alphas, dNb, observed);
    else {
      const total = new Float64Array(D);
      for (const m of rowMeans) for (let d = 0; d < D; d++) total[d] += m[d];
      const phi = prep.phi;
      table = predictiveTable(
        total,
        prep.quasi ? (m: number) => (phi > 1 && m > 0 ? (phi - 1) / m : 0) : new Float64Array(D),
        observed,
      );
    }
    const { limit, chance } = flagLimit(table.pmf, o.flagLevel);
    return {
      group: names[g],
      rows: rows.length,
      observed,
      expected: means[g].reduce((a, r) => a + r.expected, 0),
      prediction_interval: [tableQuantile(table.pmf, tail), tableQuantile(table.pmf, 1 - tail)] as [number, number],
      flag_limit: limit,
      upper_tail_p: table.upperTail,
      flag_chance: chance,
      flagged: observed !== null && observed > limit,
    };
  });
  const dist =
    saved.family === "negbin"
      ? `the exact distribution of a sum of NB2 counts (a recursion; Furman 2007) mixed over ${negbin ? dNb : D} draws of the coefficients and log alpha`
      : saved.family === "quasipoisson"
        ? `a negative binomial with the summed mean and variance phi·mean, mixed over ${D} draws of the coefficients`
        : `the Poisson distribution of the summed mean, mixed over ${D} draws of the coefficients`;
  return {
    by,
    groups,
    method: `each group's total against ${dist}; flagged when the total is above the ${o.flagLevel} quantile`,
    draws: negbin ? dNb : D,
  };
}
