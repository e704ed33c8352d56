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

const POW10 = Array.from({ length: 23 }, (_, k) => 10 ** k);

/** A field's text as a number with the file's decimal mark (0x2e or 0x2c; a decimal-comma file's '.' is not a decimal point). */
export function decimalText(str: string, mark: number): number {
  if (mark === 0x2e) return parseDecimal(str);
  return str.includes(".") ? NaN : parseDecimal(str.replace(",", "."));
}

/**
 * A field's bytes b[s, e) as a finite decimal, written to out[i]; false (and
 * out[i] NaN) when they are not one. Plain digits with an optional fraction
 * are parsed here, exactly (digits/10^k is correctly rounded while both fit
 * in 2^53); exponents, long mantissas and anything unusual take the general
 * path of decimalText. The value goes to the column, not back as a result: a
 * double returned from a call the compiler does not inline is a fresh heap
 * object, three per row of a typical file.
 */
export function decimalBytesInto(
  b: Uint8Array,
  s: number,
  e: number,
  mark: number,
  out: Float64Array,
  i: number,
): boolean {
  if (s >= e) {
    out[i] = NaN;
    return false;
  }
  let p = s,
    neg = false;
  if (b[p] === 0x2d || b[p] === 0x2b) {
    neg = b[p] === 0x2d;
    p++;
  }
  let m = 0,
    digits = 0,
    frac = 0,
    seenDot = false,
    any = false;
  for (; p < e; p++) {
    const c = b[p];
    if (c >= 0x30 && c <= 0x39) {
      any = true;
      if (m === 0 && c === 0x30 && !seenDot) continue;
      m = m * 10 + (c - 0x30);
      digits++;
      if (seenDot) frac++;
    } else if (c === mark && !seenDot) seenDot = true;
    else break;
  }
  if (p === e && any && digits <= 15 && frac <= 22) {
    const v = frac ? m / POW10[frac] : m;
    out[i] = neg ? -v : v;
    return true;
  }
  let str = "";
  for (let k = s; k < e; k++) str += String.fromCharCode(b[k]);
  out[i] = decimalText(str, mark);
  return !Number.isNaN(out[i]);
}
