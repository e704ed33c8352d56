// A one-page diagnostic picture as SVG, drawn by our own small module: the
// rate ratios with their intervals across the top (what a reader publishes),
// and under them three checks side by side: a hanging rootogram of the count
// frequencies, randomized quantile residuals across the fitted means (log
// axis), and the residuals' quantiles against normal quantiles.
// Palette: a dark slate for data marks and a burnt orange for model marks,
// distinct for the common colour-vision deficiencies and apart in lightness,
// so the page also reads in greyscale.
import type { CoefficientRow, FitSummary } from "../infer/summary.js";
import type { Rootogram } from "../infer/diagnostics.js";
import { normalQuantile } from "../math/distributions.js";

/** The pictures' palette and font (shared with flag-svg.ts). */
export const PALETTE = {
  ink: "#22313f",
  data: "#3f6e8c",
  dataLight: "#bcd0dd",
  model: "#c0591e",
  grid: "#e3e6e8",
  font: "DejaVu Sans, Verdana, sans-serif",
} as const;
const { ink: INK, data: DATA, dataLight: DATA_LIGHT, model: MODEL, grid: GRID, font: FONT } = PALETTE;

export interface PlotInput {
  title: string;
  rootogram: Rootogram;
  fitted: Float64Array;
  residuals: Float64Array;
  summary: FitSummary;
}

