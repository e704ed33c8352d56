// Reading a file on two threads (src/io/split-read.ts) gives the table, or the
// error message, that one reader gives, whatever the file holds on either side
// of the split: levels first seen in the second half, missing values, a quote
// before the split, a column numeric in one half and text in the other, a
// fault in the second half.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import fc from "fast-check";
import { loadTableStream } from "../../src/io/csv.js";
import { splitWanted } from "../../src/io/split-read.js";
import { snapshot } from "./table-snapshot.js";

const DIR = mkdtempSync(join(tmpdir(), "tallyfit-split-"));

async function outcome(path: string, split: "always" | "never", factors: string[] = []) {
  try {
    const r = await loadTableStream(path, { digest: false, split, factors });
    return { ok: snapshot(r.table, { reasons: true }), twoThreads: r.twoThreads };
  } catch (e) {
    return { error: (e as Error).message, twoThreads: false };
  }
}

/** The outcome on two threads equals one thread's; returns it and whether the halves were joined. */
async function assertSame(name: string, text: string, factors: string[] = []) {
  const path = join(DIR, `${name}.csv`);
  writeFileSync(path, text);
  const one = await outcome(path, "never", factors);
  const two = await outcome(path, "always", factors);
  assert.equal(one.twoThreads, false);
  assert.deepEqual({ ...two, twoThreads: false }, one, name);
  return { ...one, joined: two.twoThreads };
}

function rows(n: number, line: (i: number) => string, header = "ward,shift,y,hours"): string {
  return `${header}\n${Array.from({ length: n }, (_, i) => line(i)).join("\n")}\n`;
}

test("two threads read what one reads: levels first seen after the split keep their order of first appearance", async () => {
  const r = await assertSame(
    "late-levels",
    rows(400, (i) => `w${i < 200 ? i % 3 : i % 7},${i % 2 ? "day" : "night"},${i % 5},${(i % 9) + 0.5}`),
  );
  assert.equal(r.joined, true);
  const ward = r.ok!.columns.find((c) => c.name === "ward")!;
  // Rows 200 on cycle w4, w5, w6, w0, w1, w2, w3 (200 mod 7 = 4); w3 is first seen after w6.
  assert.deepEqual(ward.levels, ["w0", "w1", "w2", "w4", "w5", "w6", "w3"]);
});

test("two threads read what one reads: missing values, CRLF line ends, a forced factor, no final line break", async () => {
  const crlf = await assertSame(
    "na-crlf",
    rows(300, (i) => `w${i % 4},${i % 11 ? "day" : "NA"},${i % 13 ? i % 5 : ""},${i % 3}`).replace(/\n/g, "\r\n"),
    ["y"],
  );
  assert.equal(crlf.joined, true);
  const open = await assertSame("no-final-break", rows(300, (i) => `w${i % 4},d,${i % 5},1`).trimEnd());
  assert.equal(open.joined, true);
});

test("a quote before the split: one thread reads on (a quoted line break could sit across it)", async () => {
  const text = rows(300, (i) => (i === 3 ? `"w, ""x""","two\nlines",1,1` : `w${i % 4},d,${i % 5},1`));
  const r = await assertSame("quoted", text);
  assert.equal(r.ok!.nRows, 300);
  assert.equal(r.joined, false);
});

test("a column numeric in the first half and text in the second: the factor's first text value and row are those of one reader", async () => {
  const r = await assertSame(
    "late-text",
    rows(300, (i) => `w${i % 4},d,${i === 250 ? "many" : i % 5},1.50`),
  );
  const y = r.ok!.columns.find((c) => c.name === "y")!;
  assert.deepEqual(y.reason, { forced: false, row: 252, value: "many" });
  assert.equal(r.joined, false);
});

