// Touching column arrays' pages on a second thread (src/io/prefault.ts): the
// worker does map the pages it is given, and a file read while it touches
// gives the same table, bit for bit, as a file read without it.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { setTimeout as sleep } from "node:timers/promises";
import { loadTableStream } from "../../src/io/csv.js";
import { PREFAULT_MIN_BYTES, startPrefault } from "../../src/io/prefault.js";
import { snapshot } from "./table-snapshot.js";

test("the worker maps the pages of the arrays it is sent: the process's resident memory grows by their size", async () => {
  const bytes = 96 << 20;
  const fresh = new Float64Array(new SharedArrayBuffer(bytes));
  const before = process.memoryUsage.rss();
  const p = startPrefault();
  try {
    p.take([fresh]);
    let grown = 0;
    for (let k = 0; k < 200 && grown < bytes * 0.9; k++) {
      await sleep(50);
      grown = process.memoryUsage.rss() - before;
    }
    assert.ok(grown >= bytes * 0.9, `resident memory grew by ${(grown / 2 ** 20).toFixed(0)} MB of 96 MB`);
    assert.ok(
      fresh.every((v) => v === 0),
      "the touch changes no value",
    );
  } finally {
    p.stop();
  }
});

test("a file read while the worker touches its columns gives the table read without it", async () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-prefault-"));
  const path = join(dir, "large.csv");
  const lines = ["ward,shift,visits,hours,score"];
  for (let i = 0; lines.length * 22 < PREFAULT_MIN_BYTES * 1.2; i++)
    lines.push(`w${i % 37},${i % 3 ? "day" : "night"},${(i * 7) % 23},${((i % 97) / 8).toFixed(3)},${-i / 1024}`);
  writeFileSync(path, `${lines.join("\n")}\n`);
  const read = async (workers: string | undefined) => {
    const saved = process.env.TALLYFIT_WORKERS;
    if (workers === undefined) delete process.env.TALLYFIT_WORKERS;
    else process.env.TALLYFIT_WORKERS = workers;
    try {
      return snapshot((await loadTableStream(path, { digest: false })).table);
    } finally {
      if (saved === undefined) delete process.env.TALLYFIT_WORKERS;
      else process.env.TALLYFIT_WORKERS = saved;
    }
  };
  const without = await read("0");
  assert.equal(without.nRows, lines.length - 1);
  for (let k = 0; k < 3; k++) assert.deepEqual(await read(undefined), without, `read ${k + 1} with the worker`);
});
