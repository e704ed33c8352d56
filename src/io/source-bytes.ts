// Reading a source's bytes and checking that they are UTF-8 text.
import { isUtf8 } from "node:buffer";
import { readFile } from "node:fs/promises";
import { gunzipSync } from "node:zlib";
import { InputError } from "../errors.js";

/** Read a file path, or standard input for "-". */
export async function readSource(path: string): Promise<{ bytes: Buffer; name: string }> {
  if (path === "-") {
    const chunks: Buffer[] = [];
    for await (const chunk of process.stdin) chunks.push(chunk as Buffer);
    return { bytes: Buffer.concat(chunks), name: "<stdin>" };
  }
  let bytes: Buffer;
  try {
    bytes = await readFile(path);
  } catch (e) {
    throw unreadable(path, e);
  }
  // A gzip-compressed file (FILE.csv.gz, or any file starting with 1f 8b) is decompressed.
  if (bytes.length >= 2 && bytes[0] === 0x1f && bytes[1] === 0x8b)
    try {
      bytes = gunzipSync(bytes);
    } catch (e) {
      throw new InputError(`${path}: the gzip data is damaged (${(e as Error).message}); compress the CSV again.`);
    }
  return { bytes, name: path };
}

/** The input error for a file that cannot be read, in words ("no such file", "permission denied", …). */
export function unreadable(name: string, e: unknown): InputError {
  const code = (e as NodeJS.ErrnoException).code;
  const why =
    code === "ENOENT"
      ? "no such file"
      : code === "EACCES"
        ? "permission denied"
        : code === "EISDIR"
          ? "it is a folder"
          : String(code ?? e);
  return new InputError(`${name}: cannot read the file (${why}).`);
}

/**
 * Refuse bytes [from, upto) of a reader's buffer when they hold a NUL byte
 * (any, up to the buffer's end) or are not UTF-8, naming the line (`line` is
 * that of buf[0]) and the input offset (`offset` is that of buf[0]).
 */
export function checkTextBytes(
  buf: Uint8Array,
  from: number,
  upto: number,
  at: { source: string; line: number; offset: number },
): void {
  const lineOf = (k: number) => {
    let line = at.line;
    for (let j = 0; j < k; j++) if (buf[j] === 0x0a) line++;
    return line;
  };
  const nul = buf.subarray(from).indexOf(0);
  if (nul >= 0)
    throw new InputError(
      `${at.source}, line ${lineOf(from + nul)}: the file holds a NUL byte (offset ${at.offset + from + nul}), so it is not a text file; export the data as CSV text in UTF-8.`,
    );
  const bad = firstInvalidUtf8(buf.subarray(from, upto));
  if (bad >= 0) {
    const k = from + bad;
    throw new InputError(
      `${at.source}, line ${lineOf(k)}: the file is not valid UTF-8 (byte 0x${buf[k].toString(16).padStart(2, "0")} at offset ${at.offset + k}). Save it as UTF-8 (for example with iconv -f latin1 -t utf-8) and run again.`,
    );
  }
}

/** Byte offset of the first invalid UTF-8 sequence, or −1 (RFC 3629 §4); Node's native check first, the scan below only to locate a fault. */
export function firstInvalidUtf8(b: Uint8Array): number {
  if (isUtf8(b)) return -1;
  let i = 0;
  const n = b.length;
  while (i < n) {
    const c = b[i];
    if (c < 0x80) {
      i++;
      continue;
    }
    let need: number, min: number;
    if (c >= 0xc2 && c <= 0xdf) {
      need = 1;
      min = 0x80;
    } else if (c >= 0xe0 && c <= 0xef) {
      need = 2;
      min = 0x800;
    } else if (c >= 0xf0 && c <= 0xf4) {
      need = 3;
      min = 0x10000;
    } else return i;
    let cp = c & (need === 1 ? 0x1f : need === 2 ? 0x0f : 0x07);
    for (let k = 1; k <= need; k++) {
      const d = b[i + k];
      if (d === undefined || (d & 0xc0) !== 0x80) return i;
      cp = (cp << 6) | (d & 0x3f);
    }
    if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff)) return i;
    i += need + 1;
  }
  return -1;
}

function lineOfOffset(b: Uint8Array, offset: number): number {
  let line = 1;
  for (let i = 0; i < offset; i++) if (b[i] === 0x0a) line++;
  return line;
}

/** Decode UTF-8 text, naming the line and byte of the first invalid sequence. */
export function decodeUtf8(bytes: Uint8Array, source: string): string {
  const bad = firstInvalidUtf8(bytes);
  if (bad >= 0) {
    throw new InputError(
      `${source}, line ${lineOfOffset(bytes, bad)}: the file is not valid UTF-8 (byte 0x${bytes[bad].toString(16).padStart(2, "0")} at offset ${bad}). ` +
        `Save it as UTF-8 (for example with iconv -f latin1 -t utf-8) and run again.`,
    );
  }
  return new TextDecoder("utf-8").decode(bytes);
}
