// The report of `tallyfit check`, written to any sink (text, Markdown, HTML).
import type { CheckResult } from "../infer/check.js";
import { closing } from "./fit-text.js";
import { fixed, pValue, sourceText } from "./format.js";
import { type ReportSink, TextSink } from "./sink.js";
import type { Style } from "./style.js";

export function renderCheckText(r: CheckResult, o: { style: Style; width: number }): string {
  const k = new TextSink(o.style, o.width);
  writeCheck(r, k);
  return k.done();
}

export function writeCheck(r: CheckResult, k: ReportSink, picture?: { svg: string; file?: string }): void {
  const st = k.style;
  k.heading(
    r.family_checked && r.family_checked !== "poisson"
      ? `Adequacy check of the ${r.family_checked === "negbin" ? "negative-binomial" : "quasi-Poisson"} model${r.dependence ? ", with dependence" : ""}`
      : `Dispersion${r.dependence ? ", zero-count and dependence" : " and zero-count"} check of the Poisson model`,
  );
  k.header("data", `${sourceText(r.source)}: ${fixed(r.n_used, 0)} rows used`);
  k.header("model", `${r.model}${r.exposure ? `, exposure ${r.exposure}` : ""}`);
  k.header("level", `each test flags at p < ${r.test_level}`);
  k.blank();
  const rows: string[][] = [["test", "statistic", "df", "p-value", "flag", "reference"]];
  for (const t of r.tests)
    rows.push([
      t.label,
      fixed(t.statistic, 3),
      t.df === null ? "" : fixed(t.df, 0),
      pValue(t.p_value),
      t.flagged ? st.caution("FLAG") : "ok",
      t.reference,
    ]);
  k.table(rows, ["l", "r", "r", "r", "l", "l"]);
  k.blank();
  k.heading("Readings");
  for (const t of r.tests) k.para(`${t.label}: ${t.reading}.`, 2, 4);
  k.blank();
  const paint =
    (r.verdict.code === "poisson_adequate" || r.verdict.code === "model_adequate") && !r.flagged ? st.good : st.caution;
  k.heading("Verdict");
  k.para(paint(r.verdict.text));
  k.para(`Next: ${r.verdict.next_step}`);
  k.blank();
  if (picture)
    k.picture(
      picture.svg,
      "Diagnostic pictures of the checked model",
      "The rate ratios with their intervals; beneath them, a hanging rootogram of observed against expected count frequencies, randomized quantile residuals across the fitted means, and their quantiles against normal quantiles.",
      picture.file,
    );
  closing(
    r.warnings.filter((w) => !/left out$/.test(w)),
    k,
  );
}
