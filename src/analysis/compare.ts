// The compare command's composition: each model fitted in its family on the
// same rows, then the tests between them. Zero-inflated and hurdle families
// are fitted with the zero design (their zero part's terms) and compared by
// likelihood where a pair is nested for that (infer/compare-zero.ts), by AIC
// and BIC otherwise.
import type { Design } from "../design/design.js";
import type { FamilyName } from "../fit/count-fit.js";
import type { FitControl } from "../fit/kernel/types.js";
import { type ZeroFamily, ZERO_FAMILIES } from "../fit/zero-likelihood.js";
import type { Term } from "../formula/formula.js";
import { type Clustering, clusterCovariance } from "../infer/cluster.js";
import {
  type CompareModel,
  type ComparePair,
  type CompareResult,
  compareModels,
  markPreferred,
} from "../infer/compare.js";
import { ZERO_COMPARE_NOTE, type ZeroCompareModel, zeroPair } from "../infer/compare-zero.js";
import { chiSquareUpperTail } from "../math/distributions.js";
import { fitFamily, type MergeChoice } from "./fit.js";
import { analyzeZeroFit } from "./zero-fit.js";

const isZero = (f: string): f is ZeroFamily => (ZERO_FAMILIES as readonly string[]).includes(f);
/** A term's key for nesting: its variables in any order. */
const termKey = (t: Term) => [...t.variables].sort().join(":");

/**
 * Fit every design in its family (one family for all, or one per design) and
 * compare the fits (under clustering with --cluster). With a zero-inflated or
 * hurdle family, `zero` is the zero part's design on the same rows.
 */
export function analyzeCompare(
  designs: Design[],
  families: (FamilyName | ZeroFamily)[],
  control: Partial<FitControl>,
  merge: MergeChoice,
  clusters?: Clustering[],
  zero?: { design: Design; terms: string },
): CompareResult {
  const familyOf = (i: number) => (families.length === 1 ? families[0] : families[i]);
  const plainIdx = designs.map((_, i) => i).filter((i) => !isZero(familyOf(i)));
  const entries = plainIdx.map((i) => ({
    design: designs[i],
    mf: fitFamily(designs[i], familyOf(i) as FamilyName, control, merge),
  }));
  // Every design has the same rows (compare builds them on the rows complete for all), so one clustering serves all.
  const clustered = clusters?.length ? entries.map((e) => clusterCovariance(e.design, e.mf.fit, clusters)) : undefined;
  const plain = compareModels(entries, clustered);
  if (plainIdx.length === designs.length) return plain;
  if (!zero) throw new Error("a zero family needs the zero design");

  // Every model's row, in the order given: plain ones from compareModels, zero ones from their fits.
  const zeroKeys = zero.design.model.terms.map(termKey);
  const described: ZeroCompareModel[] = [];
  const models: CompareModel[] = designs.map((d, i) => {
    const f = familyOf(i);
    const countTerms = d.model.terms.map(termKey);
    if (!isZero(f)) {
      const m = plain.models[plainIdx.indexOf(i)];
      described.push({
        family: f,
        countTerms,
        zeroTerms: [],
        intercept: d.model.intercept,
        logLik: m.log_likelihood ?? Number.NaN,
        parameters: m.n_parameters,
      });
      return { ...m, index: i + 1, preferred_by: [] };
    }
    const { summary } = analyzeZeroFit(d, zero.design, f, { level: 0.95, zeroTerms: zero.terms, control });
    described.push({
      family: f,
      countTerms,
      zeroTerms: zeroKeys,
      intercept: d.model.intercept,
      logLik: summary.log_likelihood,
      parameters: summary.n_parameters,
    });
    return {
      index: i + 1,
      model: `${d.model.text}; zero part ~ ${zero.terms}`,
      family: f,
      n_parameters: summary.n_parameters,
      log_likelihood: summary.log_likelihood,
      deviance: Number.NaN,
      df_residual: summary.df_residual,
      aic: summary.aic,
      bic: summary.bic,
      preferred_by: [],
    };
  });
  markPreferred(models);
  const nested: ComparePair[] = plain.nested.map((p) => ({
    ...p,
    smaller: plainIdx[p.smaller - 1] + 1,
    larger: plainIdx[p.larger - 1] + 1,
  }));
  const notNested: [number, number][] = plain.not_nested.map(([a, b]) => [plainIdx[a - 1] + 1, plainIdx[b - 1] + 1]);
  for (let i = 0; i < designs.length; i++)
    for (let j = i + 1; j < designs.length; j++) {
      if (!isZero(familyOf(i)) && !isZero(familyOf(j))) continue;
      const ij = zeroPair(described[i], described[j], chiSquareUpperTail);
      const ji = ij ? null : zeroPair(described[j], described[i], chiSquareUpperTail);
      if (ij) nested.push({ smaller: i + 1, larger: j + 1, ...ij });
      else if (ji) nested.push({ smaller: j + 1, larger: i + 1, ...ji });
      else notNested.push([i + 1, j + 1]);
    }
  const notes = [...plain.notes.filter((n) => !n.startsWith("models that are not nested")), ZERO_COMPARE_NOTE];
  if (notNested.length) notes.unshift("models that are not nested are compared by AIC and BIC only");
  return { ...plain, models, nested, not_nested: notNested, notes };
}
