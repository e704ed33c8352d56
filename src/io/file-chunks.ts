// A file's bytes fed to the reader in chunks, read ahead: while the reader
// takes one chunk, the next is being read into the other buffer. From
// PREFAULT_MIN_BYTES up, a worker touches the reader's column arrays' pages
// ahead of it (prefault.ts). A file is read on this one thread: parsing the
// second half of a file on a worker and joining the halves (an earlier design,
// removed) took longer than one thread with its pages touched ahead, because
// the join copies the second half into fresh pages of the first's columns
// (DEVELOPERS.md, "Speed and memory").
import { type FileHandle, open } from "node:fs/promises";
import { type Prefault, prefaultWanted, startPrefault } from "./prefault.js";
import type { ColumnReader } from "./tokenizer.js";

/** Feed bytes [0, size) of a file to `consume` (which feeds `reader`). */
export async function readFileBytes(
  path: string,
  size: number,
  reader: ColumnReader,
  consume: (chunk: Uint8Array) => void,
): Promise<void> {
  const fh = await open(path, "r");
  let prefault: Prefault | null = null;
  try {
    if (prefaultWanted(size)) {
      prefault = startPrefault();
      reader.onColumnArrays = prefault.take;
    }
    await forEachChunk(fh, 0, size, readBuffers(), consume);
  } finally {
    if (prefault) {
      prefault.stop();
      reader.onColumnArrays = null;
    }
    await fh.close();
  }
}

/** Bytes per read: small enough that the two read buffers' first touch costs little, large enough that calls are few. */
export const CHUNK_BYTES = 1 << 20;

/** The two buffers forEachChunk reads into by turns. */
export type ReadBuffers = [Buffer, Buffer];

export function readBuffers(): ReadBuffers {
  return [Buffer.allocUnsafe(CHUNK_BYTES), Buffer.allocUnsafe(CHUNK_BYTES)];
}

/**
 * Bytes [from, to) of an open file, in chunks, two buffers by turns: the next
 * chunk is being read while `f` takes this one, so this thread does not wait
 * for the disk or the page cache between chunks. `f` copies what it keeps:
 * its chunk is refilled two calls later (a new buffer per chunk would leave
 * hundreds of MB to the garbage collector on a large file).
 */
export async function forEachChunk(
  fh: FileHandle,
  from: number,
  to: number,
  bufs: ReadBuffers,
  f: (chunk: Uint8Array) => void,
): Promise<void> {
  const readAt = (k: number, at: number) =>
    fh.read(bufs[k], 0, Math.min(bufs[k].length, to - at), at).then((r) => r.bytesRead);
  let k = 0;
  let pending = from < to ? readAt(0, from) : null;
  try {
    for (let at = from; pending; k ^= 1) {
      const bytesRead = await pending;
      if (bytesRead === 0) break;
      at += bytesRead;
      pending = at < to ? readAt(k ^ 1, at) : null;
      f(bufs[k].subarray(0, bytesRead));
    }
  } finally {
    // When f throws, the read ahead is not wanted: its failure must not surface as an unhandled rejection.
    pending?.catch(() => {});
  }
}
