// Column arrays' pages touched ahead of the reader, on a second thread. On the
// virtual machines this runs on, the first write to a fresh 4 KB page of
// memory costs about 12 µs, against well under 1 µs for the write itself: a
// million rows of seven columns (44 MB) spent some 130 ms of a 0.3 s read in
// page faults. A worker (prefault-worker.ts) takes each column array in
// shared memory as the reader makes it and touches one word per page, in row
// order across the columns from the last row back, while the reader faults
// pages in from the first row on: the two share the work until they meet. The touch is an atomic add of zero, which leaves every value as it
// is whichever comes first, the reader's store or the touch: the table read is
// the same bits with and without it (test/io/prefault.test.ts).
import { availableParallelism } from "node:os";
import { env } from "node:process";
import { Worker } from "node:worker_threads";

/**
 * From this file size up, touching ahead pays: the worker's start (some 50 ms,
 * on the other core) must come well before the reader has faulted most pages
 * itself. On a 2-core machine, medians of 5 alternating runs with and without
 * the worker: 8.9 MB 0.155 and 0.158 s (even), 15.6 MB 0.21 and 0.23 s, 22 MB
 * 0.26 and 0.31 s.
 */
export const PREFAULT_MIN_BYTES = 8 << 20;

export interface Prefault {
  /** Touch these arrays' pages (all of the same rows), in row order across them from the last row back. */
  take(arrays: (Float64Array | Int32Array)[]): void;
  stop(): void;
}

/** Whether to touch ahead for a file of this size read on one thread: TALLYFIT_WORKERS=0 never. */
export function prefaultWanted(size: number): boolean {
  return env.TALLYFIT_WORKERS !== "0" && size >= PREFAULT_MIN_BYTES && availableParallelism() >= 2;
}

/** Start the touching worker; `take` queues arrays for it, `stop` ends it wherever it is. */
export function startPrefault(): Prefault {
  const worker = new Worker(new URL("./prefault-worker.js", import.meta.url));
  worker.unref();
  // A worker that fails to start or dies only costs the speed it would have given.
  worker.on("error", () => {});
  return {
    take: (arrays) => worker.postMessage(arrays),
    stop: () => void worker.terminate(),
  };
}
