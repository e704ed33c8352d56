// The group flags of `predict --flag-by` as one SVG picture: per group, the
// prediction interval of its total as a band, the expected total as a tick,
// the flag limit as a bar end, and the observed total as a dot: hollow inside
// the limit, filled and labelled "flagged" beyond it (so a flag reads without
// colour). The palette and ticks are svg.ts's.
import type { PredictResult } from "../infer/predict.js";
import { escapeHtml } from "./html-sink.js";
import { niceTicks, PALETTE } from "./svg.js";

const { ink: INK, data: DATA, dataLight: BAND, model: MODEL, grid: GRID, font: FONT } = PALETTE;
/** Groups drawn at most (the flagged ones first, then by their order in the table). */
export const MAX_GROUPS = 60;

export function renderGroupFlagsSvg(r: PredictResult, title: string): string | null {
  if (!r.groups?.length) return null;
  const all = r.groups;
  const shown = [...all.filter((g) => g.flagged), ...all.filter((g) => !g.flagged)].slice(0, MAX_GROUPS);
  const order = new Map(all.map((g, i) => [g.group, i]));
  shown.sort((a, b) => order.get(a.group)! - order.get(b.group)!);
  const rowH = 22;
  const left = 190;
  const W = 900;
  const plotW = W - left - 120;
  const top = 60;
  const H = top + shown.length * rowH + 70;
  const hi = Math.max(1, ...shown.map((g) => Math.max(g.prediction_interval[1], g.flag_limit, g.observed ?? 0))) * 1.05;
  const x = (v: number) => left + (v / hi) * plotW;
  const parts: string[] = [];
  for (const t of niceTicks(0, hi, 6)) {
    parts.push(
      `<line x1="${x(t)}" y1="${top - 6}" x2="${x(t)}" y2="${top + shown.length * rowH}" stroke="${GRID}"/>`,
      `<text x="${x(t)}" y="${top + shown.length * rowH + 16}" font-size="11" text-anchor="middle" fill="${INK}">${t}</text>`,
    );
  }
  shown.forEach((g, i) => {
    const y = top + i * rowH + rowH / 2;
    const name = g.group.length > 26 ? `${g.group.slice(0, 25)}…` : g.group;
    parts.push(
      `<text x="${left - 10}" y="${y + 4}" font-size="12" text-anchor="end" fill="${INK}">${escapeHtml(name)}</text>`,
      `<rect x="${x(g.prediction_interval[0])}" y="${y - 5}" width="${Math.max(1, x(g.prediction_interval[1]) - x(g.prediction_interval[0]))}" height="10" fill="${BAND}"/>`,
      `<line x1="${x(g.expected)}" y1="${y - 7}" x2="${x(g.expected)}" y2="${y + 7}" stroke="${MODEL}" stroke-width="2"/>`,
      `<line x1="${x(g.flag_limit)}" y1="${y - 8}" x2="${x(g.flag_limit)}" y2="${y + 8}" stroke="${INK}" stroke-width="1.5" stroke-dasharray="2 2"/>`,
    );
    if (g.observed !== null) {
      parts.push(
        `<circle cx="${x(g.observed)}" cy="${y}" r="5" fill="${g.flagged ? DATA : "#ffffff"}" stroke="${DATA}" stroke-width="2"/>`,
      );
      if (g.flagged)
        parts.push(
          `<text x="${x(g.observed) + 9}" y="${y + 4}" font-size="11" font-weight="bold" fill="${INK}">flagged</text>`,
        );
    }
  });
  const lv = `${+(r.level * 100).toFixed(2)}%`;
  const legendY = H - 24;
  parts.push(
    `<rect x="${left}" y="${legendY - 9}" width="24" height="10" fill="${BAND}"/>`,
    `<text x="${left + 30}" y="${legendY}" font-size="11" fill="${INK}">${lv} interval of the total</text>`,
    `<line x1="${left + 200}" y1="${legendY - 10}" x2="${left + 200}" y2="${legendY + 2}" stroke="${MODEL}" stroke-width="2"/>`,
    `<text x="${left + 208}" y="${legendY}" font-size="11" fill="${INK}">expected</text>`,
    `<line x1="${left + 280}" y1="${legendY - 10}" x2="${left + 280}" y2="${legendY + 2}" stroke="${INK}" stroke-dasharray="2 2"/>`,
    `<text x="${left + 288}" y="${legendY}" font-size="11" fill="${INK}">flag limit (${r.flag_level} quantile)</text>`,
    `<circle cx="${left + 460}" cy="${legendY - 4}" r="5" fill="#ffffff" stroke="${DATA}" stroke-width="2"/>`,
    `<text x="${left + 470}" y="${legendY}" font-size="11" fill="${INK}">observed (filled: flagged)</text>`,
  );
  const more =
    all.length > shown.length
      ? ` (${shown.length} of ${all.length} groups: every flagged one, then in table order)`
      : "";
  return (
    `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" font-family="${FONT}">` +
    `<title>${escapeHtml(title)}</title>` +
    `<rect width="${W}" height="${H}" fill="#ffffff"/>` +
    `<text x="20" y="30" font-size="16" font-weight="bold" fill="${INK}">${escapeHtml(`Totals by ${r.flag_by?.join(" · ") ?? "group"}${more}`)}</text>` +
    parts.join("") +
    `</svg>`
  );
}
