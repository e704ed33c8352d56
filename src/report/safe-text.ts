// Text from the data (column names, factor levels, file names) made safe for
// where it is shown: spreadsheet formulas neutralised in CSV and Markdown
// cells (OWASP, "CSV Injection": a cell that starts with =, +, -, @, a tab or
// a carriage return gets a leading single quote, so a spreadsheet shows it as
// text), the Markdown table separator escaped, terminal control characters
// shown as visible escapes, and very long words cut in messages.

const NUMBER = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;
// C0 controls except tab and line feed, DEL, and the C1 controls (ESC starts terminal sequences).
// biome-ignore lint/suspicious/noControlCharactersInRegex: these are the characters being escaped
const CONTROLS = /[\u0000-\u0008\u000b-\u001f\u007f-\u009f]/g;

/** A cell that a spreadsheet would run as a formula gets a leading single quote; numbers are left alone. */
export function neutraliseFormula(s: string): string {
  return /^[=+\-@\t\r]/.test(s) && !NUMBER.test(s) ? `'${s}` : s;
}

/** A Markdown table cell: formula-safe, the column separator and backquotes escaped, line breaks as spaces. */
export function markdownCell(s: string): string {
  return escapeControls(neutraliseFormula(s))
    .replace(/\\/g, "\\\\")
    .replace(/\|/g, "\\|")
    .replace(/`/g, "\\`")
    .replace(/[\r\n]+/g, " ");
}

/** An inline code span that holds any text: a fence of more backquotes than the text's longest run. */
export function markdownCode(s: string): string {
  const text = escapeControls(s).replace(/[\r\n]+/g, " ");
  const longest = Math.max(0, ...(text.match(/`+/g) ?? []).map((r) => r.length));
  const fence = "`".repeat(longest + 1);
  return longest ? `${fence} ${text} ${fence}` : `${fence}${text}${fence}`;
}

/** Control characters as visible escapes (\x1b for ESC), so text from the data cannot drive a terminal. */
export function escapeControls(s: string): string {
  return s.replace(CONTROLS, (c) => `\\x${c.charCodeAt(0).toString(16).padStart(2, "0")}`);
}

/** Words longer than max characters (a 10 MB column name) cut to their start, with their length. */
export function shortenLongWords(s: string, max = 120): string {
  return s.replace(new RegExp(`\\S{${max + 1},}`, "g"), (w) => `${w.slice(0, 60)}…(${w.length} characters)`);
}

/** A copy of a report record with every string's control characters escaped (our own text has none). */
export function displaySafe<T>(value: T): T {
  if (typeof value === "string") return escapeControls(value) as T;
  if (Array.isArray(value)) return value.map(displaySafe) as T;
  if (value && typeof value === "object" && !ArrayBuffer.isView(value)) {
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(value)) out[k] = displaySafe(v);
    return out as T;
  }
  return value;
}
