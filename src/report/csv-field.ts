// One CSV field for any command's CSV output.
import { neutraliseFormula } from "./safe-text.js";

/** RFC 4180 field quoting; text that a spreadsheet would run as a formula is neutralised (safe-text.ts). */
export function csvField(v: unknown): string {
  if (v === null || v === undefined || (typeof v === "number" && !Number.isFinite(v))) return "";
  const s = typeof v === "string" ? neutraliseFormula(v) : String(v);
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}
