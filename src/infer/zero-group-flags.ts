// Group flags under an excess-zero family (predict --flag-by): given a draw of
// the estimates, a group's total is the sum of independent zero-modified
// counts, whose distribution is the convolution of the rows' pmfs
// (zero-predict.ts); the predictive distribution is the mixture over draws.
// The convolutions' work is bounded: past a budget, fewer draws are mixed.
import type { PredictionDesign } from "../design/predict-design.js";
import type { ModelFile } from "../io/model-file.js";
import { type GroupFlag, groupMembers, type PredictOptions, prepare } from "./predict.js";
import { addDraw, flagLimit, tableQuantile } from "./predictive.js";
import { zeroModifiedMean, zeroModifiedPmf, zeroRowDraws, type ZeroRowDraws } from "./zero-predict.js";

/** Multiply-adds the convolutions may take across all draws before fewer draws are used. */
const WORK = 3e8;
const MIN_DRAWS = 100;

/** The convolution of two pmfs. */
export function convolve(a: Float64Array, b: Float64Array): Float64Array {
  const out = new Float64Array(a.length + b.length - 1);
  for (let i = 0; i < a.length; i++) {
    const x = a[i];
    if (x === 0) continue;
    for (let j = 0; j < b.length; j++) out[i + j] += x * b[j];
  }
  return out;
}

/**
 * The table without its far upper end: the entries past the point where what
 * is left is below 1e-16 of the largest (the total's tail probabilities are
 * then resolved down to about 1e-13).
 */
export function trimTail(p: Float64Array): Float64Array {
  let peak = 0;
  for (let k = 0; k < p.length; k++) if (p[k] > peak) peak = p[k];
  let rest = 0;
  let end = p.length;
  while (end > 1 && rest + p[end - 1] < 1e-16 * peak) rest += p[--end];
  return end === p.length ? p : p.subarray(0, end);
}

/** A row's table length at the estimates: mean + 20 standard deviations of the count part + 30. */
function lengthAt(r: ZeroRowDraws, alpha: number): number {
  return Math.ceil(r.lambda + 20 * Math.sqrt(r.lambda + alpha * r.lambda * r.lambda) + 30);
}

export function zeroGroupFlags(
  pd: PredictionDesign,
  saved: ModelFile,
  o: PredictOptions,
  by: string[],
  ids: Int32Array,
  names: string[],
): { by: string[]; groups: GroupFlag[]; method: string; draws: number } {
  const prep = prepare(pd, saved, o);
  const hurdle = saved.zero_part!.probability_of === "non_zero_count";
  const D = o.draws;
  const { members, observed: totals } = groupMembers(pd, ids, names.length);
  // At the estimates first (no draws), for the expected totals and the work; each group's draws when it comes.
  const atEstimates = members.map((rows) => rows.map((i) => zeroRowDraws(pd, prep, i, 0)));
  let work = 0;
  for (const g of atEstimates) {
    // The running total's table is trimmed, so it is never much longer than the whole total's reach.
    let mean = 0,
      variance = 0;
    for (const r of g) {
      mean += r.lambda;
      variance += r.lambda + prep.alpha * r.lambda * r.lambda;
    }
    const reach = Math.ceil(mean + 20 * Math.sqrt(variance) + 30);
    let sofar = 1;
    for (const r of g) {
      const len = lengthAt(r, prep.alpha);
      work += Math.min(sofar, reach) * len;
      sofar += len;
    }
  }
  const used = Math.min(D, Math.max(MIN_DRAWS, Math.floor(WORK / Math.max(work, 1))));
  const tail = (1 - o.level) / 2;
  const groups = members.map((rows, g) => {
    const observed = totals[g];
    const rowDraws = rows.map((i) => zeroRowDraws(pd, prep, i, used));
    let pmf: Float64Array = new Float64Array(1);
    for (let d = 0; d < used; d++) {
      let total: Float64Array = Float64Array.of(1);
      for (const r of rowDraws)
        total = trimTail(convolve(total, zeroModifiedPmf(r.lambdas[d], prep.alphas[d], r.probs[d], hurdle, null).pmf));
      pmf = addDraw(pmf, total, used);
    }
    let upper: number | null = null;
    if (observed !== null) {
      upper = 0;
      for (let k = observed; k < pmf.length; k++) upper += pmf[k];
      upper = observed === 0 ? 1 : Math.min(1, upper);
    }
    const { limit, chance } = flagLimit(pmf, o.flagLevel);
    return {
      group: names[g],
      rows: rows.length,
      observed,
      expected: atEstimates[g].reduce((a, r) => a + zeroModifiedMean(r.lambda, prep.alpha, r.prob, hurdle), 0),
      prediction_interval: [tableQuantile(pmf, tail), tableQuantile(pmf, 1 - tail)] as [number, number],
      flag_limit: limit,
      upper_tail_p: upper,
      flag_chance: chance,
      flagged: observed !== null && observed > limit,
    };
  });
  return {
    by,
    groups,
    method: `each group's total against the exact distribution of a sum of ${hurdle ? "hurdle" : "zero-inflated"} ${saved.alpha !== null ? "NB2" : "Poisson"} counts (the convolution of the rows' distributions) mixed over ${used} joint draws of the estimates (tail probabilities resolved to about 1e-12); flagged when the total is above the ${o.flagLevel} quantile`,
    draws: used,
  };
}
