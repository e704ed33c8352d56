// A report as one self-contained HTML page: semantic tables (caption, header
// cells with scope, numbers right-aligned in tabular figures), inline SVG
// pictures with a title and description, inline CSS with a print style sheet,
// no script and no external request. Every value is escaped; verdict marks are
// words in bold as well as colours that survive greyscale printing.
import { escapeControls } from "./safe-text.js";
import type { Align, ReportSink } from "./sink.js";
import type { Style } from "./style.js";

// Marks from the style functions, turned into elements after the text around them is escaped
// (characters of Unicode's private use area, which no report text uses).
const MARK = { good: "\uE000", caution: "\uE001", bad: "\uE002", end: "\uE003" } as const;

/** Text for HTML: &, <, >, quotes escaped; control characters shown as visible escapes; stray marks dropped. */
export function escapeHtml(s: string): string {
  return escapeControls(s)
    .replace(/[\uE000-\uE003]/g, "")
    .replace(/&/g, "&amp;")
    .replace(/</g, "&lt;")
    .replace(/>/g, "&gt;")
    .replace(/"/g, "&quot;")
    .replace(/'/g, "&#39;");
}

/** Escaped text with the style marks as <strong> elements of a class (good, caution, bad). */
function inline(s: string): string {
  const tag: Record<string, string> = {
    [MARK.good]: '<strong class="good">',
    [MARK.caution]: '<strong class="caution">',
    [MARK.bad]: '<strong class="bad">',
    [MARK.end]: "</strong>",
  };
  return s
    .split(/([\uE000-\uE003])/)
    .map((part) => tag[part] ?? escapeHtml(part))
    .join("");
}

export const HTML_STYLE: Style = {
  good: (s) => `${MARK.good}${s}${MARK.end}`,
  caution: (s) => `${MARK.caution}${s}${MARK.end}`,
  bad: (s) => `${MARK.bad}${s}${MARK.end}`,
  heading: (s) => s,
};

const CSS = `
:root { color-scheme: light; }
body { font-family: "DejaVu Sans", Verdana, system-ui, sans-serif; color: #1d2a35; background: #fff; margin: 0; line-height: 1.45; }
main { max-width: 62rem; margin: 0 auto; padding: 1.5rem 1.25rem 3rem; }
h1 { font-size: 1.45rem; margin: 0 0 .6rem; }
h2 { font-size: 1.1rem; margin: 1.8rem 0 .5rem; padding-bottom: .2rem; border-bottom: 2px solid #d5dde3; }
h2.caution { border-bottom-color: #b35a00; }
dl.about { display: grid; grid-template-columns: max-content 1fr; gap: .15rem 1rem; margin: 0 0 1rem; }
dl.about dt { font-weight: bold; }
dl.about dd { margin: 0; }
table { border-collapse: collapse; margin: .4rem 0 .8rem; font-size: .92rem; }
.sr-only { position: absolute; width: 1px; height: 1px; overflow: hidden; clip: rect(0 0 0 0); white-space: nowrap; }
th, td { padding: .22rem .7rem; border-bottom: 1px solid #e2e7eb; vertical-align: top; text-align: left; }
thead th { border-bottom: 2px solid #9aa8b3; font-weight: bold; }
tbody th { font-weight: normal; }
table:not(:has(thead)) tbody tr:first-child th, table:not(:has(thead)) tbody tr:first-child td { border-top: 2px solid #9aa8b3; }
tr.group th { font-weight: bold; padding-top: .5rem; background: #f3f6f8; }
.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
strong.good { color: #1f4e9c; }
strong.caution { color: #8a4500; }
strong.bad { color: #a3001b; text-decoration: underline; }
figure { margin: 1rem 0; }
figure svg { width: 100%; height: auto; border: 1px solid #e2e7eb; }
figcaption { font-size: .85rem; color: #4a5a66; }
pre { font-size: .8rem; overflow-x: auto; }
ol.warnings li { margin-bottom: .3rem; }
p.caution-note { border-left: 4px solid #9aa8b3; padding-left: .7rem; color: #33434f; }
@media print {
  body { font-size: 10pt; }
  main { max-width: none; padding: 0; }
  table, figure, dl.about { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  tr { break-inside: avoid; }
  h2 { break-after: avoid; page-break-after: avoid; }
  strong.good, strong.caution, strong.bad { color: #000; }
}
`;

export class HtmlSink implements ReportSink {
  readonly style = HTML_STYLE;
  readonly width = 100;
  private readonly body: string[] = [];
  private title = "tallyfit report";
  private section: string | null = null;
  private inHeader = false;
  private headings = 0;
  private figures = 0;

  heading(text: string, kind?: "caution"): void {
    this.closeHeader();
    if (this.headings++ === 0) {
      this.title = text;
      this.body.push(`<header><h1>${inline(text)}</h1>`);
      this.inHeader = true;
      return;
    }
    this.closeSection();
    this.section = text;
    this.body.push(`<section><h2${kind === "caution" ? ' class="caution"' : ""}>${inline(text)}</h2>`);
  }
  private closeHeader(): void {
    if (!this.inHeader) return;
    this.body.push("</header>");
    this.inHeader = false;
  }
  private closeSection(): void {
    if (this.section !== null) this.body.push("</section>");
    this.section = null;
  }
  header(label: string, text: string): void {
    const last = this.body[this.body.length - 1];
    if (last === "</dl>") this.body.pop();
    else this.body.push('<dl class="about">');
    this.body.push(`<dt>${inline(label)}</dt><dd>${inline(text)}</dd>`, "</dl>");
  }
  line(text: string): void {
    this.para(text);
  }
  para(text: string): void {
    this.closeHeader();
    this.body.push(`<p>${inline(text)}</p>`);
  }
  caution(text: string): void {
    this.closeHeader();
    this.body.push(`<p class="caution-note">${inline(text)}</p>`);
  }
  numbered(items: string[]): void {
    this.body.push(`<ol class="warnings">${items.map((w) => `<li>${inline(w)}</li>`).join("")}</ol>`);
  }
  table(rows: string[][], align: Align[], withHead = true): void {
    this.closeHeader();
    const [head, ...rest] = withHead ? rows : [[] as string[], ...rows];
    const columns = Math.max(head.length, ...rows.map((r) => r.length));
    const cls = (j: number) => (align[j] === "r" ? ' class="num"' : "");
    const out: string[] = ["<table>"];
    out.push(`<caption class="sr-only">${inline(this.section ?? this.title)}</caption>`);
    if (withHead)
      out.push(
        `<thead><tr>${head.map((h, j) => `<th scope="col"${cls(j)}>${h ? inline(h) : '<span class="sr-only">note</span>'}</th>`).join("")}</tr></thead>`,
      );
    out.push("<tbody>");
    for (const r of rest) {
      if (r.length === 1) {
        out.push(`<tr class="group"><th scope="rowgroup" colspan="${columns}">${inline(r[0])}</th></tr>`);
        continue;
      }
      const cells: string[] = [];
      for (let j = 0; j < columns; j++) {
        const cell = inline((r[j] ?? "").trim());
        cells.push(j === 0 ? `<th scope="row"${cls(j)}>${cell}</th>` : `<td${cls(j)}>${cell}</td>`);
      }
      out.push(`<tr>${cells.join("")}</tr>`);
    }
    out.push("</tbody></table>");
    this.body.push(out.join(""));
  }
  preformatted(lines: string[]): void {
    this.body.push(`<pre>${escapeHtml(lines.join("\n"))}</pre>`);
  }
  picture(svg: string, title: string, description: string): void {
    this.closeHeader();
    this.body.push(
      `<figure>${inlineSvg(svg, title, description, ++this.figures)}<figcaption>${inline(title)}</figcaption></figure>`,
    );
  }
  blank(): void {}
  done(): string {
    this.closeHeader();
    this.closeSection();
    return (
      "<!DOCTYPE html>\n" +
      '<html lang="en">\n<head>\n<meta charset="utf-8">\n' +
      '<meta name="viewport" content="width=device-width, initial-scale=1">\n' +
      `<meta name="generator" content="tallyfit">\n<title>${escapeHtml(this.title)}</title>\n` +
      `<style>${CSS}</style>\n</head>\n<body>\n<main>\n${this.body.join("\n")}\n</main>\n</body>\n</html>\n`
    );
  }
}

/**
 * An SVG document as an element of the page: no XML declaration, scaled to
 * the page's width, its title and description (ours, escaped) first, with
 * ids unique on the page.
 */
export function inlineSvg(svg: string, title: string, description: string, n: number): string {
  const body = svg
    .replace(/^<\?xml[^>]*>\s*/, "")
    .replace(/<title\b[^>]*>.*?<\/title>/s, "")
    .replace(/<desc\b[^>]*>.*?<\/desc>/s, "");
  const open = body.match(/^<svg\b[^>]*>/);
  if (!open) return "";
  const tag = open[0]
    .replace(/\s(width|height|role|aria-labelledby)="[^"]*"/g, "")
    .replace(/>$/, ` role="img" aria-labelledby="fig${n}-title fig${n}-desc">`);
  return `${tag}<title id="fig${n}-title">${escapeHtml(title)}</title><desc id="fig${n}-desc">${escapeHtml(description)}</desc>${body.slice(open[0].length).trim()}`;
}
