// Dispersion and zero-count diagnostics for a Poisson fit, each with its
// statistic, degrees of freedom, p-value and a one-line reading, and a verdict.
import { rowsUsed } from "../design/collapsed.js";
import type { Design } from "../design/design.js";
import { informationOf } from "../fit/kernel/information.js";
import type { CountFit } from "../fit/count-fit.js";
import { chiSquareUpperTail, normalUpperTail } from "../math/distributions.js";
import type { DependenceReading } from "./dependence.js";
import { boundaryLrTest, fitStatistics } from "./fit-statistics.js";
import { type Source, sourceOf } from "./source.js";

export interface CheckTest {
  /** Short label for lists. */
  short: string;
  name:
    | "pearson"
    | "deviance"
    | "cameron_trivedi"
    | "dean_lawless"
    | "lr_negbin"
    | "zero_inflation"
    | "cluster_icc"
    | "serial_lag1"
    | "model_pearson"
    | "variance_shape"
    | "model_zeros";
  label: string;
  statistic: number;
  df: number | null;
  p_value: number;
  flagged: boolean;
  reference: string;
  reading: string;
}

export type VerdictCode = "poisson_adequate" | "overdispersed" | "excess_zeros" | "model_adequate" | "variance_misfit";

export interface CheckResult {
  schema: "tallyfit.check/1";
  /** The family whose adequacy is tested (absent: the Poisson, whose dispersion and zeros are tested). */
  family_checked?: "poisson" | "negbin" | "quasipoisson" | "zip" | "zinb" | "hurdle-poisson" | "hurdle-negbin";
  /** Quasi-Poisson: the dispersion phi of the model checked. */
  phi?: number;
  source: Source;
  model: string;
  exposure: string | null;
  n_used: number;
  test_level: number;
  pearson_ratio: number;
  deviance_ratio: number;
  negbin: { alpha: number; alpha_std_error: number | null; boundary: boolean };
  zeros: { observed: number; expected_poisson: number; expected_negbin: number; expected_model?: number };
  tests: CheckTest[];
  verdict: { code: VerdictCode; text: string; next_step: string };
  flagged: boolean;
  /** With --cluster: whether counts within clusters are dependent. */
  dependence?: DependenceReading;
  warnings: string[];
}

const NOT_DISPERSION = new Set<CheckTest["name"]>([
  "zero_inflation",
  "cluster_icc",
  "serial_lag1",
  "model_pearson",
  "variance_shape",
  "model_zeros",
]);

/** Dispersion tests only (used by --family auto): true when any flags overdispersion. */
export function dispersionFlagged(r: CheckResult): CheckTest[] {
  return r.tests.filter((t) => t.flagged && !NOT_DISPERSION.has(t.name));
}

