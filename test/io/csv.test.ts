// The loader: RFC 4180 quoting, dialects, typing and input errors.
import { test } from "node:test";
import assert from "node:assert/strict";
import { parseTable } from "../../src/io/csv.js";
import { firstInvalidUtf8 } from "../../src/io/source-bytes.js";
import { InputError } from "../../src/errors.js";

const load = (text: string | Uint8Array, extra: Record<string, unknown> = {}) =>
  parseTable(text, { source: "t.csv", ...extra });

test("quoted fields, doubled quotes, embedded delimiters and newlines, CRLF and a BOM", () => {
  const t = load('\ufeffname,"n"\r\n"a, b",1\r\n"say ""hi""",2\r\n"two\nlines",3\r\n');
  const name = t.columns.get("name")!;
  assert.equal(name.kind, "factor");
  if (name.kind === "factor") assert.deepEqual(name.levels, ["a, b", 'say "hi"', "two\nlines"]);
  const n = t.columns.get("n")!;
  assert.equal(n.kind, "numeric");
  if (n.kind === "numeric") assert.deepEqual([...n.values], [1, 2, 3]);
  assert.equal(t.nRows, 3);
});

test("missing tokens: empty, NA, NaN, null and '.' by default; --na replaces them", () => {
  const t = load("x\n1\nNA\n\nnull\n.\nNaN\n2\n");
  const x = t.columns.get("x")!;
  assert.equal(x.kind, "numeric");
  if (x.kind === "numeric")
    assert.equal(
      [...x.values].filter(Number.isNaN).length,
      4,
      "the blank line is skipped, the four tokens are missing",
    );
  const t2 = load("x\n1\n-99\n2\n", { na: ["-99"] });
  const x2 = t2.columns.get("x")!;
  if (x2.kind === "numeric") assert.ok(Number.isNaN(x2.values[1]));
});

test("a column is numeric only when every present value is a finite decimal number", () => {
  const t = load("a,b,c\n1,0x10,1e3\n2,3,Infinity\n");
  assert.equal(t.columns.get("a")!.kind, "numeric");
  const b = t.columns.get("b")!;
  assert.equal(b.kind, "factor");
  if (b.kind === "factor" && !b.reason.forced) assert.deepEqual([b.reason.row, b.reason.value], [2, "0x10"]);
  assert.equal(t.columns.get("c")!.kind, "factor");
});

test("--factor forces a factor and keeps the text as written", () => {
  const t = load("ward\n01\n2\n01\n", { factors: ["ward"] });
  const w = t.columns.get("ward")!;
  assert.equal(w.kind, "factor");
  if (w.kind === "factor") assert.deepEqual(w.levels, ["01", "2"]);
});

test("tab-separated by file name, or any delimiter by option", () => {
  const t = parseTable("a\tb\n1\t2\n", { source: "x.tsv" });
  assert.deepEqual(t.header, ["a", "b"]);
  const s = load("a;b\n1;2\n", { delimiter: ";" });
  assert.deepEqual(s.header, ["a", "b"]);
});

test("input errors name the file, the row and what to do", () => {
  const cases: [string, RegExp][] = [
    ["", /t\.csv: the file is empty/],
    ["a,b\n", /header row but no data rows/],
    ["a,a\n1,2\n", /row 1: column name 'a' appears twice/],
    ["a,b\n1,2\n3\n", /row 3 \(line 3\): 1 fields where the header has 2/],
    ["a,b\n1,2,3\n", /row 2 .*3 fields where the header has 2/],
    ['a,b\n"1,2\n', /line \d+: a quoted field is never closed/],
  ];
  for (const [text, re] of cases)
    assert.throws(
      () => load(text),
      (e: unknown) => e instanceof InputError && re.test(e.message),
      text,
    );
});

test("invalid UTF-8 is an input error naming the line and byte", () => {
  const bytes = new Uint8Array([...Buffer.from("a,b\n1,2\n3,"), 0xff, ...Buffer.from("\n")]);
  assert.equal(firstInvalidUtf8(bytes), 10);
  assert.equal(firstInvalidUtf8(Buffer.from("héllo ✓ 𝄞")), -1);
  assert.equal(firstInvalidUtf8(new Uint8Array([0xc0, 0x80])), 0, "overlong encoding");
  assert.equal(firstInvalidUtf8(new Uint8Array([0xe2, 0x82])), 0, "truncated sequence");
  assert.throws(() => load(bytes), /line 3: the file is not valid UTF-8 \(byte 0xff/);
});
