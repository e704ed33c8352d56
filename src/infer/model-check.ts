// Adequacy of the model in use (check --family negbin|quasipoisson): does the
// fitted family's variance describe the counts, and does it expect as many
// zeros as there are? Three tests on the fit's Pearson residuals
// r = (y − μ)/√V(μ), V = μ + αμ² (NB2) or φμ (quasi-Poisson):
// * Pearson chi-square Σr² against chi-square on the residual df (one fewer
//   for the NB2's alpha), upper tail: more variation than the family allows;
// * the shape of the variance: the least-squares slope of r² − 1 on μ, with
//   a heteroscedasticity-consistent (HC0) standard error (White 1980),
//   two-sided: under the right variance function E[r²] = 1 at every mean;
// * zeros: observed against the model's expected number, z = (O − E)/√Σp₀(1 − p₀),
//   one-sided for an excess (p₀ = P(Y = 0) under the family at each mean).
import type { Design } from "../design/design.js";
import type { CountFit } from "../fit/count-fit.js";
import { chiSquareUpperTail, normalTwoSidedP, normalUpperTail } from "../math/distributions.js";
import type { CheckResult, CheckTest } from "./check.js";
import { fitStatistics, quasiPhi } from "./fit-statistics.js";
import { sourceOf } from "./source.js";

/** P(Y = 0) under the fitted family at mean mu: NB2, or the negative binomial with variance phi·mu (quasi). */
function zeroProbability(mu: number, alpha: number, phi: number | null): number {
  if (!(mu > 0)) return 1;
  if (phi !== null) return phi > 1 ? Math.exp((-mu * Math.log(phi)) / (phi - 1)) : Math.exp(-mu);
  return alpha > 0 ? (1 + alpha * mu) ** (-1 / alpha) : Math.exp(-mu);
}

/** What the adequacy tests need of a fitted model, row by row. */
export interface ModelMoments {
  /** The family tested, as JSON names it, and in words. */
  family: "negbin" | "quasipoisson" | "zip" | "zinb" | "hurdle-poisson" | "hurdle-negbin";
  name: string;
  mean: Float64Array;
  variance: Float64Array;
  /** P(Y = 0) under the fitted model. */
  p0: Float64Array;
  /** Residual degrees of freedom of the Pearson test (null: no Pearson test, as for the quasi-Poisson). */
  pearsonDf: number | null;
  /** What to try when the variance grows faster, or more slowly, with the mean than the model says. */
  faster: string;
  slower: string;
  alpha: number;
  alphaStdError: number | null;
  boundary: boolean;
  phi?: number;
  /** The next step when the variance does not fit (default: the plain families' advice). */
  misfitNext?: string;
  /** Deviance / residual df of a GLM fit (the zero families have no deviance). */
  devianceRatio?: number;
}

export function runModelChecks(
  design: Design,
  mf: CountFit,
  pois: CountFit,
  nb: CountFit,
  testLevel: number,
): CheckResult {
  const quasi = mf.family === "quasipoisson";
  const fit = mf.fit;
  const alpha = quasi ? 0 : fit.alpha;
  const phi = quasi ? quasiPhi(design, fit) : null;
  const st = fitStatistics(design, fit, !quasi);
  return momentChecks(
    design,
    {
      family: quasi ? "quasipoisson" : "negbin",
      name: quasi ? "quasi-Poisson" : "negative-binomial",
      mean: fit.mu,
      variance: Float64Array.from(fit.mu, (mu) => (quasi ? phi! * mu : mu + alpha * mu * mu)),
      p0: Float64Array.from(fit.mu, (mu) => zeroProbability(mu, alpha, phi)),
      // For the quasi-Poisson, phi is the Pearson ratio by construction: its Pearson test cannot fail and is left out.
      pearsonDf: quasi ? null : st.df - 1,
      faster: quasi ? " (try --family negbin)" : "",
      slower: quasi ? "" : " (try --family quasipoisson)",
      alpha,
      alphaStdError: quasi ? null : (mf.negbin?.alphaStdError ?? null),
      boundary: quasi ? true : !!mf.negbin?.boundary,
      ...(quasi ? { phi: phi! } : {}),
      devianceRatio: fit.deviance / (st.df - (quasi ? 0 : 1)),
    },
    pois,
    nb,
    testLevel,
  );
}