/** The check with the dependence reading of --cluster added: its tests, its flag and its next step. */
export function withDependence(r: CheckResult, d: DependenceReading): CheckResult {
  const fmt = (x: number) => x.toFixed(3);
  const tests: CheckTest[] = [
    ...r.tests,
    {
      name: "cluster_icc",
      short: `between-${d.cluster_column} share`,
      label: `Intraclass correlation of residuals by ${d.cluster_column}`,
      statistic: d.icc.f,
      df: d.icc.df1,
      p_value: d.icc.p_value,
      flagged: d.icc.flagged,
      reference: `F on (${d.icc.df1}, ${d.icc.df2.toLocaleString("en")}) df, one-way analysis of variance`,
      reading: `ICC ${fmt(d.icc.estimate)} (${Math.round(100 * d.icc.level)}% ${fmt(d.icc.ci[0])} to ${fmt(d.icc.ci[1])}) over ${d.clusters} clusters; ${d.icc.flagged ? "counts from the same cluster move together" : "no sign of a shared cluster level"}`,
    },
  ];
  if (d.serial)
    tests.push({
      name: "serial_lag1",
      short: `lag-1 within ${d.cluster_column}`,
      label: `Lag-1 serial correlation within ${d.cluster_column} by ${d.serial.order_by}`,
      statistic: d.serial.z,
      df: null,
      p_value: d.serial.p_value,
      flagged: d.serial.flagged,
      reference: "one-sided standard normal, residuals centred within each cluster",
      reading: `lag-1 correlation ${fmt(d.serial.estimate)} over ${d.serial.pairs.toLocaleString("en")} neighbouring pairs; ${d.serial.flagged ? "neighbouring rows move together" : "no sign that neighbouring rows move together"}`,
    });
  const dependent = d.icc.flagged || !!d.serial?.flagged;
  return {
    ...r,
    tests,
    dependence: d,
    flagged: r.flagged || dependent,
    verdict: !dependent
      ? r.verdict
      : r.verdict.code === "poisson_adequate" || r.verdict.code === "model_adequate"
        ? {
            code: r.verdict.code,
            text: `The ${r.family_checked && r.family_checked !== "poisson" ? (r.family_checked === "negbin" ? "negative-binomial" : "quasi-Poisson") : "Poisson"} variance is adequate (no dispersion or zero-count test flags at ${r.test_level}), but counts within clusters are dependent.`,
            next_step: `${d.reading.charAt(0).toUpperCase()}${d.reading.slice(1)}`,
          }
        : { ...r.verdict, next_step: `${r.verdict.next_step} Also: ${d.reading}` },
  };
}

/**
 * Run every check on a Poisson fit `pois` (and the NB2 fit `nb` of the same
 * model, for the likelihood-ratio test and the negative-binomial zeros).
 */
