// The text report of `tallyfit compare`.
import type { CompareResult } from "../infer/compare.js";
import { CAUTION } from "./fit-text.js";
import { fixed, pValue, sourceText } from "./format.js";
import { type ReportSink, TextSink } from "./sink.js";
import type { Style } from "./style.js";

export function renderCompareText(r: CompareResult, o: { style: Style; width: number }): string {
  const k = new TextSink(o.style, o.width);
  writeCompare(r, k);
  return k.done();
}

export function writeCompare(r: CompareResult, k: ReportSink): void {
  const st = k.style;
  k.heading("Model comparison on the same rows");
  k.header(
    "data",
    `${sourceText(r.source)}: ${fixed(r.n_rows, 0)} rows, ${fixed(r.n_used, 0)} used by every model${r.n_dropped ? `, ${r.n_dropped} left out (${[r.dropped.missing ? `${r.dropped.missing} with a missing value in a column some model uses` : "", r.dropped.zero_exposure_zero_count ? `${r.dropped.zero_exposure_zero_count} with zero exposure and zero count` : "", r.dropped.zero_weight ? `${r.dropped.zero_weight} with weight 0` : ""].filter(Boolean).join("; ")})` : ""}`,
  );
  k.blank();
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
  k.table(rows, ["r", "l", "l", "r", "r", "r", "r", "l"]);
  k.blank();
  if (r.nested.length) {
    k.heading("Nested pairs (smaller ⊂ larger)");
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
    k.table(prow, ["l", "l", "r", "r", "r", "l"]);
    k.blank();
  }
  if (r.not_nested.length) {
    k.para(
      `Not nested: ${r.not_nested.map(([a, b]) => `${a} and ${b}`).join("; ")}; these are compared by AIC and BIC only (lower is better).`,
    );
    k.blank();
  }
  if (r.covariance)
    k.line(
      `clusters: ${r.covariance.clusters.map((c) => `${fixed(c.count, 0)} of ${c.column}`).join(" and ")}; Wald F on ${fixed(r.covariance.t_df, 0)} denominator df`,
    );
  const notes = r.notes.filter((n) => !n.startsWith("models that are not nested"));
  for (const n of notes) k.para(`Note: ${n}.`);
  if (notes.length || r.covariance) k.blank();
  k.caution(`Reading these results: ${CAUTION}`);
}
