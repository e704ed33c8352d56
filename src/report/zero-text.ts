// The text report of an excess-zero fit: what was fitted, the count part as
// rate ratios, the zero part as odds ratios, alpha, zeros observed against
// expected, the likelihood figures, warnings and the closing caution.
import type { FitSummary } from "../infer/summary.js";
import { alphaRow, closing, estimateRows, FAMILY_TITLE, familyChoice } from "./fit-text.js";
import { fixed, interval, pEquals, sig, sourceText } from "./format.js";
import { type ReportSink, TextSink } from "./sink.js";
import type { Style } from "./style.js";

export function renderZeroText(s: FitSummary, o: { style: Style; width: number }): string {
  const k = new TextSink(o.style, o.width);
  writeZeroFit(s, k);
  return k.done();
}

/** The excess-zero fit's report, written to any sink. */
export function writeZeroFit(s: FitSummary, k: ReportSink): void {
  const st = k.style;
  const zp = s.zero_part!;
  const lv = `${+(s.level * 100).toFixed(2)}%`;
  k.heading(
    `${FAMILY_TITLE[s.family]} model for ${s.response}, log link${s.exposure ? `, exposure ${s.exposure} (log offset)` : ""}`,
  );
  k.header("data", `${sourceText(s.source)}: ${fixed(s.n_rows, 0)} rows, ${fixed(s.n_used, 0)} used`);
  k.header("model", `count part ${s.model}; zero part ~ ${zp.terms}`);
  k.header(
    "fit",
    `maximum likelihood, ${s.converged ? "converged" : st.bad("did NOT converge")} after ${s.iterations} quasi-Newton steps`,
  );
  familyChoice(s, k);
  k.blank();
  const nonIntercept = s.coefficients.filter((c) => c.kind !== "intercept");
  const showP = s.profile_reference !== null;
  k.heading(`Count part: rate ratios with ${lv} intervals`);
  if (nonIntercept.length) k.table(...estimateRows(nonIntercept, "rate ratio", lv, true, showP));
  else k.para("(no terms besides the intercept)");
  if (s.baseline)
    k.para(
      `Baseline rate: ${sig(s.baseline.rate)} ${s.response} per unit of ${s.baseline.per ?? "exposure"} ${zp.odds_of === "structural zero" ? "in rows that are not structural zeros" : "in the count distribution before its zeros are cut off"}, at the reference levels and numeric terms at 0 (Wald ${lv} ${interval(s.baseline.wald)}).`,
    );
  k.blank();
  k.line(
    `standard errors: ${
      s.covariance
        ? `cluster-robust (CR1) over ${s.covariance.clusters.map((c) => `${fixed(c.count, 0)} ${c.column} clusters`).join(" and ")}${s.covariance.clusters.length === 2 ? " (two-way)" : ""}, t on ${fixed(s.covariance.t_df, 0)} df`
        : s.standard_errors === "robust"
          ? "sandwich (HC0) from the rows' scores"
          : "inverse observed information"
    }, both parts${showP ? `; profile limits: ${s.profile_reference}` : ""}`,
  );
  k.blank();
  k.heading(`Zero part: odds of a ${zp.odds_of}, with ${lv} intervals`);
  const zRows = zp.coefficients.filter((c) => c.kind !== "intercept");
  const base = zp.coefficients.find((c) => c.kind === "intercept");
  if (zRows.length) k.table(...estimateRows(zRows, "odds ratio", lv, true, showP && !zp.boundary));
  if (base)
    k.line(
      `Odds of a ${zp.odds_of} at the reference levels: ${sig(base.odds_ratio ?? null)} (probability ${sig((base.odds_ratio ?? 0) / (1 + (base.odds_ratio ?? 0)))})${base.wald ? `, Wald ${lv} ${interval(base.wald)}` : ""}.`,
    );
  if (zp.boundary) k.line(st.caution("The zero part is at its boundary; see the warnings."));
  k.blank();
  if (s.negbin) {
    const nb = s.negbin;
    k.heading("Extra-Poisson variation in the count part (NB2: variance = μ + α·μ²)");
    alphaRow(nb, lv, k);
    k.para(
      `Twice the log-likelihood gain over the Poisson form: ${fixed(nb.lr_stat, 2)}, ${pEquals(nb.lr_p_value)} (half the chi-square(1) tail, as α cannot fall below 0).`,
    );
    k.blank();
  }
  k.heading("Fit");
  k.table(
    [
      [
        "zero counts",
        `${fixed(s.zeros!.observed, 0)} observed`,
        `${fixed(s.zeros!.expected, 1)} expected by the fitted model`,
      ],
      ["log-likelihood", fixed(s.log_likelihood, 2), `${s.n_parameters} parameters`],
      ["AIC", fixed(s.aic, 2), ""],
      ["BIC", fixed(s.bic, 2), ""],
      [
        "Pearson chi-square / df",
        fixed(s.dispersion.pearson, 3),
        `with the model's mean and variance, on ${fixed(s.df_residual, 0)} df`,
      ],
    ],
    ["l", "r", "l"],
    false,
  );
  k.blank();
  closing(
    s.warnings.filter((w) => !s.notices.includes(w)),
    k,
  );
}
