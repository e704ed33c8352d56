// One fresh process's reading of a bench file, for bench/run.ts: first the
// byte scan (read and count newlines, the floor for any CSV reader in Node),
// then the loader as fit uses it (no digest, only the model's columns), both
// cold, as a command-line run meets them. Prints {"scan": s, "load": s, "rows": n}.
import { closeSync, openSync, readSync } from "node:fs";
import { loadTableStream } from "../src/io/csv.js";

const file = process.argv[2];

function byteScan(): number {
  const t0 = process.hrtime.bigint();
  const fd = openSync(file, "r");
  const buf = Buffer.allocUnsafe(1 << 22);
  let lines = 0;
  for (let n = readSync(fd, buf, 0, buf.length, null); n > 0; n = readSync(fd, buf, 0, buf.length, null))
    for (let i = 0; i < n; i++) if (buf[i] === 10) lines++;
  closeSync(fd);
  void lines;
  return Number(process.hrtime.bigint() - t0) / 1e9;
}

const scan = byteScan();
const t0 = process.hrtime.bigint();
const { table } = await loadTableStream(file, {
  select: ["region", "agegrp", "sex", "insured", "score", "exposure", "visits"],
  digest: false,
});
const load = Number(process.hrtime.bigint() - t0) / 1e9;
console.log(JSON.stringify({ scan, load, rows: table.nRows }));
