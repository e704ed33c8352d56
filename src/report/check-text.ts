// The text report of `tallyfit check`.
import type { CheckResult } from "../infer/check.js";
import { closingBlock } from "./fit-text.js";
import { fixed, pValue, table, wrap } from "./format.js";
import type { Style } from "./style.js";

export function renderCheckText(r: CheckResult, o: { style: Style; width: number }): string {
  const st = o.style;
  const out: string[] = [];
  out.push(
    st.heading(
      r.family_checked && r.family_checked !== "poisson"
        ? `Adequacy check of the ${r.family_checked === "negbin" ? "negative-binomial" : "quasi-Poisson"} model${r.dependence ? ", with dependence" : ""}`
        : `Dispersion${r.dependence ? ", zero-count and dependence" : " and zero-count"} check of the Poisson model`,
    ),
  );
  out.push(`  data    ${r.source}: ${fixed(r.n_used, 0)} rows used`);
  out.push(`  model   ${r.model}${r.exposure ? `, exposure ${r.exposure}` : ""}`);
  out.push(`  level   each test flags at p < ${r.test_level}`);
  out.push("");
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
  out.push(...table(rows, ["l", "r", "r", "r", "l", "l"]));
  out.push("");
  out.push(st.heading("Readings"));
  for (const t of r.tests) out.push(...wrap(`${t.label}: ${t.reading}.`, o.width - 2, "    ").map((l) => `  ${l}`));
  out.push("");
  const paint =
    (r.verdict.code === "poisson_adequate" || r.verdict.code === "model_adequate") && !r.flagged ? st.good : st.caution;
  out.push(st.heading("Verdict"));
  out.push(...wrap(paint(r.verdict.text), o.width - 2, "  ").map((l) => `  ${l}`));
  out.push(...wrap(`Next: ${r.verdict.next_step}`, o.width - 2, "  ").map((l) => `  ${l}`));
  out.push("");
  out.push(
    ...closingBlock(
      r.warnings.filter((w) => !/left out$/.test(w)),
      st,
      o.width,
    ),
  );
  return `${out.join("\n")}\n`;
}
