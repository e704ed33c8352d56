// The reader's fast path for plain records (src/io/plain-records.ts) against
// csv-parse (the reference implementation, through the oracle of
// csv-parse-oracle.ts) and against the reader's own general path, on files
// that mix plain records with every kind the fast path hands back.
import { test } from "node:test";
import assert from "node:assert/strict";
import fc from "fast-check";
import { makeReader, parseTable } from "../../src/io/csv.js";
import { InputError } from "../../src/errors.js";
import type { Table } from "../../src/io/table.js";
import { parseTableWithCsvParse } from "./csv-parse-oracle.js";
import { snapshot } from "./table-snapshot.js";

/** A numeric column's fields: plain numbers most of the time, and each kind that is not plain. */
const NUMBER = fc.oneof(
  { weight: 12, arbitrary: fc.constantFrom("4", "0", "-3", "2.5", "0.125", "0012", "-0", "100.", "7.06") },
  { weight: 1, arbitrary: fc.constantFrom("+5", "1e3", ".5", " 4", "4 ", "NA", "", '"7"', "1234567890123456789") },
);
/** A factor column's fields. */
const LEVEL = fc.oneof(
  { weight: 12, arbitrary: fc.constantFrom("w1", "w2", "north ward", "a", "Ärzte", "w1x") },
  { weight: 1, arbitrary: fc.constantFrom(" w1", "w2\t", "w1 ", "NA", "", '"w,3"', '"say ""x"""', ".") },
);
/** Records, now and then a blank line among them. */
const ROW = fc.oneof(
  { weight: 40, arbitrary: fc.tuple(LEVEL, NUMBER, LEVEL, NUMBER).map((f) => f.join(",")) },
  { weight: 1, arbitrary: fc.constant("") },
);

function outcome(f: () => Table) {
  try {
    return { ok: snapshot(f(), { reasons: true }) };
  } catch (e) {
    if (e instanceof InputError) return { error: e.message };
    throw e;
  }
}

/** The reader fed in chunks of the given sizes (by turns); keepRecords turns the fast path off. */
function readInChunks(text: string, sizes: number[], na: string[] | undefined, keepRecords = false): Table {
  const bytes = new TextEncoder().encode(text);
  const r = makeReader({ source: "p.csv", keepRecords, na });
  for (let pos = 0, k = 0; pos < bytes.length; k++) {
    const n = sizes[k % sizes.length];
    r.feed(bytes.subarray(pos, pos + n));
    pos += n;
  }
  return r.finish();
}

test("plain records and the others, mixed: the same table as csv-parse, as the general path alone, and whatever the chunks (fast-check, 60 runs)", () => {
  fc.assert(
    fc.property(
      fc.array(ROW, { minLength: 1, maxLength: 2500, size: "max" }),
      fc.array(fc.integer({ min: 1, max: 4096 }), { minLength: 1, maxLength: 5 }),
      fc.constantFrom("\n", "\r\n"),
      // The default missing-value tokens, or tokens that are also a plain number and a plain level.
      fc.constantFrom<string[] | undefined>(undefined, ["NA", "", "-3", "w2"]),
      (rows, sizes, end, na) => {
        // One line ending per file: csv-parse takes the first line's ending for the whole file.
        const text = `ward,k,shift,dose${end}${rows.join(end)}${end}`;
        const fast = outcome(() => readInChunks(text, sizes, na));
        assert.deepEqual(
          fast,
          outcome(() => parseTableWithCsvParse(text, { source: "p.csv", na })),
          "against csv-parse",
        );
        const general = outcome(() => {
          const { records: _, ...t } = readInChunks(text, [1 << 20], na, true);
          return t;
        });
        assert.deepEqual(fast, general, "against the general path alone");
      },
    ),
    { numRuns: 60, seed: 29 },
  );
});

test("after thousands of plain records, a short row is named by its row and line as on the general path", () => {
  const plain = Array.from({ length: 3000 }, (_, i) => `w${i % 4},${i % 9}.5`).join("\n");
  const text = `ward,k\n${plain}\nw1\nw2,3\n`;
  const fast = outcome(() => parseTable(text, { source: "p.csv" }));
  const general = outcome(() => parseTable(text, { source: "p.csv", keepRecords: true }));
  assert.deepEqual(fast, { error: fast.error });
  assert.match(String(fast.error), /row 3002 \(line 3002\)/);
  assert.deepEqual(fast, general);
});

test("a column that turns into a factor after thousands of plain numbers keeps its numbers' text as the general path does", () => {
  const text = `k,y\n${Array.from({ length: 2000 }, (_, i) => `${i % 3}.50,${i}`).join("\n")}\nnone,1\n`;
  const fast = parseTable(text, { source: "p.csv" });
  const general = parseTable(text, { source: "p.csv", keepRecords: true });
  const k = fast.columns.get("k")!;
  assert.ok(k.kind === "factor");
  assert.deepEqual(k.levels, ["0.5", "1.5", "2.5", "none"]);
  const { records: _, ...g } = general;
  assert.deepEqual(snapshot(fast, { reasons: true }), snapshot(g, { reasons: true }));
});
