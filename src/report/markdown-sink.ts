// A report as Markdown (CommonMark with pipe tables): everything the text
// report says, in the same order. Every value is escaped, so a level called
// "a|b" or "<script>" stays text; pictures are referenced as the files
// written beside the report (--plot).
import { escapeControls, neutraliseFormula } from "./safe-text.js";
import type { Align, ReportSink } from "./sink.js";
import type { Style } from "./style.js";

const BOLD = "\uE004";

/** Text for Markdown: the characters that would start markup backslash-escaped, control characters as visible escapes. */
export function escapeMarkdown(s: string): string {
  return escapeControls(s)
    .replace(/\uE004/g, "")
    .replace(/[\\`*_[\]<>|#]/g, "\\$&");
}

function inline(s: string): string {
  return s.split(BOLD).map(escapeMarkdown).join("**").replace(/\s+/g, " ");
}

const MARKDOWN_STYLE: Style = {
  good: (s) => `${BOLD}${s}${BOLD}`,
  caution: (s) => `${BOLD}${s}${BOLD}`,
  bad: (s) => `${BOLD}${s}${BOLD}`,
  heading: (s) => s,
};

export class MarkdownSink implements ReportSink {
  readonly style = MARKDOWN_STYLE;
  readonly width = 100;
  private readonly out: string[] = [];
  private headings = 0;

  private block(text: string): void {
    if (this.out.length && this.out[this.out.length - 1] !== "") this.out.push("");
    this.out.push(text);
  }
  heading(text: string): void {
    this.block(`${this.headings++ === 0 ? "#" : "##"} ${inline(text)}`);
    this.out.push("");
  }
  header(label: string, text: string): void {
    this.out.push(`- **${inline(label)}**: ${inline(text)}`);
  }
  line(text: string): void {
    this.block(inline(text));
  }
  para(text: string): void {
    this.block(inline(text));
  }
  caution(text: string): void {
    this.block(`> ${inline(text)}`);
  }
  numbered(items: string[]): void {
    this.block(items.map((w, i) => `${i + 1}. ${inline(w)}`).join("\n"));
  }
  table(rows: string[][], align: Align[], withHead = true): void {
    const columns = Math.max(...rows.map((r) => r.length));
    // A cell a spreadsheet would run as a formula is neutralised, as in the CSV output.
    const cell = (s: string | undefined) => inline(neutraliseFormula((s ?? "").trim())) || " ";
    const line = (r: string[]) =>
      r.length === 1 && columns > 1
        ? `| **${inline(r[0])}** |${" |".repeat(columns - 1)}`
        : `| ${Array.from({ length: columns }, (_, j) => cell(r[j])).join(" | ")} |`;
    // A table of labelled figures has no column headings; pipe tables need a heading row, so it is left blank.
    const head = withHead ? line(rows[0]) : `|${" |".repeat(columns)}`;
    const lines = [
      head,
      `|${Array.from({ length: columns }, (_, j) => (align[j] === "r" ? "---:" : "---")).join("|")}|`,
      ...(withHead ? rows.slice(1) : rows).map(line),
    ];
    this.block(lines.join("\n"));
  }
  preformatted(lines: string[]): void {
    this.block(["```text", ...lines.map((l) => l.replace(/`/g, "'")), "```"].join("\n"));
  }
  picture(_svg: string, title: string, description: string, file?: string): void {
    if (!file) return;
    this.block(`![${inline(title)}](${encodeURI(file).replace(/[()]/g, (c) => `%${c.charCodeAt(0).toString(16)}`)})`);
    this.block(inline(description));
  }
  blank(): void {}
  done(): string {
    while (this.out.length && this.out[this.out.length - 1] === "") this.out.pop();
    return `${this.out.join("\n")}\n`;
  }
}
