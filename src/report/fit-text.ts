// The text report of one fitted model, in tallyfit's own layout:
// rate ratios first, then the coefficients, fit figures, dispersion, warnings.
import type { CoefficientRow, FitSummary } from "../infer/summary.js";
import { fixed, groupRows, interval, pEquals, pValue, profileInterval, sig, sourceText } from "./format.js";
import { type Align, type ReportSink, TextSink } from "./sink.js";
import type { Style } from "./style.js";
import type { Rootogram } from "../infer/diagnostics.js";
import { textRootogram } from "./text-rootogram.js";

export const FAMILY_TITLE = {
  poisson: "Poisson",
  negbin: "Negative-binomial (NB2)",
  quasipoisson: "Quasi-Poisson",
  zip: "Zero-inflated Poisson",
  zinb: "Zero-inflated negative-binomial (NB2)",
  "hurdle-poisson": "Hurdle Poisson",
  "hurdle-negbin": "Hurdle negative-binomial (NB2)",
} as const;

export const CAUTION =
  "Rate ratios from routinely collected counts describe associations, not the effect of a clinic, ward or policy; " +
  "groups with few events (roughly under 10, common practice) give wide, unstable intervals; " +
  "local protocols and qualified review decide what, if anything, is done.";

export interface TextOptions {
  style: Style;
  width: number;
  intervals: "wald" | "profile" | "both";
  /** When given (a wide terminal), a text rootogram follows the dispersion block. */
  rootogram?: Rootogram;
}

function pct(level: number): string {
  return `${+(level * 100).toFixed(2)}%`;
}

function droppedText(s: FitSummary): string {
  const parts: string[] = [];
  if (s.dropped.missing) parts.push(`${s.dropped.missing} with missing values`);
  if (s.dropped.zero_exposure_zero_count)
    parts.push(`${s.dropped.zero_exposure_zero_count} with zero exposure and zero count`);
  if (s.dropped.zero_weight) parts.push(`${s.dropped.zero_weight} with weight 0`);
  return parts.length ? `, ${s.n_dropped} left out (${parts.join("; ")})` : "";
}

/** Where IRLS ran over merged covariate patterns, say so: the figures are still per row. */
function mergedText(s: FitSummary): string {
  const m = s.merged_patterns;
  if (!m) return "";
  return ` over ${fixed(m.patterns, 0)} patterns (rows sharing ${m.by === "covariates" ? "all covariate values" : "covariate values, offset and count"} merged; every figure is per row)`;
}

function groupHeading(rows: CoefficientRow[]): string {
  const r = rows[0];
  const refs = [...new Map(r.levels.filter((l) => l.reference !== null).map((l) => [l.factor, l.reference])).entries()];
  if (refs.length === 0) return r.kind === "numeric" ? "" : r.term_group;
  const refText = refs.map(([f, l]) => `${f} = ${l}`).join(", ");
  return `${r.term_group}  (reference: ${refText})`;
}

/** Rows of exp(estimate) with intervals and p-values, grouped by term under a heading that names the reference. */
export function estimateRows(
  members: CoefficientRow[],
  valueHeader: string,
  lv: string,
  showW: boolean,
  showP: boolean,
): [string[][], Align[]] {
  const head = ["term", valueHeader];
  if (showW) head.push(`Wald ${lv}`);
  if (showP) head.push(`profile ${lv}`);
  head.push("p-value");
  const rows: string[][] = [head];
  const groups: string[] = [];
  for (const c of members) if (!groups.includes(c.term_group)) groups.push(c.term_group);
  for (const g of groups) {
    const inGroup = members.filter((c) => c.term_group === g);
    const h = groupHeading(inGroup);
    if (h) rows.push([h]);
    for (const c of inGroup) {
      const label = (h ? "  " : "") + c.term + (c.per_units !== undefined ? ` (per ${c.per_units})` : "");
      if (c.status === "aliased") {
        rows.push([label, "aliased", ...(showW ? [""] : []), ...(showP ? [""] : []), ""]);
        continue;
      }
      if (c.status === "no_events") {
        const profile = showP ? [profileInterval(c.profile, c.profile_status)] : [];
        rows.push([label, "0 (no events)", ...(showW ? ["–"] : []), ...profile, "–"]);
        continue;
      }
      rows.push([
        label,
        sig(
          c.measure === "rate"
            ? c.rate
            : c.measure === "odds_ratio" || c.measure === "odds"
              ? c.odds_ratio
              : c.rate_ratio,
        ),
        ...(showW ? [interval(c.wald)] : []),
        ...(showP ? [c.profile ? profileInterval(c.profile, c.profile_status) : "–"] : []),
        pValue(c.p_value),
      ]);
    }
  }
  const align: Align[] = ["l", "r", ...(showW ? ["r" as const] : []), ...(showP ? ["r" as const] : []), "r"];
  return [rows, align];
}