function esc(s: string): string {
  return s.replace(/&/g, "&amp;").replace(/</g, "&lt;").replace(/>/g, "&gt;").replace(/"/g, "&quot;");
}

const f2 = (x: number) => (Math.round(x * 100) / 100).toString();

interface Box {
  x: number;
  y: number;
  w: number;
  h: number;
}

/** Round tick values from lo to hi, about n of them. */
export function niceTicks(lo: number, hi: number, n = 5): number[] {
  if (!Number.isFinite(lo) || !Number.isFinite(hi)) return [];
  const span = hi - lo || 1;
  const step0 = 10 ** Math.floor(Math.log10(span / n));
  const step = [1, 2, 5, 10].map((m) => m * step0).find((s) => span / s <= n) ?? step0 * 10;
  const out: number[] = [];
  for (let t = Math.ceil(lo / step) * step; t <= hi + 1e-9 * span; t += step) out.push(+t.toPrecision(12));
  return out;
}

function logTicks(lo: number, hi: number): number[] {
  if (!(lo > 0) || !Number.isFinite(hi)) return [];
  for (const ms of [
    [1, 2, 5],
    [1, 1.5, 2, 3, 5, 7],
    [1, 1.2, 1.5, 2, 2.5, 3, 4, 5, 6, 7, 8, 9],
  ]) {
    const out: number[] = [];
    for (let e = Math.floor(Math.log10(lo)); e <= Math.ceil(Math.log10(hi)); e++)
      for (const m of ms) {
        const v = +(m * 10 ** e).toPrecision(6);
        if (v >= lo * 0.999 && v <= hi * 1.001) out.push(v);
      }
    if (out.length >= 3) return out;
  }
  return niceTicks(lo, hi, 4).filter((v) => v > 0);
}

function fmtTick(v: number): string {
  if (v === 0) return "0";
  const a = Math.abs(v);
  return a >= 1e4 || a < 1e-3 ? v.toExponential(0) : `${+v.toPrecision(3)}`;
}

function panel(b: Box, title: string, xlabel: string, ylabel: string, inner: string): string {
  return (
    `<g>` +
    `<text x="${b.x}" y="${b.y - 14}" font-size="15" font-weight="bold" fill="${INK}">${esc(title)}</text>` +
    inner +
    `<rect x="${b.x}" y="${b.y}" width="${b.w}" height="${b.h}" fill="none" stroke="${INK}" stroke-width="1"/>` +
    `<text x="${b.x + b.w / 2}" y="${b.y + b.h + 38}" font-size="12" text-anchor="middle" fill="${INK}">${esc(xlabel)}</text>` +
    `<text transform="translate(${b.x - 46},${b.y + b.h / 2}) rotate(-90)" font-size="12" text-anchor="middle" fill="${INK}">${esc(ylabel)}</text>` +
    `</g>`
  );
}

function axisX(b: Box, ticks: number[], sx: (v: number) => number, labels?: (v: number) => string): string {
  return ticks
    .map(
      (t) =>
        `<line x1="${f2(sx(t))}" y1="${b.y}" x2="${f2(sx(t))}" y2="${b.y + b.h}" stroke="${GRID}"/><text x="${f2(sx(t))}" y="${b.y + b.h + 16}" font-size="11" text-anchor="middle" fill="${INK}">${esc((labels ?? fmtTick)(t))}</text>`,
    )
    .join("");
}

function axisY(b: Box, ticks: number[], sy: (v: number) => number): string {
  return ticks
    .map(
      (t) =>
        `<line x1="${b.x}" y1="${f2(sy(t))}" x2="${b.x + b.w}" y2="${f2(sy(t))}" stroke="${GRID}"/><text x="${b.x - 6}" y="${f2(sy(t) + 4)}" font-size="11" text-anchor="end" fill="${INK}">${esc(fmtTick(t))}</text>`,
    )
    .join("");
}

function rootogramPanel(b: Box, r: Rootogram): string {
  const n = r.counts.length;
  const se = r.expected.map(Math.sqrt),
    so = r.observed.map(Math.sqrt);
  let ymax = 0,
    ymin = 0;
  se.forEach((e, k) => {
    ymax = Math.max(ymax, e, so[k]);
    ymin = Math.min(ymin, e - so[k]);
  });
  ymin = Math.min(ymin, -0.05 * ymax);
  const pad = 0.05 * (ymax - ymin);
  // Bar j covers counts[j] … counts[j] + binWidth − 1; the x axis is in count values.
  const top = r.counts[n - 1] + r.binWidth;
  const sx = (v: number) => b.x + ((v + 0.5 * r.binWidth) / top) * b.w;
  const sy = (v: number) => b.y + b.h - ((v - (ymin - pad)) / (ymax + pad - (ymin - pad))) * b.h;
  const bw = Math.max(1, (b.w / n) * 0.8);
  let s =
    axisY(b, niceTicks(ymin, ymax), sy) +
    axisX(
      b,
      niceTicks(0, top - r.binWidth, 8).filter((t) => Number.isInteger(t / r.binWidth)),
      sx,
    );
  s += `<line x1="${b.x}" y1="${f2(sy(0))}" x2="${b.x + b.w}" y2="${f2(sy(0))}" stroke="${INK}" stroke-width="1.2"/>`;
  r.counts.forEach((c, j) => {
    const hi = se[j],
      bottom = se[j] - so[j];
    const label = r.binWidth === 1 ? `count ${c}` : `counts ${c}–${c + r.binWidth - 1}`;
    s += `<rect class="bar" x="${f2(sx(c) - bw / 2)}" y="${f2(sy(hi))}" width="${f2(bw)}" height="${f2(Math.max(0, sy(bottom) - sy(hi)))}" fill="${DATA_LIGHT}" stroke="${DATA}" stroke-width="0.8"><title>${label}: observed ${f2(r.observed[j])}, expected ${f2(r.expected[j])}</title></rect>`;
  });
  s += `<polyline class="curve" fill="none" stroke="${MODEL}" stroke-width="2.2" points="${r.counts.map((c, j) => `${f2(sx(c))},${f2(sy(se[j]))}`).join(" ")}"/>`;
  const xlabel = r.binWidth === 1 ? "count" : `count (bars: bins of ${r.binWidth} values, to the largest)`;
  return panel(b, "Count frequencies, √ scale", xlabel, "√frequency (bars hang from the curve)", s);
}

function residualPanel(b: Box, fitted: Float64Array, res: Float64Array): string {
  const pos = [...fitted].filter((v) => v > 0);
  const lo = Math.min(...pos),
    hi = Math.max(...pos);
  const xl = Math.log10(lo) - 0.05,
    xh = Math.log10(hi) + 0.05;
  const rmax = Math.max(3.5, ...[...res].map((r) => Math.abs(r)));
  const sx = (v: number) => b.x + ((Math.log10(v) - xl) / (xh - xl)) * b.w;
  const sy = (v: number) => b.y + b.h / 2 - (v / (rmax * 1.05)) * (b.h / 2);
  let s = axisY(b, niceTicks(-rmax, rmax, 6), sy) + axisX(b, logTicks(10 ** xl, 10 ** xh), sx);
  s += `<line x1="${b.x}" y1="${f2(sy(0))}" x2="${b.x + b.w}" y2="${f2(sy(0))}" stroke="${MODEL}" stroke-width="1.5"/>`;
  for (let i = 0; i < res.length; i++)
    if (fitted[i] > 0)
      s += `<circle class="pt" cx="${f2(sx(fitted[i]))}" cy="${f2(sy(res[i]))}" r="2.2" fill="${DATA}" fill-opacity="0.55"/>`;
  return panel(b, "Residuals across fitted means", "fitted mean (log scale)", "randomized quantile residual", s);
}

function qqPanel(b: Box, res: Float64Array): string {
  const r = [...res].sort((a, c) => a - c);
  const n = r.length;
  const th = r.map((_, i) => normalQuantile((i + 0.5) / n));
  const m = Math.max(3.5, Math.abs(r[0] ?? 0), Math.abs(r[n - 1] ?? 0), Math.abs(th[0] ?? 0));
  const sx = (v: number) => b.x + ((v + m) / (2 * m)) * b.w;
  const sy = (v: number) => b.y + b.h - ((v + m) / (2 * m)) * b.h;
  let s = axisY(b, niceTicks(-m, m), sy) + axisX(b, niceTicks(-m, m), sx);
  s += `<line x1="${f2(sx(-m))}" y1="${f2(sy(-m))}" x2="${f2(sx(m))}" y2="${f2(sy(m))}" stroke="${MODEL}" stroke-width="1.5"/>`;
  for (let i = 0; i < n; i++)
    s += `<circle class="qq" cx="${f2(sx(th[i]))}" cy="${f2(sy(r[i]))}" r="2.2" fill="${DATA}" fill-opacity="0.55"/>`;
  return panel(b, "Residuals against normal quantiles", "standard normal quantile", "residual quantile", s);
}

/** The rows of the forest panel: each factor's reference level, then its levels; numeric terms as they come. */
function forestRows(summary: FitSummary): { label: string; full: string; c: CoefficientRow | null }[] {
  const out: { label: string; full: string; c: CoefficientRow | null }[] = [];
  const seen = new Set<string>();
  for (const c of summary.coefficients) {
    if (c.kind === "intercept" || c.status === "aliased") continue;
    const ref = c.kind === "indicator" && c.levels.length === 1 ? c.levels[0] : null;
    if (ref?.reference && !seen.has(ref.factor)) {
      seen.add(ref.factor);
      const full = `${ref.factor}=${ref.reference} (reference)`;
      out.push({ label: shorten(full), full, c: null });
    }
    out.push({ label: shorten(c.term), full: c.term, c });
  }
  return out;
}

/** Labels longer than the panel's label column are cut with an ellipsis (the full term is in the mark's title). */
function shorten(s: string, max = 30): string {
  return [...s].length <= max ? s : `${[...s].slice(0, max - 1).join("")}…`;
}

/** Height of the rate-ratio panel: a line per row, with room for a few rows at least. */
export function forestHeight(summary: FitSummary): number {
  return Math.max(160, 18 * (forestRows(summary).length + 1));
}

function forestPanel(b: Box, summary: FitSummary): string {
  const rows = forestRows(summary);
  const iv = (c: CoefficientRow) => c.profile ?? c.wald;
  const vals: number[] = [1];
  const usable = (v: number | null | undefined): v is number => typeof v === "number" && v > 0 && Number.isFinite(v);
  const shownValue = (c: CoefficientRow) => (c.measure === "rate" ? c.rate : c.rate_ratio);
  for (const { c } of rows) {
    if (!c) continue;
    if (usable(shownValue(c))) vals.push(shownValue(c)!);
    const i = iv(c);
    if (usable(i?.[0])) vals.push(i![0]!);
    if (usable(i?.[1])) vals.push(i![1]!);
    // A level with no events: leave room to its left, so its open interval reads as open, not as a short stub.
    if (c.status === "no_events" && usable(i?.[1])) vals.push(i![1]! / 30);
  }
  const lo = Math.min(...vals) / 1.15,
    hi = Math.max(...vals) * 1.15;
  const labelW = 210;
  const plot: Box = { x: b.x + labelW, y: b.y, w: b.w - labelW, h: b.h };
  const sx = (v: number) => plot.x + ((Math.log(v) - Math.log(lo)) / (Math.log(hi) - Math.log(lo))) * plot.w;
  const step = b.h / Math.max(1, rows.length + 1);
  let s = axisX(plot, logTicks(lo, hi), sx);
  s += `<line x1="${f2(sx(1))}" y1="${b.y}" x2="${f2(sx(1))}" y2="${b.y + b.h}" stroke="${INK}" stroke-dasharray="4 3"/>`;
  rows.forEach(({ label, full, c }, k) => {
    const y = b.y + step * (k + 1);
    s += `<text x="${b.x + labelW - 8}" y="${f2(y + 4)}" font-size="11" text-anchor="end" fill="${INK}"${c ? "" : ' font-style="italic"'}><title>${esc(full)}</title>${esc(label)}</text>`;
    if (!c) {
      // The reference level: rate ratio 1 by definition, a hollow mark on the dashed line.
      s += `<rect class="ref" x="${f2(sx(1) - 4)}" y="${f2(y - 4)}" width="8" height="8" fill="#ffffff" stroke="${MODEL}" stroke-width="1.5"/>`;
      return;
    }
    const i = iv(c);
    const h = usable(i?.[1]) ? sx(i![1]!) : plot.x + plot.w;
    if (c.status === "no_events") {
      // No events: the interval is open toward 0, drawn as a line that runs off the left edge with an arrowhead.
      s += `<line class="ci" x1="${f2(plot.x)}" y1="${f2(y)}" x2="${f2(h)}" y2="${f2(y)}" stroke="${DATA}" stroke-width="2" stroke-dasharray="6 3"/>`;
      s += `<path d="M${f2(plot.x)},${f2(y)} l8,-5 l0,10 z" fill="${DATA}"/>`;
      s += `<text x="${f2(plot.x + 12)}" y="${f2(y - 5)}" font-size="10" fill="${INK}">no events: open toward 0</text>`;
      return;
    }
    const l = usable(i?.[0]) ? sx(i![0]!) : plot.x;
    s += `<line class="ci" x1="${f2(l)}" y1="${f2(y)}" x2="${f2(h)}" y2="${f2(y)}" stroke="${DATA}" stroke-width="2"/>`;
    if (usable(shownValue(c)))
      s += `<rect class="est" x="${f2(sx(shownValue(c)!) - 4)}" y="${f2(y - 4)}" width="8" height="8" fill="${MODEL}"/>`;
  });
  const which = summary.coefficients.some((c) => c.profile) ? "profile" : "Wald";
  const lv = `${+(summary.level * 100).toFixed(2)}%`;
  return panel(
    b,
    `Rate ratios and their ${lv} ${which} intervals`,
    "rate ratio (log scale; dashed line: no difference; hollow: reference level)",
    "",
    s,
  );
}

export function renderSvg(p: PlotInput): string {
  const W = 1300;
  const fh = forestHeight(p.summary);
  // The rate ratios across the top; the three checks in a row beneath them.
  const checksY = 90 + fh + 110;
  const H = checksY + 280 + 80;
  const boxes: Box[] = [
    { x: 80, y: checksY, w: 330, h: 280 },
    { x: 505, y: checksY, w: 330, h: 280 },
    { x: 930, y: checksY, w: 330, h: 280 },
    { x: 80, y: 90, w: 1180, h: fh },
  ];
  const body =
    forestPanel(boxes[3], p.summary) +
    rootogramPanel(boxes[0], p.rootogram) +
    residualPanel(boxes[1], p.fitted, p.residuals) +
    qqPanel(boxes[2], p.residuals);
  const desc =
    "Across the top, the rate ratios with their intervals, reference levels hollow; beneath, three checks: the count frequencies " +
    "as a hanging rootogram (observed bars hung from the expected curve), randomized quantile residuals across the fitted means, " +
    "and the residuals' quantiles against normal quantiles.";
  return (
    `<?xml version="1.0" encoding="UTF-8"?>\n` +
    `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" font-family="${FONT}" role="img" aria-labelledby="tf-title tf-desc">` +
    `<title id="tf-title">${esc(p.title)}</title>` +
    `<desc id="tf-desc">${esc(desc)}</desc>` +
    `<rect width="${W}" height="${H}" fill="#ffffff"/>` +
    `<text x="80" y="40" font-size="19" font-weight="bold" fill="${INK}">${esc(p.title)}</text>` +
    body +
    `<text x="80" y="${H - 18}" font-size="11" fill="${INK}">Observational associations; small counts give wide intervals; local protocols and qualified review decide what is done.</text>` +
    `</svg>\n`
  );
}
