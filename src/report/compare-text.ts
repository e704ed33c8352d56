// The text report of `tallyfit compare`.
import type { CompareResult } from "../infer/compare.js";
import { CAUTION } from "./fit-text.js";
import { fixed, pValue, table, wrap } from "./format.js";
import type { Style } from "./style.js";

export function renderCompareText(r: CompareResult, o: { style: Style; width: number }): string {
  const st = o.style;
  const out: string[] = [];
  out.push(st.heading("Model comparison on the same rows"));
  out.push(
    `  data    ${r.source}: ${fixed(r.n_rows, 0)} rows, ${fixed(r.n_used, 0)} used by every model${r.n_dropped ? `, ${r.n_dropped} left out (${[r.dropped.missing ? `${r.dropped.missing} with a missing value in a column some model uses` : "", r.dropped.zero_exposure_zero_count ? `${r.dropped.zero_exposure_zero_count} with zero exposure and zero count` : "", r.dropped.zero_weight ? `${r.dropped.zero_weight} with weight 0` : ""].filter(Boolean).join("; ")})` : ""}`,
  );
  out.push("");
  const rows: string[][] = [["#", "model", "family", "parameters", "log-likelihood", "AIC", "BIC", "preferred by"]];
  for (const m of r.models)
    rows.push([
      String(m.index),
      m.model,
      m.family,
      String(m.n_parameters),
      m.log_likelihood === null ? "–" : fixed(m.log_likelihood, 2),
      m.aic === null ? "–" : fixed(m.aic, 2),
      m.bic === null ? "–" : fixed(m.bic, 2),
      m.preferred_by.length ? st.good(m.preferred_by.join(", ")) : "",
    ]);
  out.push(...table(rows, ["r", "l", "l", "r", "r", "r", "r", "l"]));
  out.push("");
  if (r.nested.length) {
    out.push(st.heading("Nested pairs (smaller ⊂ larger)"));
    const prow: string[][] = [["pair", "test", "df", "statistic", "p-value", ""]];
    for (const p of r.nested)
      prow.push([
        `${p.smaller} ⊂ ${p.larger}`,
        p.test,
        String(p.df),
        p.statistic === null ? "–" : fixed(p.statistic, 3),
        pValue(p.p_value),
        p.note ?? "",
      ]);
    out.push(...table(prow, ["l", "l", "r", "r", "r", "l"]));
    out.push("");
  }
  if (r.not_nested.length) {
    out.push(
      ...wrap(
        `Not nested: ${r.not_nested.map(([a, b]) => `${a} and ${b}`).join("; ")}; these are compared by AIC and BIC only (lower is better).`,
        o.width - 2,
        "  ",
      ).map((l) => `  ${l}`),
    );
    out.push("");
  }
  if (r.covariance)
    out.push(
      `  clusters: ${r.covariance.clusters.map((c) => `${fixed(c.count, 0)} of ${c.column}`).join(" and ")}; Wald F on ${fixed(r.covariance.t_df, 0)} denominator df`,
    );
  const notes = r.notes.filter((n) => !n.startsWith("models that are not nested"));
  for (const n of notes) out.push(...wrap(`Note: ${n}.`, o.width - 2, "  ").map((l) => `  ${l}`));
  if (notes.length || r.covariance) out.push("");
  out.push(...wrap(`Reading these results: ${CAUTION}`, o.width));
  return `${out.join("\n")}\n`;
}