/** The header's "family" line of --family auto (none when the family was given). */
export function familyChoice(s: FitSummary, k: ReportSink): void {
  if (s.family_choice)
    k.header(
      "family",
      `${s.family_choice.used} (--family ${s.family_choice.requested}): ${s.family_choice.reason}`,
      true,
    );
}

export function renderFitText(s: FitSummary, o: TextOptions): string {
  const k = new TextSink(o.style, o.width);
  writeFit(s, k, o);
  return k.done();
}

/** The fit report, written to any sink (text, Markdown, HTML). */
export function writeFit(
  s: FitSummary,
  k: ReportSink,
  o: { intervals: "wald" | "profile" | "both"; rootogram?: Rootogram; picture?: { svg: string; file?: string } },
): void {
  const st = k.style;
  const lv = pct(s.level);
  const exposureText = s.exposure ? `, exposure ${s.exposure} (log offset)` : s.offset ? `, offset ${s.offset}` : "";
  k.heading(`${FAMILY_TITLE[s.family]} rate model for ${s.response}, log link${exposureText}`);
  k.header("data", `${sourceText(s.source)}: ${fixed(s.n_rows, 0)} rows, ${fixed(s.n_used, 0)} used${droppedText(s)}`);
  k.header("model", `${s.model}${s.weights ? `   (frequency weights: ${s.weights})` : ""}`);
  k.header(
    "fit",
    `${s.converged ? "converged" : st.bad("did NOT converge")} after ${s.iterations} ${s.family === "negbin" && s.negbin && !s.negbin.boundary ? "rounds of IRLS alternating with a Newton step for alpha" : `IRLS iteration${s.iterations === 1 ? "" : "s"}`}${mergedText(s)}`,
    true,
  );
  familyChoice(s, k);
  k.blank();

  // Rates (the levels that take the intercept's place in a model without one), then rate ratios, grouped by term.
  const showW = o.intervals !== "profile";
  const showP = o.intervals !== "wald";
  const nonIntercept = s.coefficients.filter((c) => c.kind !== "intercept");
  const rates = nonIntercept.filter((c) => c.measure === "rate");
  const ratios = nonIntercept.filter((c) => c.measure !== "rate");
  if (rates.length) {
    const per = s.exposure ? `per unit of ${s.exposure}` : s.offset ? "per unit of exp(offset)" : "per row";
    k.heading(`Rates ${per} with ${lv} intervals (no intercept: each level is a rate, not a ratio)`);
    k.table(...estimateRows(rates, "rate", lv, showW, showP));
    k.blank();
  }
  if (ratios.length || !rates.length) k.heading(`Rate ratios with ${lv} intervals`);
  if (nonIntercept.length === 0) k.para("(the model has no terms besides the intercept)");
  else if (ratios.length) {
    k.table(...estimateRows(ratios, "rate ratio", lv, showW, showP));
    const numeric = nonIntercept.filter((c) => c.kind === "numeric" || c.kind === "slope");
    const scaled = numeric.filter((c) => c.per_units !== undefined);
    if (numeric.length)
      k.para(
        `A numeric term's rate ratio is per one unit of that column${scaled.length ? `, except ${scaled.map((c) => `${c.term}: per ${fixed(c.per_units!, 0)} units`).join(", ")}` : ""}.`,
      );
  }
  if (s.baseline) {
    const seasonal = s.baseline.at.filter((a) => /^season_(sin|cos)\d+$/.test(a.column));
    const at = [
      ...s.references.map((r) => `${r.factor} = ${r.level}`),
      ...s.baseline.at
        .filter((a) => !seasonal.includes(a))
        .map((a) => `${a.column} = ${sig(a.value)}${a.source === "mean" ? " (its mean)" : ""}`),
      ...(seasonal.length ? ["the season terms at their means (the seasonal curve averaged over the rows used)"] : []),
    ];
    const per = s.baseline.per ? `per unit of ${s.baseline.per}` : s.offset ? "per unit of exp(offset)" : "per row";
    k.para(
      `Baseline rate: ${sig(s.baseline.rate)} ${s.response} ${per}${at.length ? ` at ${at.join(", ")}` : ""} (Wald ${lv} ${interval(s.baseline.wald)}).`,
    );
  }
  k.blank();

  if (s.seasonality) {
    seasonBlock(s.seasonality, lv, k);
    k.blank();
  }
  k.heading("Coefficients on the log scale");
  const crow: string[][] = [["term", "log rate ratio", "SE", s.test_distribution === "t" ? "t" : "z", "p-value"]];
  for (const c of s.coefficients) {
    if (c.status === "aliased") crow.push([c.term, "aliased", "", "", ""]);
    else if (c.status === "no_events") crow.push([c.term, "−∞", "–", "–", "–"]);
    else crow.push([c.term, fixed(c.estimate, 4), fixed(c.std_error, 4), fixed(c.z, 2), pValue(c.p_value)]);
  }
  k.table(crow, ["l", "r", "r", "r", "r"]);
  const clusterText = s.covariance
    ? `cluster-robust (CR1) standard errors over ${s.covariance.clusters.map((c) => `${fixed(c.count, 0)} ${c.column} clusters`).join(" and ")}${s.covariance.type === "two-way-cluster-CR1" ? " (two-way)" : ""}`
    : "";
  const tDf = s.covariance ? s.covariance.t_df : s.df_residual;
  const seText = s.gee
    ? `GEE robust (CR1) standard errors over ${fixed(s.gee.clusters, 0)} ${s.gee.cluster_column} clusters`
    : s.covariance
      ? clusterText
      : s.standard_errors === "robust"
        ? "sandwich (Huber–White) standard errors"
        : s.family === "quasipoisson"
          ? `standard errors from the inverse Fisher information times √φ (φ = ${fixed(s.dispersion.phi_used, 3)})`
          : "standard errors from the inverse Fisher information";
  k.line(
    `${seText}; ${s.test_distribution === "t" ? `t and p against Student's t on ${fixed(tDf, 0)} df` : "z and p against the standard normal"}`,
  );
  if (s.profile_reference) k.line(`profile limits: ${s.profile_reference}`);
  k.blank();
  if (s.gee) geeBlock(s, k);

  if (s.term_tests?.length) {
    const kind = s.term_tests[0].test;
    const how =
      kind === "F"
        ? "F test (deviance change / df / φ), other terms kept, same rows"
        : kind === "Wald chi-square"
          ? "Wald test with the sandwich covariance, other terms kept"
          : kind === "Wald F"
            ? "Wald F test with the cluster-robust covariance, on the clusters' df, other terms kept"
            : "likelihood-ratio test, other terms kept, same rows";
    k.heading(`Dropping each term (${how})`);
    const trows: string[][] = [["term", "df", kind === "F" ? "F" : kind, "p-value", ""]];
    for (const t of s.term_tests)
      trows.push([
        t.term,
        t.df ? String(t.df) : "",
        t.statistic === null ? "–" : fixed(t.statistic, 2),
        pValue(t.p_value),
        t.note ?? "",
      ]);
    k.table(trows, ["l", "r", "r", "r", "l"]);
    k.blank();
  }
  k.heading("Fit");
  // The deviances of this model and of the intercept-only model side by side, then the likelihood figures.
  k.table(
    [
      ["", "deviance", "residual df"],
      ["this model", fixed(s.deviance, 2), fixed(s.df_residual, 0)],
      ["intercept only", fixed(s.null_deviance, 2), fixed(s.df_null, 0)],
    ],
    ["l", "r", "r"],
  );
  if (s.family === "negbin") k.line("(both are negative-binomial deviances at the fitted alpha)");
  k.table(
    [
      ["Pearson chi-square", fixed(s.pearson_chi2, 2), ""],
      ["log-likelihood", fixed(s.log_likelihood, 2), `${s.n_parameters} parameters`],
      ["AIC", fixed(s.aic, 2), ""],
      ["BIC", fixed(s.bic, 2), ""],
    ],
    ["l", "r", "l"],
    false,
  );
  k.blank();

  if (s.negbin) negbinBlock(s, lv, k);
  k.heading("Dispersion");
  dispersionBlock(s, k);
  k.blank();
  if (o.rootogram && k.width >= 60) {
    k.heading("Counts: observed against the fitted model");
    k.preformatted(textRootogram(o.rootogram, k.width));
    k.blank();
  }
  if (o.picture)
    k.picture(
      o.picture.svg,
      `Diagnostic pictures of the ${s.family} fit`,
      "The rate ratios with their intervals; beneath them, a hanging rootogram of observed against expected count frequencies, randomized quantile residuals across the fitted means, and their quantiles against normal quantiles.",
      o.picture.file,
    );

  if (s.summary_by) {
    k.heading(`Observed and expected by ${s.summary_by.column} (O/E limits: ${s.summary_by.method})`);
    k.table(...groupRows(s.summary_by));
    k.blank();
  }
  closing(
    s.warnings.filter((w) => !s.notices.includes(w)),
    k,
  );
}

const MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"];

/** "about 21 Jan" for a day after 1 January (in a year of 365 days). */
function aboutDate(day: number): string {
  const d = new Date(Date.UTC(2025, 0, 1) + Math.round(day) * 86_400_000);
  return `about ${d.getUTCDate()} ${MONTHS[d.getUTCMonth()]}`;
}

/** The fitted seasonal pattern: peak, trough and the peak-to-trough rate ratio. */
function seasonBlock(z: NonNullable<FitSummary["seasonality"]>, lv: string, k: ReportSink): void {
  k.heading(`Seasonal pattern (${z.harmonics} harmonic pair${z.harmonics > 1 ? "s" : ""} a year)`);
  k.table(
    [
      ["highest rate", `day ${fixed(z.peak_day, 1)} after 1 January (${aboutDate(z.peak_day)})`],
      ["lowest rate", `day ${fixed(z.trough_day, 1)} after 1 January (${aboutDate(z.trough_day)})`],
      [
        "peak-to-trough rate ratio",
        `${sig(z.peak_to_trough)}, ${lv} ${interval(z.peak_to_trough_ci)} (delta method on the log scale)`,
      ],
    ],
    ["l", "l"],
    false,
  );
}

const STRUCTURE_WORDS = {
  independence: "independence (rows of a cluster uncorrelated; the errors are still cluster-robust)",
  exchangeable: "exchangeable (every pair of rows in a cluster equally correlated)",
  ar1: "first-order autoregressive (correlation ρ^k between rows k apart)",
} as const;

