// The CSV dialect: missing-value tokens, the delimiter, and how a field is read as a number.

export const DEFAULT_NA = ["", "NA", "NaN", "null", "."];

// A decimal number: optional sign, digits with an optional fraction, optional exponent.
const DECIMAL = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;

/**
 * Parse one trimmed field as a finite decimal number, or return NaN. A number
 * too small for a double (1e-400, which would read as 0) is NaN too, so the
 * message that follows names it as written.
 */
export function parseDecimal(s: string): number {
  if (!DECIMAL.test(s)) return NaN;
  const v = Number(s);
  if (v === 0 && /[1-9]/.test(s.replace(/[eE].*$/, ""))) return NaN;
  return Number.isFinite(v) ? v : NaN;
}

/** Tab for a .tsv source, else a comma. */
export function defaultDelimiter(source: string): string {
  return /\.tsv$/i.test(source) ? "\t" : ",";
}

/** Which common delimiter the header line seems to use, if not the one given. */
export function guessDelimiter(headerLine: string, given: string): string | null {
  let best: string | null = null;
  let bestCount = 0;
  for (const d of [",", ";", "\t", "|"]) {
    if (d === given) continue;
    const count = headerLine.split(d).length - 1;
    if (count > bestCount) {
      best = d;
      bestCount = count;
    }
  }
  return best;
}

export function showDelimiter(d: string): string {
  return d === "\t" ? "tab" : `'${d}'`;
}
