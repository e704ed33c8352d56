// What a file is before it is read as CSV: refuse gzip (on standard input; a
// named .gz file is decompressed before it gets here) and UTF-16 by their
// first bytes, and the limits that keep reading bounded.
import { InputError } from "../errors.js";

/** Limits that keep reading bounded in memory; each refusal names the limit. */
export const READER_LIMITS = { lineBytes: 64_000_000, columns: 100_000 } as const;

/** Refuse, by their first bytes, files that are not UTF-8 text: gzip, UTF-16 (with or without a byte-order mark). */
export function checkTextKind(b: Uint8Array, source: string): void {
  if (b[0] === 0x1f && b[1] === 0x8b)
    throw new InputError(
      `${source}: gzip-compressed data, not CSV text; give the file by its name (FILE.csv.gz is read directly) or decompress it first (gunzip -c FILE | tallyfit … -).`,
    );
  const utf16 =
    (b[0] === 0xff && b[1] === 0xfe) ||
    (b[0] === 0xfe && b[1] === 0xff) ||
    (b.length >= 4 &&
      ((b[0] !== 0 && b[1] === 0 && b[2] !== 0 && b[3] === 0) ||
        (b[0] === 0 && b[1] !== 0 && b[2] === 0 && b[3] !== 0)));
  if (utf16)
    throw new InputError(
      `${source}: UTF-16 text, not UTF-8; save it as UTF-8 (for example with iconv -f utf-16 -t utf-8) and run again.`,
    );
}