export function runChecks(design: Design, pois: CountFit, nb: CountFit, testLevel: number): CheckResult {
  const { y, weights } = design;
  const fit = pois.fit;
  const mu = fit.mu;
  const st = fitStatistics(design, fit);
  const df = st.df;
  const n = design.n;
  const w = (i: number) => (weights ? weights[i] : 1);
  const tests: CheckTest[] = [];
  const fmt = (x: number) => x.toFixed(2);

  // 1–2. Goodness-of-fit statistics against chi-square on the residual df.
  const pP = df > 0 ? chiSquareUpperTail(st.pearson, df) : NaN;
  tests.push({
    name: "pearson",
    short: "Pearson",
    label: "Pearson chi-square",
    statistic: st.pearson,
    df,
    p_value: pP,
    flagged: pP < testLevel,
    reference: "chi-square on the residual df",
    reading: `Pearson chi-square / df = ${fmt(st.pearson / df)}; ${pP < testLevel ? "more variation than a Poisson model allows" : "no sign of extra variation"}`,
  });
  const pD = df > 0 ? chiSquareUpperTail(fit.deviance, df) : NaN;
  tests.push({
    name: "deviance",
    short: "deviance",
    label: "Deviance",
    statistic: fit.deviance,
    df,
    p_value: pD,
    flagged: pD < testLevel,
    reference: "chi-square on the residual df (rough when many means are below 5)",
    reading: `deviance / df = ${fmt(fit.deviance / df)}; ${pD < testLevel ? "the model leaves more variation than chance" : "consistent with chance variation"}`,
  });

  // Leverages h = mu·xᵀ(X'WX)⁻¹x: E[(y − mu)²] ≈ mu(1 − h) under the Poisson,
  // so (y − mu)² − y + h·mu has mean ≈ 0 (the adjustment of Dean and Lawless 1989).
  const quad = informationOf(design.matrix, fit).rowQuadraticForms();
  const lev = new Float64Array(n);
  for (let i = 0; i < n; i++) lev[i] = mu[i] * quad[i];

  // 3. Cameron and Trivedi (1990, J. Econometrics 46:347–364): regress
  //    ((y − mu)² − y + h·mu)/mu on mu without an intercept; a positive slope is NB2 overdispersion.
  let sxy = 0,
    sxx = 0,
    sw = 0;
  const ctY = (i: number) => ((y[i] - mu[i]) ** 2 - y[i] + lev[i] * mu[i]) / mu[i];
  for (let i = 0; i < n; i++) {
    if (!(mu[i] > 0)) continue;
    sxy += w(i) * ctY(i) * mu[i];
    sxx += w(i) * mu[i] * mu[i];
    sw += w(i);
  }
  const slope = sxy / sxx;
  let rss = 0;
  for (let i = 0; i < n; i++) if (mu[i] > 0) rss += w(i) * (ctY(i) - slope * mu[i]) ** 2;
  const tCT = slope / Math.sqrt(rss / (sw - 1) / sxx);
  const pCT = normalUpperTail(tCT);
  tests.push({
    name: "cameron_trivedi",
    short: "Cameron–Trivedi",
    label: "Cameron–Trivedi auxiliary regression (NB2)",
    statistic: tCT,
    df: null,
    p_value: pCT,
    flagged: pCT < testLevel,
    reference: "one-sided standard normal; leverage-adjusted",
    reading: `estimated alpha from the auxiliary regression ${slope.toPrecision(3)}; ${pCT < testLevel ? "variance grows faster than the mean" : "no evidence that variance grows faster than the mean"}`,
  });

  // 4. Dean and Lawless (1989, JASA 84:467–472) score test with the leverage
  //    adjustment: Σ[(y − mu)² − y + h·mu] / √(2Σmu²).
  let num = 0,
    den = 0;
  for (let i = 0; i < n; i++) {
    if (!(mu[i] > 0)) continue;
    num += w(i) * ((y[i] - mu[i]) ** 2 - y[i] + lev[i] * mu[i]);
    den += w(i) * mu[i] * mu[i];
  }
  const tDL = num / Math.sqrt(2 * den);
  const pDL = normalUpperTail(tDL);
  tests.push({
    name: "dean_lawless",
    short: "Dean–Lawless",
    label: "Dean–Lawless score test",
    statistic: tDL,
    df: null,
    p_value: pDL,
    flagged: pDL < testLevel,
    reference: "one-sided standard normal; leverage-adjusted",
    reading:
      pDL < testLevel
        ? "the score for extra-Poisson variation is clearly positive"
        : "the score for extra-Poisson variation is near zero",
  });

  // 5. Likelihood ratio against the negative binomial, boundary-corrected (Self and Liang 1987).
  const nbp = nb.negbin!;
  const lr = boundaryLrTest(nbp.logLik, nbp.poissonLogLik);
  tests.push({
    name: "lr_negbin",
    short: "LR against the negative binomial",
    label: "Likelihood ratio, Poisson against negative binomial",
    statistic: lr.stat,
    df: 1,
    p_value: lr.p,
    flagged: lr.p < testLevel,
    reference: "½·chi-square(1) tail (alpha = 0 is on the boundary)",
    reading: nbp.boundary
      ? "alpha is estimated at 0: the negative binomial reduces to the Poisson"
      : `alpha = ${nbp.alpha.toPrecision(3)}; ${lr.p < testLevel ? "the negative binomial fits clearly better" : "the negative binomial adds little"}`,
  });

  // 6. Zeros: observed against expected, and van den Broek's (1995, Biometrics
  //    51:738–743) score test for zero inflation: S = U²/(Σ(1−p0)/p0 − mᵀ(X'WX)⁻¹m),
  //    U = Σ(1{y=0} − p0)/p0, p0 = e^−mu, m = Σ mu·x.
  let obs0 = 0,
    exp0 = 0,
    expNb = 0,
    u = 0,
    i00 = 0;
  const a = nbp.alpha;
  for (let i = 0; i < n; i++) {
    const wi = w(i);
    if (y[i] === 0) obs0 += wi;
    const m = mu[i];
    const p0 = Math.exp(-m);
    exp0 += wi * p0;
    const mnb = nb.fit.mu[i];
    expNb += wi * (a > 0 ? (1 + a * mnb) ** (-1 / a) : Math.exp(-mnb));
    if (!(m > 0)) continue;
    u += (wi * ((y[i] === 0 ? 1 : 0) - p0)) / p0;
    i00 += (wi * (1 - p0)) / p0;
  }
  const wmu = new Float64Array(n);
  for (let i = 0; i < n; i++) wmu[i] = w(i) * mu[i];
  const adj = informationOf(design.matrix, fit).weightProjection(wmu);
  const vZ = i00 - adj;
  const sZ = vZ > 0 ? (u * u) / vZ : 0;
  const pZ = vZ > 0 ? chiSquareUpperTail(sZ, 1) : 1;
  const zFlag = pZ < testLevel && obs0 > exp0;
  tests.push({
    name: "zero_inflation",
    short: "zero inflation",
    label: "van den Broek zero-inflation score test",
    statistic: sZ,
    df: 1,
    p_value: pZ,
    flagged: zFlag,
    reference: "chi-square(1); flagged only when zeros are in excess",
    reading: `${obs0} zero counts observed, ${exp0.toFixed(1)} expected under the Poisson fit, ${expNb.toFixed(1)} under the negative binomial`,
  });

  const disp = tests.filter((t) => t.flagged && t.name !== "zero_inflation");
  // Zeros beyond the negative binomial as well: a normal approximation to the count of zeros (approximate).
  let varNb = 0;
  for (let i = 0; i < n; i++) {
    const mnb = nb.fit.mu[i];
    const p = a > 0 ? (1 + a * mnb) ** (-1 / a) : Math.exp(-mnb);
    varNb += w(i) * p * (1 - p);
  }
  const zBeyondNb = varNb > 0 ? (obs0 - expNb) / Math.sqrt(varNb) : 0;
  const zerosBeyondBoth = zFlag && normalUpperTail(zBeyondNb) < testLevel;
  let verdict: CheckResult["verdict"];
  if (zerosBeyondBoth)
    verdict = {
      code: "excess_zeros",
      text: `More zero counts than either model expects (${obs0} observed; ${exp0.toFixed(1)} Poisson, ${expNb.toFixed(1)} negative binomial).`,
      next_step:
        "Look for rows that cannot have events (closed units, months not reported) and remove them, or model them: fit --family zinb or hurdle-negbin (zip or hurdle-poisson without extra variation), with --zero-terms for what makes a zero more likely; --family auto tries them.",
    };
  else if (disp.length > 0)
    verdict = {
      code: "overdispersed",
      text: `Overdispersed: the counts vary more than a Poisson model allows (${disp.map((t) => t.short).join(", ")} flagged at ${testLevel}).`,
      next_step:
        "Refit with --family negbin (models the extra variation; compare AICs) or --family quasipoisson (keeps the Poisson estimates, widens the intervals by √φ).",
    };
  else
    verdict = {
      code: "poisson_adequate",
      text: `The Poisson model is adequate: no dispersion or zero-count test flags at ${testLevel}.`,
      next_step: "Report the Poisson fit (tallyfit fit); keep running this check as the data grow.",
    };
  const warnings: string[] = [...design.notices];
  let small = 0;
  for (let i = 0; i < n; i++) if (mu[i] < 5) small++;
  if (small > n / 2)
    warnings.push(
      `${small} of ${n} fitted means are below 5, so the deviance test's chi-square reference is rough; rely on the score and likelihood-ratio tests`,
    );
  return {
    schema: "tallyfit.check/1",
    source: sourceOf(design),
    model: design.model.text,
    exposure: design.exposureName,
    n_used: rowsUsed(design),
    test_level: testLevel,
    pearson_ratio: st.pearson / df,
    deviance_ratio: fit.deviance / df,
    negbin: { alpha: nbp.alpha, alpha_std_error: nbp.alphaStdError, boundary: nbp.boundary },
    zeros: { observed: obs0, expected_poisson: exp0, expected_negbin: expNb },
    tests,
    verdict,
    flagged: tests.some((t) => t.flagged),
    warnings,
  };
}
