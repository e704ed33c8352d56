// The fit report as Markdown, for documents.
import type { FitSummary } from "../infer/summary.js";
import { CAUTION } from "./fit-text.js";
import { fixed, interval, pValue, profileInterval, sig } from "./format.js";
import { escapeControls, markdownCell, markdownCode } from "./safe-text.js";

export function renderFitMarkdown(s: FitSummary): string {
  const lv = `${+(s.level * 100).toFixed(2)}%`;
  const out: string[] = [];
  out.push(`### ${s.family} rate model for ${markdownCode(s.response)}`, "");
  out.push(
    `Model ${markdownCode(s.model)}${s.exposure ? `, exposure ${markdownCode(s.exposure)}` : ""}; ${s.n_used} of ${s.n_rows} rows used.`,
    "",
  );
  out.push(`| term | rate ratio | Wald ${lv} | profile ${lv} | p-value |`, "|---|---:|---:|---:|---:|");
  for (const c of s.coefficients) {
    if (c.kind === "intercept") continue;
    const value = c.measure === "rate" ? `${sig(c.rate)} (a rate)` : sig(c.rate_ratio);
    const rr = c.status === "aliased" ? "aliased" : c.status === "no_events" ? "0 (no events)" : value;
    out.push(
      `| ${markdownCell(c.term)} | ${rr} | ${interval(c.wald)} | ${profileInterval(c.profile, c.profile_status)} | ${pValue(c.p_value)} |`,
    );
  }
  out.push("");
  if (s.covariance) {
    const groups = s.covariance.clusters.map((c) => `${c.count} clusters of ${markdownCode(c.column)}`).join(" and ");
    const how = s.gee
      ? `GEE (${s.gee.working_correlation} working correlation, ρ = ${fixed(s.gee.correlation, 4)}${s.gee.order_by ? `, ordered by ${markdownCode(s.gee.order_by)}` : ""}) with robust (CR1) standard errors`
      : "Cluster-robust (CR1) standard errors";
    out.push(`${how} over ${groups}; Wald limits and p-values on Student's t with ${s.covariance.t_df} df.`, "");
  }
  out.push(
    `Deviance ${fixed(s.deviance, 2)} on ${s.df_residual} df; Pearson chi-square / df ${fixed(s.dispersion.pearson, 3)}; AIC ${fixed(s.aic, 2)}.`,
    "",
  );
  if (s.summary_by) {
    const g = s.summary_by;
    out.push(`Observed and expected by ${markdownCode(g.column)} (O/E limits: ${g.method}):`, "");
    out.push(
      `| ${markdownCell(g.column)} | rows | observed | expected | O/E | O/E ${lv} |`,
      "|---|---:|---:|---:|---:|---:|",
    );
    for (const r of g.groups)
      out.push(
        `| ${markdownCell(r.group)} | ${r.rows} | ${fixed(r.observed, 0)} | ${fixed(r.expected, 1)} | ${r.ratio === null ? "–" : fixed(r.ratio, 3)} | ${r.ratio_ci ? interval(r.ratio_ci) : "–"} |`,
      );
    out.push("");
  }
  if (s.warnings.length) {
    out.push("Warnings:", "");
    s.warnings.forEach((w, i) => out.push(`${i + 1}. ${escapeControls(w)}`));
    out.push("");
  }
  out.push(`*${CAUTION}*`, "");
  return out.join("\n");
}
