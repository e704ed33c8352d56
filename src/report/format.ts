// Deterministic number formatting (no locale data) shared by the reporters.
import type { GroupSummary } from "../infer/groups.js";
import type { Source } from "../infer/source.js";

/** Group the integer part with commas: 12345.6 → "12,345.6". */
export function group(s: string): string {
  const m = /^(-?)(\d+)(.*)$/.exec(s);
  if (!m) return s;
  return m[1] + m[2].replace(/\B(?=(\d{3})+(?!\d))/g, ",") + m[3];
}

/** Fixed decimals with grouping; "–" for a missing value. */
export function fixed(x: number | null | undefined, d: number): string {
  if (x === null || x === undefined || Number.isNaN(x)) return "–";
  if (!Number.isFinite(x)) return x > 0 ? "∞" : "−∞";
  return group(x.toFixed(d));
}

/** Four significant digits, switching to exponent form for very large or small magnitudes. */
export function sig(x: number | null | undefined, digits = 4): string {
  if (x === null || x === undefined || Number.isNaN(x)) return "–";
  if (!Number.isFinite(x)) return x > 0 ? "∞" : "−∞";
  if (x === 0) return "0";
  const a = Math.abs(x);
  if (a >= 1e6 || a < 1e-4) return x.toExponential(digits - 1).replace("e+", "e");
  return x.toPrecision(digits);
}

/**
 * A p-value as health journals print it: "<0.001" below a thousandth, three
 * decimals below 0.1 (0.049 stays 0.049), two above (JSON keeps the full value).
 */
export function pValue(p: number | null | undefined): string {
  if (p === null || p === undefined || Number.isNaN(p)) return "–";
  if (p < 0.001) return "<0.001";
  if (p < 0.1) return p.toFixed(3);
  return p.toFixed(2);
}

/** An interval "low – high" on the rate-ratio scale; open ends shown as 0 or ∞. */
/** A profile interval: an open side reads 0 or ∞, a failed side "n/a" (never ∞: the reason is in the warnings). */
export function profileInterval(
  iv: [number | null, number | null] | null | undefined,
  status: { lower: string; upper: string } | null | undefined,
  digits = 4,
): string {
  if (!iv) return "–";
  const lo = status?.lower === "failed" || iv[0] === null ? "n/a" : sig(iv[0], digits);
  const hi = status?.upper === "failed" ? "n/a" : iv[1] === null ? "∞" : sig(iv[1], digits);
  return `${lo} – ${hi}`;
}

export function interval(iv: [number | null, number | null] | null | undefined, digits = 4): string {
  if (!iv) return "–";
  const lo = iv[0] === null ? "?" : sig(iv[0], digits);
  const hi = iv[1] === null ? "∞" : sig(iv[1], digits);
  return `${lo} – ${hi}`;
}

export function padEnd(s: string, w: number): string {
  const len = [...s].length;
  return len >= w ? s : s + " ".repeat(w - len);
}

export function padStart(s: string, w: number): string {
  const len = [...s].length;
  return len >= w ? s : " ".repeat(w - len) + s;
}

/** Lay out rows of cells as aligned columns (numbers right-aligned). */
export function table(rows: string[][], align: ("l" | "r")[], indent = "  ", gap = "   "): string[] {
  const widths = align.map((_, j) => Math.max(...rows.map((r) => [...(r[j] ?? "")].length)));
  return rows.map(
    (r) =>
      indent +
      r
        .map((cell, j) => (align[j] === "r" ? padStart(cell, widths[j]) : padEnd(cell, widths[j])))
        .join(gap)
        .trimEnd(),
  );
}

/** Simple word wrap at `width` columns with a hanging indent. */
export function wrap(text: string, width: number, indent = ""): string[] {
  const words = text.split(/\s+/).filter(Boolean);
  const lines: string[] = [];
  let cur = "";
  for (const w of words) {
    if (cur.length > 0 && cur.length + 1 + w.length > width) {
      lines.push(cur);
      cur = indent + w;
    } else cur = cur.length === 0 ? (lines.length === 0 ? w : indent + w) : `${cur} ${w}`;
  }
  if (cur) lines.push(cur);
  return lines;
}

/** "p = 0.031" or "p < 0.001". */
export function pEquals(p: number | null | undefined): string {
  const t = pValue(p);
  return t.startsWith("<") ? `p < ${t.slice(1)}` : `p = ${t}`;
}

/** The --summary-by table: observed, expected, O/E with its limits (GroupSummary.method), exposure and crude rate. */
export function groupRows(g: GroupSummary): [string[][], ("l" | "r")[]] {
  const lv = `${+(g.level * 100).toFixed(2)}%`;
  const rows: string[][] = [
    [g.column, "rows", "observed", "expected", "O/E", `O/E ${lv}`, "exposure", `rate per ${group(String(g.per))}`],
  ];
  for (const r of g.groups)
    rows.push([
      r.group,
      String(r.rows),
      fixed(r.observed, 0),
      fixed(r.expected, 1),
      r.ratio === null ? "–" : fixed(r.ratio, 3),
      r.ratio_ci ? interval(r.ratio_ci) : "–",
      r.exposure === null ? "–" : fixed(r.exposure, 1),
      r.crude_rate === null ? "–" : sig(r.crude_rate),
    ]);
  return [rows, ["l", "r", "r", "r", "r", "r", "r", "r"]];
}

/** The source in a report's data line: the file name, and for rows read through an engine, which one. */
export function sourceText(s: Source): string {
  if (typeof s === "string") return s;
  const merged = s.aggregation ? `, merged in the engine by ${s.aggregation}` : "";
  return `${s.name} (${s.engine}${merged}${s.queries ? `, ${s.queries} queries, ${group(String(s.rows_transferred))} rows sent` : ""})`;
}
