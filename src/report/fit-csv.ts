// The fit report as CSV: one row per coefficient.
import type { FitSummary } from "../infer/summary.js";
import { csvField } from "./csv-field.js";

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