/** The working correlation, its parameter and the scale of a GEE fit. */
function geeBlock(s: FitSummary, k: ReportSink): void {
  const g = s.gee!;
  const sizes = g.cluster_sizes;
  const rows: string[][] = [
    ["working correlation", STRUCTURE_WORDS[g.working_correlation]],
    ...(g.working_correlation === "independence" ? [] : [["ρ (moment estimate)", fixed(g.correlation, 4)]]),
    ...(g.order_by ? [["order within a cluster", `by ${g.order_by}`]] : []),
    [
      "clusters",
      `${fixed(g.clusters, 0)} of ${g.cluster_column}, ${fixed(sizes.min, 0)} to ${fixed(sizes.max, 0)} rows (mean ${fixed(sizes.mean, 1)})`,
    ],
    [
      "scale φ",
      g.scale_estimated ? `${fixed(g.scale, 4)} (Pearson moment estimate)` : "1 (fixed by the family's variance)",
    ],
    ...(g.negbin_alpha_held !== null
      ? [["NB2 alpha", `${sig(g.negbin_alpha_held)}, held at its independence maximum-likelihood value`]]
      : []),
    ["scoring steps", `${g.iterations}${g.converged ? "" : " (not settled)"}`],
  ];
  k.heading("Within-cluster correlation (generalized estimating equations)");
  k.table(rows, ["l", "l"], false);
  k.blank();
}

/**
 * The NB2 dispersion: alpha with its interval (from the standard error of
 * log alpha), the two likelihoods side by side, and the likelihood ratio of
 * NB2 against the Poisson with its boundary-corrected p-value.
 */
