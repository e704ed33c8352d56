// What a report is made of, written once for every format: each renderer
// (fit, check, compare, predict) writes headings, header lines, paragraphs,
// tables and pictures to a sink, and the sink lays them out as terminal text,
// Markdown or an HTML page. The text sink gives the terminal layout.
import { table, wrap } from "./format.js";
import type { Style } from "./style.js";

export type Align = "l" | "r";

export interface ReportSink {
  /** Inline marks for verdicts and warnings (colour in a terminal, classes in HTML, none in Markdown). */
  style: Style;
  /** The report's lines are wrapped at this width (text); other formats flow. */
  width: number;
  /** A section heading; "caution" marks the warnings' heading. */
  heading(text: string, kind?: "caution"): void;
  /** A short line that is not wrapped (in text, indented by two spaces). */
  line(text: string): void;
  /** A header line "label  text"; wrapped under itself when `wrapped`. */
  header(label: string, text: string, wrapped?: boolean): void;
  /** A paragraph: in text, wrapped at width − indent, continuation lines indented by hang more. */
  para(text: string, indent?: number, hang?: number): void;
  /** The short caution on reading the results that ends a report (set apart on a page). */
  caution(text: string): void;
  /** A numbered list (warnings). */
  numbered(items: string[]): void;
  /**
   * Rows of cells, the first the column headings unless `head` is false (a
   * table of labelled figures); a row with only its first cell is a group heading.
   */
  table(rows: string[][], align: Align[], head?: boolean): void;
  /** Lines laid out for a terminal (a text picture); other formats leave them out when they have a picture. */
  preformatted(lines: string[]): void;
  /** A picture (SVG), with a title and a description for readers who cannot see it. */
  picture(svg: string, title: string, description: string, file?: string): void;
  blank(): void;
  done(): string;
}

export class TextSink implements ReportSink {
  private readonly out: string[] = [];
  constructor(
    readonly style: Style,
    readonly width: number,
  ) {}
  heading(text: string, kind?: "caution"): void {
    this.out.push(kind === "caution" ? this.style.caution(text) : this.style.heading(text));
  }
  line(text: string): void {
    this.out.push(`  ${text}`);
  }
  header(label: string, text: string, wrapped = false): void {
    if (!wrapped) {
      this.out.push(`  ${label.padEnd(8)}${text}`);
      return;
    }
    this.out.push(...wrap(text, this.width - 10).map((l, k) => `  ${(k === 0 ? label : "").padEnd(8)}${l}`));
  }
  para(text: string, indent = 2, hang = 2): void {
    const pad = " ".repeat(indent);
    this.out.push(...wrap(text, this.width - indent, " ".repeat(hang)).map((l) => pad + l));
  }
  caution(text: string): void {
    this.para(text, 0, 0);
  }
  numbered(items: string[]): void {
    items.forEach((w, i) => this.para(`${i + 1}. ${w}`, 2, 3));
  }
  table(rows: string[][], align: Align[]): void {
    this.out.push(...table(rows, align));
  }
  preformatted(lines: string[]): void {
    this.out.push(...lines);
  }
  picture(): void {
    // The terminal report has no pictures (--plot writes them to a file).
  }
  blank(): void {
    this.out.push("");
  }
  done(): string {
    return `${this.out.join("\n")}\n`;
  }
}