test("text in both halves, and numbers in the second half before its first text: the numbers keep their written form", async () => {
  const r = await assertSame(
    "numbers-then-text",
    rows(300, (i) => `w${i % 4},d,${i === 3 ? "x" : i === 160 ? "1.50" : i === 200 ? "zz" : i >= 150 ? "" : i % 5},1`),
  );
  const y = r.ok!.columns.find((c) => c.name === "y")!;
  assert.ok(y.levels!.includes("1.50"), "read as written, as one reader keeps it");
});

test("faults in the second half give one reader's message, with its row and line", async () => {
  const ragged = await assertSame(
    "ragged",
    rows(300, (i) => (i === 280 ? "w1,d,3" : `w${i % 4},d,${i % 5},1`)),
  );
  assert.match(ragged.error!, /row 282 \(line 282\): 3 fields where the header has 4/);
  const path = join(DIR, "bad-utf8.csv");
  writeFileSync(
    path,
    Buffer.concat([
      Buffer.from(rows(300, (i) => `w${i % 4},d,${i % 5},1`)),
      Buffer.from([0x77, 0xff, 0x2c, 0x31, 0x2c, 0x31, 0x2c, 0x31, 0x0a]),
    ]),
  );
  const one = await outcome(path, "never");
  assert.match(one.error!, /line 302: the file is not valid UTF-8 \(byte 0xff/);
  assert.deepEqual(await outcome(path, "always"), one);
});

test("a file with columns large enough for shared memory is joined, and read as one reader reads it", async () => {
  const r = await assertSame(
    "large",
    rows(260000, (i) => `w${i % 9},${i % 2 ? "d" : "n"},${i % 7},${(i % 13) / 4}`),
  );
  assert.equal(r.joined, true);
  assert.equal(r.ok!.nRows, 260000);
});

test("random files read the same on one thread and on two, and many of them are joined (fast-check, 80 runs)", async () => {
  // Each column numbers, text or both, with missing values; quoted fields in a quarter of the files.
  const pools = {
    numbers: ["1", "2.5", "-3", "1.50", "1e3", "", "NA"],
    text: ["x", "w1", "w2", "ward 9", "", "NA"],
    both: ["1", "1.50", "x", "w1", ""],
  };
  const kinds = fc.array(
    fc.constantFrom("numbers", "text", "text", "numbers", "both") as fc.Arbitrary<keyof typeof pools>,
    {
      minLength: 3,
      maxLength: 3,
    },
  );
  const file = fc.tuple(kinds, fc.integer({ min: 0, max: 3 })).chain(([cols, q]) => {
    const field = (c: keyof typeof pools) => fc.constantFrom(...pools[c], ...(q === 0 ? ['"q"', '"a,b"'] : []));
    const line = fc.tuple(field(cols[0]), field(cols[1]), field(cols[2])).map((f) => f.join(","));
    return fc.array(line, { minLength: 2, maxLength: 80 });
  });
  let k = 0,
    joined = 0;
  await fc.assert(
    fc.asyncProperty(fc.boolean(), file, async (crlf, lines) => {
      const text = `a,b,c\n${lines.join("\n")}\n`;
      if ((await assertSame(`random-${k++}`, crlf ? text.replace(/\n/g, "\r\n") : text)).joined) joined++;
    }),
    { numRuns: 80, seed: 21 },
  );
  assert.ok(joined >= 20, `${joined} of 80 files joined`);
});

test("two threads only for a large file, and never with TALLYFIT_WORKERS=0", () => {
  assert.equal(splitWanted(1 << 20), false);
  assert.equal(splitWanted(1 << 20, "always"), true);
  assert.equal(splitWanted(1 << 30, "never"), false);
  const saved = process.env.TALLYFIT_WORKERS;
  process.env.TALLYFIT_WORKERS = "0";
  try {
    assert.equal(splitWanted(1 << 30), false);
  } finally {
    if (saved === undefined) delete process.env.TALLYFIT_WORKERS;
    else process.env.TALLYFIT_WORKERS = saved;
  }
});
