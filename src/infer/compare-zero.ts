// Comparing models when some are zero-inflated or hurdle fits: every model by
// its log-likelihood, AIC and BIC; a likelihood-ratio test only for pairs
// where the smaller model is the larger one with parameters fixed inside
// their range, or at the edge of it:
// * the same family, the count terms and the zero terms of one among the
//   other's: LR against chi-square on the difference in parameters;
// * zip ⊂ zinb and hurdle-poisson ⊂ hurdle-negbin (alpha = 0, the edge of its
//   range): the 50:50 mixture of chi-square(df − 1) and chi-square(df) (Self
//   and Liang 1987).
// A plain family against a zero-inflated one is not such a pair (π = 0 lies
// at the edge of the logit scale, infinitely far away), nor is a plain family
// against a hurdle: those pairs are compared by AIC and BIC only. No
// Vuong-type test is offered: its use for zero inflation is criticised
// (Wilson 2015, J. Data Sci. 13:583–590).
import type { ComparePair } from "./compare.js";

export interface ZeroCompareModel {
  family: string;
  /** Count terms and zero terms, as sets of variable keys. */
  countTerms: string[];
  zeroTerms: string[];
  intercept: boolean;
  logLik: number;
  parameters: number;
}

const ZERO = new Set(["zip", "zinb", "hurdle-poisson", "hurdle-negbin"]);
const POISSON_FORM: Record<string, string> = { zinb: "zip", "hurdle-negbin": "hurdle-poisson" };

function subset(a: string[], b: string[]): boolean {
  return a.every((t) => b.includes(t));
}

/** The test of a pair with at least one zero model, or null when the pair is not nested for an LR test. */
export function zeroPair(
  a: ZeroCompareModel,
  b: ZeroCompareModel,
  chiSquareUpperTail: (x: number, df: number) => number,
): Omit<ComparePair, "smaller" | "larger"> | null {
  if (!ZERO.has(a.family) || !ZERO.has(b.family)) return null;
  const sameFamily = a.family === b.family;
  const poissonForm = POISSON_FORM[b.family] === a.family;
  if (!sameFamily && !poissonForm) return null;
  if (!subset(a.countTerms, b.countTerms) || !subset(a.zeroTerms, b.zeroTerms) || (a.intercept && !b.intercept))
    return null;
  const df = b.parameters - a.parameters;
  const lr = Math.max(0, 2 * (b.logLik - a.logLik));
  if (df <= 0)
    return {
      test: "LR chi-square",
      df,
      statistic: null,
      p_value: null,
      note: "the same number of parameters: compare by the criteria",
    };
  if (poissonForm) {
    const p = lr === 0 ? 1 : 0.5 * (df > 1 ? chiSquareUpperTail(lr, df - 1) : 0) + 0.5 * chiSquareUpperTail(lr, df);
    return {
      test: "LR chi-square, boundary mixture",
      df,
      statistic: lr,
      p_value: p,
      note: "alpha = 0 is on the boundary: ½·chi-square(df − 1) + ½·chi-square(df)",
    };
  }
  return { test: "LR chi-square", df, statistic: lr, p_value: chiSquareUpperTail(lr, df), note: null };
}

export const ZERO_COMPARE_NOTE =
  "a plain family against a zero-inflated or hurdle one is compared by AIC and BIC only: no likelihood-ratio test is valid there (π = 0 is at the edge of the logit scale), and no Vuong-type test is offered (Wilson 2015 criticises its use for zero inflation)";
