// Machine-readable and document forms of the fit report: JSON, CSV, Markdown.
import type { FitSummary } from "../infer/summary.js";
import { CAUTION } from "./fit-text.js";
import { fixed, interval, pValue, sig } from "./format.js";

/** Numbers that JSON cannot hold (NaN, ±Infinity) become null. */
function jsonValue(_k: string, v: unknown): unknown {
  return typeof v === "number" && !Number.isFinite(v) ? null : v;
}

export function renderJson(value: unknown): string {
  return `${JSON.stringify(value, jsonValue, 2)}\n`;
}

/** RFC 4180 field quoting. */
export function csvField(v: unknown): string {
  if (v === null || v === undefined || (typeof v === "number" && !Number.isFinite(v))) return "";
  const s = String(v);
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

export function renderFitCsv(s: FitSummary): string {
  const head = [
    "term",
    "estimate",
    "std_error",
    "z",
    "p_value",
    "rate_ratio",
    "wald_low",
    "wald_high",
    "profile_low",
    "profile_high",
    "status",
  ];
  const lines = [head.join(",")];
  for (const c of s.coefficients)
    lines.push(
      [
        c.term,
        c.estimate,
        c.std_error,
        c.z,
        c.p_value,
        c.rate_ratio,
        c.wald?.[0],
        c.wald?.[1],
        c.profile?.[0],
        c.profile?.[1],
        c.status,
      ]
        .map(csvField)
        .join(","),
    );
  return `${lines.join("\n")}\n`;
}

export function renderFitMarkdown(s: FitSummary): string {
  const lv = `${+(s.level * 100).toFixed(2)}%`;
  const out: string[] = [];
  out.push(`### ${s.family} rate model for \`${s.response}\``, "");
  out.push(
    `Model \`${s.model}\`${s.exposure ? `, exposure \`${s.exposure}\`` : ""}; ${s.n_used} of ${s.n_rows} rows used.`,
    "",
  );
  out.push(`| term | rate ratio | Wald ${lv} | profile ${lv} | p-value |`, "|---|---:|---:|---:|---:|");
  for (const c of s.coefficients) {
    if (c.kind === "intercept") continue;
    const rr = c.status === "aliased" ? "aliased" : c.status === "no_events" ? "0 (no events)" : sig(c.rate_ratio);
    out.push(`| ${c.term} | ${rr} | ${interval(c.wald)} | ${interval(c.profile)} | ${pValue(c.p_value)} |`);
  }
  out.push("");
  out.push(
    `Deviance ${fixed(s.deviance, 2)} on ${s.df_residual} df; Pearson chi-square / df ${fixed(s.dispersion.pearson, 3)}; AIC ${fixed(s.aic, 2)}.`,
    "",
  );
  if (s.warnings.length) {
    out.push("Warnings:", "");
    s.warnings.forEach((w, i) => out.push(`${i + 1}. ${w}`));
    out.push("");
  }
  out.push(`*${CAUTION}*`, "");
  return out.join("\n");
}
