// The byte-level reader against csv-parse (the reference implementation) on awkward files, and chunked reading.
import { test } from "node:test";
import assert from "node:assert/strict";
import fc from "fast-check";
import { makeReader, parseTable } from "../../src/io/csv.js";
import { parseTableWithCsvParse } from "./csv-parse-oracle.js";
import { InputError } from "../../src/errors.js";
import type { Table } from "../../src/io/table.js";
import { snapshot } from "./table-snapshot.js";

function outcome(f: () => Table) {
  try {
    return { ok: snapshot(f()) };
  } catch (e) {
    if (e instanceof InputError) return { error: true };
    throw e;
  }
}

const CORPUS: [string, string][] = [
  ["plain", "a,b,c\n1,x,2.5\n3,y,-4\n"],
  ["no trailing newline", "a,b\n1,2\n3,4"],
  ["CRLF", "a,b\r\n1,x\r\n2,y\r\n"],
  ["BOM", "\ufeffa,b\n1,2\n"],
  ["quotes and doubled quotes", 'a,b\n"1","say ""hi"""\n"2","plain"\n'],
  [
    "quoted fields, read from their bytes unless trim() or a doubled quote would change their text",
    'a,b,c\n" 1 ","\u00a0x\u00a0",p\n"2","y ""z""","q"\n"\v3","NA","\u3000r"\n"4.50","x",""\n',
  ],
  ["embedded delimiter and newline", 'a,b\n1,"x, y"\n2,"two\nlines"\n3,"cr\r\nlf"\n'],
  ["empty fields and missing tokens", "a,b,c\n,NA,1\nnull,.,NaN\n4,z,\n"],
  ["spaces around values", "a , b\n 1 , x \n2,  y\n"],
  ["numbers in many forms", "a\n1e3\n-0.5\n+7\n.25\n00012\n123456789012345678901234\n1.5e-300\n"],
  ["very long field", `a,b\n1,${"q".repeat(100000)}\n2,short\n`],
  ["blank lines", "a,b\n1,2\n\n3,4\n\n"],
  ["unicode levels", "ward,y\nstation nord,1\nÄrztehaus,2\n病棟,3\n"],
  ["mixed numbers then text", "a\n1\n2\nthree\n"],
  ["ragged", "a,b\n1,2\n3\n"],
  ["unterminated quote", 'a,b\n1,"open\n2,3\n'],
  ["quote inside unquoted field", 'a,b\n1,ab"c\n'],
  ["text after closing quote", 'a,b\n1,"ab"c\n'],
];

for (const [name, text] of CORPUS) {
  test(`tokenizer agrees with csv-parse: ${name}`, () => {
    const a = outcome(() => parseTable(text, { source: "t.csv" }));
    const b = outcome(() => parseTableWithCsvParse(text, { source: "t.csv" }));
    assert.deepEqual(a, b);
  });
}

test("chunked reading gives the same table whatever the chunk boundaries (fast-check, 200 runs)", () => {
  const text = `${CORPUS.slice(0, 13).map(([, t]) => t)[5]}`;
  const whole = snapshot(parseTable(text, { source: "t.csv" }));
  fc.assert(
    fc.property(fc.array(fc.integer({ min: 1, max: 9 }), { minLength: 1, maxLength: 30 }), (sizes) => {
      const bytes = new TextEncoder().encode(text);
      const r = makeReader({ source: "t.csv" });
      let pos = 0,
        k = 0;
      while (pos < bytes.length) {
        const n = sizes[k++ % sizes.length];
        r.feed(bytes.subarray(pos, pos + n));
        pos += n;
      }
      assert.deepEqual(snapshot(r.finish()), whole);
    }),
    { numRuns: 200, seed: 11 },
  );
});

test("tokenizer agrees with csv-parse on random CSV-like text (fast-check, 300 runs)", () => {
  const chars = fc.constantFrom("a", "1", "2.5", ",", '"', "\n", "\r\n", " ", "NA", "x y", "-3");
  fc.assert(
    fc.property(fc.array(chars, { maxLength: 60 }), (parts) => {
      const text = `h1,h2\n${parts.join("")}`;
      assert.deepEqual(
        outcome(() => parseTable(text, { source: "r.csv" })),
        outcome(() => parseTableWithCsvParse(text, { source: "r.csv" })),
      );
    }),
    { numRuns: 300, seed: 13 },
  );
});

test("tokenizer agrees with csv-parse on factor levels short and long, and on custom missing-value tokens of any length", () => {
  const long = "not recorded at the time of the visit";
  const text = `ward,k\nab,1\nabc,2\nab ,3\nabcdefg,4\nabcdef,5\n${long},6\n-,7\nab,8\nabcdefg,9\nz,${long}\n`;
  for (const na of [undefined, ["-"], [long, "-"], ["", "abcdef"]]) {
    const a = outcome(() => parseTable(text, { source: "t.csv", na }));
    const b = outcome(() => parseTableWithCsvParse(text, { source: "t.csv", na }));
    assert.deepEqual(a, b, `na = ${JSON.stringify(na)}`);
  }
  const t = parseTable(text, { source: "t.csv", na: [long, "-"] });
  const ward = t.columns.get("ward")!;
  assert.ok(ward.kind === "factor");
  assert.deepEqual(
    ward.levels,
    ["ab", "abc", "abcdefg", "abcdef", "z"],
    "trimmed 'ab ' is 'ab'; the long token and '-' are missing",
  );
  assert.deepEqual([...ward.codes], [0, 1, 0, 2, 3, -1, -1, 0, 2, 4]);
});

test("chunks fed from one refilled buffer (as files are read) give the same table: the reader keeps copies, not views", () => {
  const text = `ward,shift,k\n${Array.from({ length: 200 }, (_, i) => `w${i % 7},"s ${i % 3}",${i % 5}`).join("\r\n")}\n`;
  const bytes = new TextEncoder().encode(text);
  const whole = snapshot(parseTable(text, { source: "t.csv" }));
  for (const size of [1, 5, 13, 64]) {
    const r = makeReader({ source: "t.csv" });
    const buf = new Uint8Array(size);
    for (let pos = 0; pos < bytes.length; pos += size) {
      const n = Math.min(size, bytes.length - pos);
      buf.set(bytes.subarray(pos, pos + n));
      r.feed(buf.subarray(0, n));
      buf.fill(0x78); // overwrite, as the next read would
    }
    assert.deepEqual(snapshot(r.finish()), whole, `chunks of ${size} bytes`);
  }
});

test("a fault's offset counts from the file's first byte, byte-order mark included", () => {
  const bytes = Uint8Array.from([0xef, 0xbb, 0xbf, ...new TextEncoder().encode("a,b\n1,"), 0xe9, 0x0a]);
  assert.throws(
    () => parseTable(bytes, { source: "bom.csv" }),
    /line 2: the file is not valid UTF-8 \(byte 0xe9 at offset 9\)/,
  );
  const nul = Uint8Array.from([0xef, 0xbb, 0xbf, ...new TextEncoder().encode("a,b\n1,2\n3,"), 0, 0x0a]);
  assert.throws(() => parseTable(nul, { source: "nul.csv" }), /line 3: the file holds a NUL byte \(offset 13\)/);
});
