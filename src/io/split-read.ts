// A large CSV file read on two threads. A worker (read-worker.ts) reads the
// bytes after the first line break past the middle, while this thread reads
// the first half; the worker's columns are then appended (ColumnReader.appendPart).
// That line break ends a record only when no quote comes before it (a quoted
// field may hold a line break), so the halves are joined only when the first
// half holds no quote, every column has the same kind in both halves, and the
// worker did not turn a column into a factor after some numbers (codedAsRead).
// Otherwise, and on any fault in the second half, this thread reads the second
// half itself: the table and every message are those of one reader.
import { type FileHandle, open } from "node:fs/promises";
import { availableParallelism } from "node:os";
import { env } from "node:process";
import { Worker } from "node:worker_threads";
import type { Column, Table } from "./table.js";
import type { ColumnReader } from "./tokenizer.js";

/**
 * Below this size one thread reads faster than two: the worker's start and its
 * code not yet optimised cost more than half the reading saves. Measured on a
 * 2-core machine: 23 MB 0.44 s on one thread, 0.50 s on two; 67 MB 1.2 s and 0.7–0.8 s.
 */
export const SPLIT_MIN_BYTES = 40 << 20;

export type SplitMode = "auto" | "always" | "never";

const QUOTE = 0x22,
  LF = 0x0a,
  PROBE = 1 << 16;

/** Whether to read a file of this size on two threads: TALLYFIT_WORKERS=0 never, =1 always, else from the size and the cores. */
export function splitWanted(size: number, mode: SplitMode = "auto"): boolean {
  const m =
    mode !== "auto" ? mode : env.TALLYFIT_WORKERS === "0" ? "never" : env.TALLYFIT_WORKERS === "1" ? "always" : "auto";
  if (m === "never") return false;
  return m === "always" || (size >= SPLIT_MIN_BYTES && availableParallelism() >= 2);
}

/**
 * Feed a file's bytes to `consume` (which feeds `reader`), reading the second
 * half on a worker when `split`; the reader then holds every row either way.
 * Returns whether the worker's half was joined.
 */
export async function readFileBytes(
  path: string,
  size: number,
  reader: ColumnReader,
  consume: (chunk: Uint8Array) => void,
  split: boolean,
): Promise<boolean> {
  const fh = await open(path, "r");
  let worker: Worker | null = null;
  try {
    const buf = Buffer.allocUnsafe(1 << 22);
    const cut = split ? await splitPoint(fh, size) : null;
    let part: Promise<Table | null> | null = null;
    if (cut) {
      const w = new Worker(new URL("./read-worker.js", import.meta.url), {
        workerData: { path, header: cut.header, start: cut.at, end: size, options: reader.streamOptions },
      });
      worker = w;
      part = new Promise((resolve) => {
        w.once("message", (m: { table: Table | null }) => resolve(m.table));
        w.once("error", () => resolve(null));
        w.once("exit", () => resolve(null));
      });
    }
    const readRange = async (from: number, to: number, watchQuotes: boolean): Promise<boolean> => {
      let quoted = false;
      await forEachChunk(fh, from, to, buf, (chunk) => {
        if (watchQuotes && !quoted && chunk.indexOf(QUOTE) >= 0) quoted = true;
        consume(chunk);
      });
      return quoted;
    };
    if (!cut || !part) {
      await readRange(0, size, false);
      return false;
    }
    const quoted = await readRange(0, cut.at, true);
    const table = quoted ? null : await part;
    if (table && [...table.columns.values()].every(codedAsRead) && reader.appendPart(table)) return true;
    await readRange(cut.at, size, false);
    return false;
  } finally {
    if (worker) void worker.terminate();
    await fh.close();
  }
}

/**
 * Bytes [from, to) of an open file, in chunks of one buffer refilled: the
 * reader copies what it keeps, so no chunk outlives its read (a new buffer per
 * chunk would leave hundreds of MB to the garbage collector on a large file).
 */
export async function forEachChunk(
  fh: FileHandle,
  from: number,
  to: number,
  buf: Buffer,
  f: (chunk: Uint8Array) => void,
): Promise<void> {
  for (let at = from; at < to; ) {
    const { bytesRead } = await fh.read(buf, 0, Math.min(buf.length, to - at), at);
    if (bytesRead === 0) break;
    at += bytesRead;
    f(buf.subarray(0, bytesRead));
  }
}

/**
 * Whether a part's column holds its levels as one reader would have read
 * them: a column that turned into a factor after some numbers (demote) coded
 * those numbers from their values ("1.50" as "1.5"), where a reader that had
 * already met text would have kept their bytes.
 */
function codedAsRead(c: Column): boolean {
  if (c.kind === "numeric" || c.reason.forced) return true;
  const before = c.reason.row - 2;
  for (let i = 0; i < before; i++) if (c.codes[i] >= 0) return false;
  return true;
}

/** The first byte after the first line break at or past the middle, and the header line's bytes; null when either is not found nearby. */
async function splitPoint(fh: FileHandle, size: number) {
  const head = Buffer.alloc(PROBE);
  const { bytesRead: h } = await fh.read(head, 0, Math.min(PROBE, size), 0);
  const headerEnd = head.subarray(0, h).indexOf(LF) + 1;
  if (headerEnd <= 0) return null;
  const mid = Math.floor(size / 2);
  const probe = Buffer.alloc(PROBE);
  const { bytesRead } = await fh.read(probe, 0, Math.min(PROBE, size - mid), mid);
  const lf = probe.subarray(0, bytesRead).indexOf(LF);
  const at = mid + lf + 1;
  if (lf < 0 || at <= headerEnd || at >= size) return null;
  return { at, header: Uint8Array.from(head.subarray(0, headerEnd)) };
}