/** The three adequacy tests and the verdict, from the model's row moments. */
export function momentChecks(
  design: Design,
  mm: ModelMoments,
  pois: CountFit,
  nb: CountFit,
  testLevel: number,
): CheckResult {
  const { y, weights } = design;
  const n = design.n;
  const w = (i: number) => (weights ? weights[i] : 1);
  const name = mm.name;
  const quasi = mm.pearsonDf === null;
  const df = mm.pearsonDf ?? 0;
  const fmt = (x: number) => x.toFixed(2);
  const mean = mm.mean,
    vari = mm.variance;
  const tests: CheckTest[] = [];

  let pearson = 0,
    sw = 0,
    smu = 0;
  for (let i = 0; i < n; i++)
    if (mean[i] > 0) {
      pearson += (w(i) * (y[i] - mean[i]) ** 2) / vari[i];
      sw += w(i);
      smu += w(i) * mean[i];
    }
  if (!quasi) {
    const p = df > 0 ? chiSquareUpperTail(pearson, df) : NaN;
    tests.push({
      name: "model_pearson",
      short: "Pearson under the model",
      label: `Pearson chi-square, ${name} variance`,
      statistic: pearson,
      df,
      p_value: p,
      flagged: p < testLevel,
      reference: "chi-square on the residual df (less one for alpha, when there is one)",
      reading: `Pearson chi-square / df = ${fmt(pearson / df)}; ${p < testLevel ? `more variation than the ${name} allows` : `consistent with the ${name} variance`}`,
    });
  }

  // Slope of r² − 1 on μ (centred), with the HC0 sandwich standard error.
  const muBar = smu / sw;
  let sxy = 0,
    sxx = 0;
  for (let i = 0; i < n; i++)
    if (mean[i] > 0) {
      const r2 = (y[i] - mean[i]) ** 2 / vari[i] - 1;
      const x = mean[i] - muBar;
      sxy += w(i) * x * r2;
      sxx += w(i) * x * x;
    }
  const slope = sxx > 0 ? sxy / sxx : 0;
  let level = 0;
  for (let i = 0; i < n; i++) if (mean[i] > 0) level += w(i) * ((y[i] - mean[i]) ** 2 / vari[i] - 1);
  level /= sw;
  let meat = 0;
  for (let i = 0; i < n; i++)
    if (mean[i] > 0) {
      const x = mean[i] - muBar;
      const e = (y[i] - mean[i]) ** 2 / vari[i] - 1 - level - slope * x;
      meat += w(i) * x * x * e * e;
    }
  const zShape = sxx > 0 && meat > 0 ? slope / (Math.sqrt(meat) / sxx) : 0;
  const pShape = normalTwoSidedP(zShape);
  tests.push({
    name: "variance_shape",
    short: "variance shape",
    label: `Shape of the ${name} variance (squared residuals against the mean)`,
    statistic: zShape,
    df: null,
    p_value: pShape,
    flagged: pShape < testLevel,
    reference: "two-sided standard normal; HC0 standard error",
    reading: `slope of the squared Pearson residual on the mean ${slope.toPrecision(3)}; ${
      pShape < testLevel
        ? zShape > 0
          ? `the variance grows faster with the mean than the ${name} allows${mm.faster}`
          : `the variance grows more slowly with the mean than the ${name} allows${mm.slower}`
        : "the variance grows with the mean as the model says"
    }`,
  });

  let obs0 = 0,
    exp0 = 0,
    var0 = 0,
    expPois = 0,
    expNb = 0;
  for (let i = 0; i < n; i++) {
    if (y[i] === 0) obs0 += w(i);
    const p0 = mm.p0[i];
    exp0 += w(i) * p0;
    var0 += w(i) * p0 * (1 - p0);
    expPois += w(i) * Math.exp(-pois.fit.mu[i]);
    expNb += w(i) * zeroProbability(nb.fit.mu[i], nb.fit.alpha, null);
  }
  const zZero = var0 > 0 ? (obs0 - exp0) / Math.sqrt(var0) : 0;
  const pZero = normalUpperTail(zZero);
  tests.push({
    name: "model_zeros",
    short: "zeros under the model",
    label: `Zero counts against the ${name} expectation`,
    statistic: zZero,
    df: null,
    p_value: pZero,
    flagged: pZero < testLevel,
    reference: "one-sided standard normal (an excess of zeros)",
    reading: `${obs0} zero counts observed, ${exp0.toFixed(1)} expected under the ${name} fit`,
  });

  const flagged = tests.filter((t) => t.flagged);
  const zeroFlag = flagged.some((t) => t.name === "model_zeros");
  const verdict: CheckResult["verdict"] =
    flagged.length === 0
      ? {
          code: "model_adequate",
          text: `The ${name} model is adequate: no test of its variance or zeros flags at ${testLevel}.`,
          next_step: `Report the ${name} fit (tallyfit fit --family ${mm.family}); keep running this check as the data grow.`,
        }
      : zeroFlag
        ? {
            code: "excess_zeros",
            text: `More zero counts than the ${name} model expects (${obs0} observed, ${exp0.toFixed(1)} expected).`,
            next_step:
              "Look for rows that cannot have events (closed units, structural zeros) and remove them or model them separately.",
          }
        : {
            code: "variance_misfit",
            text: `The ${name} variance does not describe the counts (${flagged.map((t) => t.short).join(", ")} flagged at ${testLevel}).`,
            next_step: mm.misfitNext
              ? mm.misfitNext
              : quasi
                ? "If the variance grows faster than the mean, refit with --family negbin; look for missing terms or groups of rows that differ."
                : "Look for missing terms, groups of rows that differ, or dependence between rows (check --cluster); --family quasipoisson when the variance grows in proportion to the mean.",
          };
  const warnings = [...design.notices];
  return {
    schema: "tallyfit.check/1",
    family_checked: mm.family,
    source: sourceOf(design),
    model: design.model.text,
    exposure: design.exposureName,
    n_used: n,
    test_level: testLevel,
    pearson_ratio: quasi ? 1 : pearson / df,
    deviance_ratio: mm.devianceRatio ?? Number.NaN,
    negbin: { alpha: mm.alpha, alpha_std_error: mm.alphaStdError, boundary: mm.boundary },
    ...(mm.phi !== undefined ? { phi: mm.phi } : {}),
    zeros: { observed: obs0, expected_poisson: expPois, expected_negbin: expNb, expected_model: exp0 },
    tests,
    verdict,
    flagged: flagged.length > 0,
    warnings,
  };
}