function negbinBlock(s: FitSummary, lv: string, k: ReportSink): void {
  const nb = s.negbin!;
  k.heading("Extra-Poisson variation (NB2: variance = μ + α·μ²)");
  alphaRow(nb, lv, k);
  k.table(
    [
      ["", "log-likelihood", "AIC"],
      ["NB2", fixed(s.log_likelihood, 2), fixed(s.aic, 2)],
      ["Poisson (α = 0)", fixed(nb.poisson_log_likelihood, 2), fixed(nb.poisson_aic, 2)],
    ],
    ["l", "r", "r"],
  );
  k.para(
    `Twice the log-likelihood gain of NB2 over the Poisson: ${fixed(nb.lr_stat, 2)}, ${pEquals(nb.lr_p_value)} (half the chi-square(1) tail, as α cannot fall below 0).`,
  );
  if (nb.boundary) k.para(k.style.good("α is 0 at the maximum: the negative binomial reduces to the Poisson here."));
  k.blank();
}

/** α with its interval and how the interval is made (shared by the plain and the zero families' NB2 blocks). */
export function alphaRow(nb: NonNullable<FitSummary["negbin"]>, lv: string, k: ReportSink): void {
  k.table(
    [
      [
        "α",
        sig(nb.alpha),
        nb.alpha_ci ? `${lv} ${interval(nb.alpha_ci)}` : "",
        nb.alpha_std_error !== null
          ? `standard error ${sig(nb.alpha_std_error)}; limits exp(log α ± z·SE of log α)`
          : "",
      ],
    ],
    ["l", "r", "l", "l"],
    false,
  );
}

/** Numbered warnings (when there are any), then the short caution that ends every report. */
export function closing(warns: string[], k: ReportSink): void {
  if (warns.length) {
    k.heading("Warnings", "caution");
    k.numbered(warns);
    k.blank();
  }
  k.caution(`Reading these results: ${CAUTION}`);
}

function dispersionBlock(s: FitSummary, k: ReportSink): void {
  const st = k.style;
  const d = s.dispersion;
  const rows = [
    [
      "Pearson chi-square / df",
      fixed(d.pearson, 3),
      Number.isNaN(d.pearson_p_value)
        ? ""
        : `${pEquals(d.pearson_p_value)} against chi-square on ${fixed(s.df_residual, 0)} df`,
    ],
    ["deviance / df", fixed(d.deviance, 3), Number.isNaN(d.deviance_p_value) ? "" : pEquals(d.deviance_p_value)],
  ];
  k.table(rows, ["l", "r", "l"], false);
  let verdict: string;
  if (s.df_residual <= 0)
    verdict = st.caution("No residual degrees of freedom: the dispersion cannot be judged from this fit.");
  else if (s.family === "poisson") {
    if (d.pearson > 1 && d.pearson_p_value < 0.05 && s.standard_errors !== "model")
      verdict = st.caution(
        `The counts vary more than a Poisson model allows (Pearson ratio ${fixed(d.pearson, 2)}). The standard errors, Wald limits and term tests above are ${s.standard_errors === "cluster" ? "cluster-robust" : "sandwich"} estimates, which allow for that${s.profile_reference ? "; the profile limits are likelihood-based and too narrow" : ""}. ` +
          "Run `tallyfit check` for the formal tests; --family negbin models the extra variation.",
      );
    else if (d.pearson > 1 && d.pearson_p_value < 0.05)
      verdict = st.caution(
        `The counts vary more than a Poisson model allows (Pearson ratio ${fixed(d.pearson, 2)}); the standard errors and p-values above are too small. ` +
          "Run `tallyfit check` for the formal tests, and refit with --family negbin or --family quasipoisson.",
      );
    else if (d.pearson < 1 && 1 - d.pearson_p_value < 0.05)
      verdict = st.caution(
        `The counts vary less than a Poisson model expects (Pearson ratio ${fixed(d.pearson, 2)}); the intervals above are conservative.`,
      );
    else
      verdict = st.good(
        `Consistent with Poisson variation (variance close to the mean): the Pearson ratio is ${fixed(d.pearson, 2)}.`,
      );
  } else if (s.family === "quasipoisson")
    verdict = `Standard errors are scaled by √φ = ${fixed(Math.sqrt(d.phi_used), 3)} to allow for the extra variation.`;
  else verdict = `The NB2 variance μ + α·μ² allows for extra variation; ratios near 1 mean it accounts for it.`;
  k.para(verdict);
}
