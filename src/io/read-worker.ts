// Worker thread of split-read.ts: reads the second half of a CSV file (the
// header line first, so the columns are the same) and sends its columns back,
// their buffers transferred, not copied. Any fault is reported as a refusal:
// the main thread then reads that half itself, so messages keep their lines.
import { open } from "node:fs/promises";
import { parentPort, workerData } from "node:worker_threads";
import { forEachChunk } from "./split-read.js";
import type { Table } from "./table.js";
import { ColumnReader, type StreamOptions } from "./tokenizer.js";

const { path, header, start, end, options } = workerData as {
  path: string;
  header: Uint8Array;
  start: number;
  end: number;
  options: StreamOptions;
};

async function readPart(): Promise<Table> {
  const reader = new ColumnReader(options);
  reader.expectedBytes = header.length + end - start;
  reader.feed(header);
  const fh = await open(path, "r");
  try {
    await forEachChunk(fh, start, end, Buffer.allocUnsafe(1 << 22), (chunk) => reader.feed(chunk));
  } finally {
    await fh.close();
  }
  return reader.finish();
}

readPart().then(
  (table) => {
    // Columns in shared memory (large ones, see rowArray) go with the clone itself; the others are transferred.
    const buffers = new Set<ArrayBuffer>();
    for (const c of table.columns.values()) {
      const b = (c.kind === "numeric" ? c.values : c.codes).buffer;
      if (b instanceof ArrayBuffer) buffers.add(b);
    }
    parentPort!.postMessage({ table }, [...buffers]);
  },
  () => parentPort!.postMessage({ table: null }),
);
