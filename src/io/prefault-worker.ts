// Worker thread of prefault.ts: for each list of column arrays in shared
// memory it is sent (one per column, all for the same rows), writes one word
// per 4 KB page with an atomic add of zero, in row order across the columns
// from the last row back: the reader faults pages in from the first row on,
// this thread from the other end, and the work is shared until they meet.
import { parentPort } from "node:worker_threads";

const PAGE = 4096,
  /** Rows per step: one page of a Float64 column. */
  STEP = 512;

parentPort!.on("message", (columns: (Float64Array | Int32Array)[]) => {
  const words = columns.map((c) => new Int32Array(c.buffer, c.byteOffset, c.byteLength >> 2));
  const rows = Math.max(...columns.map((c) => c.length));
  // Per column, the next page start to touch, going down.
  const next = columns.map((c) => Math.floor((c.byteLength - 1) / PAGE) * PAGE);
  for (let row = Math.floor((rows - 1) / STEP) * STEP; row >= 0; row -= STEP)
    for (let k = 0; k < columns.length; k++) {
      const from = row * columns[k].BYTES_PER_ELEMENT;
      let at = next[k];
      for (; at >= from; at -= PAGE) Atomics.add(words[k], at >> 2, 0);
      next[k] = at;
    }
});
