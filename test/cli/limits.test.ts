// Hardening: bad input of every kind ends in exit 2 with a located message,
// never an internal error, a hang or unbounded memory. Documented limits
// refuse what would not end (formula size, nesting and terms; columns; line
// length; draws); files that are not UTF-8 text are named for what they are.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, writeFileSync } from "node:fs";
import { gzipSync } from "node:zlib";
import { tmpdir } from "node:os";
import { join } from "node:path";
import fc from "fast-check";
import { InputError } from "../../src/errors.js";
import { FORMULA_LIMITS, parseFormula } from "../../src/formula/formula.js";
import { parseTable } from "../../src/io/csv.js";
import { ROOT, runCli } from "../helpers.js";

const dir = mkdtempSync(join(tmpdir(), "tallyfit-limits-"));
const file = (name: string, content: string | Uint8Array) => {
  const p = join(dir, name);
  writeFileSync(p, content);
  return p;
};
const PROTO = file(
  "proto.csv",
  "constructor,__proto__,toString,y\na,b,1,3\nb,a,2,5\na,a,3,2\nb,b,1,4\na,b,2,6\nb,a,3,1\na,a,1,2\nb,b,2,3\n",
);

test("columns named like built-in object properties are ordinary columns", () => {
  const r = runCli([
    "fit",
    PROTO,
    "--model",
    "y ~ constructor + __proto__ + toString",
    "--intervals",
    "wald",
    "--format",
    "json",
  ]);
  assert.equal(r.code, 0, r.stderr);
  const terms = JSON.parse(r.stdout).coefficients.map((c: { term: string }) => c.term);
  assert.deepEqual(terms, ["intercept", "constructor=b", "__proto__=b", "toString"]);
  const refs = runCli([
    "fit",
    PROTO,
    "--model",
    "y ~ constructor + __proto__",
    "--ref",
    "constructor=b",
    "--ref",
    "__proto__=b",
    "--quiet",
  ]);
  assert.equal(refs.code, 0, refs.stderr);
  const order = runCli(["fit", PROTO, "--model", "y ~ constructor", "--order", "toString=1"]);
  assert.equal(order.code, 2);
  assert.match(order.stderr, /--order toString=\.\.\.: 'toString' is not one of the model's terms/);
});

test("model strings past the documented limits are refused with a located message", () => {
  const deep = `y ~ ${"(".repeat(FORMULA_LIMITS.nesting + 5)}constructor${")".repeat(FORMULA_LIMITS.nesting + 5)}`;
  const a = runCli(["fit", PROTO, "--model", deep]);
  assert.equal(a.code, 2);
  assert.match(a.stderr, /parentheses nest more than 100 deep\n.*\n +\^/);
  const star = `y ~ ${Array.from({ length: 22 }, (_, i) => `v${i}`).join("*")}`;
  const t0 = Date.now();
  const b = runCli(["fit", PROTO, "--model", star]);
  assert.equal(b.code, 2);
  assert.match(b.stderr, /expands to more than 1000 terms/);
  assert.ok(Date.now() - t0 < 5000, "refused at once");
  const long = `y ~ ${Array.from({ length: 3000 }, (_, i) => `v${i}`).join("+")}`;
  const c = runCli(["fit", PROTO, "--model", long]);
  assert.equal(c.code, 2);
  assert.match(c.stderr, /longer than 10000 characters/);
  assert.ok(c.stderr.length < 500, "the message shows a window, not the whole string");
});

test("a factor with thousands of levels, a huge --draws: refused with the limit named", () => {
  let csv = "g,y\n";
  for (let i = 0; i < 6000; i++) csv += `lv${i % 3000},${i % 6}\n`;
  const r = runCli(["fit", file("many.csv", csv), "--model", "y ~ g"]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /the model has 3000 coefficients; tallyfit fits at most 2000/);
  const model = join(ROOT, "test/fixtures/golden/model-negbin.json");
  const d = runCli(["predict", "--model-file", model, "examples/clinic_visits_week49.csv", "--draws", "1000000000"]);
  assert.equal(d.code, 2);
  assert.match(d.stderr, /--draws must be at most 100,000/);
});

test("files that are not UTF-8 CSV text are named for what they are: NUL bytes, UTF-16, damaged gzip, an endless line", () => {
  const cases: [string, Uint8Array | string, RegExp][] = [
    ["zeros.csv", new Uint8Array(5000), /holds a NUL byte \(offset 0\), so it is not a text file/],
    ["nul.csv", "ward,y\na,1\nb\u00002\n", /line 3: the file holds a NUL byte/],
    ["u16.csv", Buffer.from("\ufeffward,y\na,1\n", "utf16le"), /UTF-16 text, not UTF-8/],
    ["u16nobom.csv", Buffer.from("ward,y\na,1\n", "utf16le"), /UTF-16 text, not UTF-8/],
    ["w.csv.gz", gzipSync("ward,y\na,1\n").subarray(0, 15), /w\.csv\.gz: the gzip data is damaged/],
    ["tiny.csv", "e,y\n1,2\n1e-400,3\n", /row 3 holds '1e-400'.*beyond the range of a double-precision number/],
  ];
  for (const [name, content, message] of cases) {
    const r = runCli(["fit", file(name, content), "--model", "y ~ 1", "--exposure", "e"]);
    assert.equal(r.code, 2, name);
    assert.match(r.stderr, message, name);
  }
});

test(`property (${1000} runs): any model string parses or is refused with an InputError that points at a position`, () => {
  const piece = fc.constantFrom(
    "a",
    "b",
    "visits",
    "(",
    ")",
    "+",
    ":",
    "*",
    "~",
    "1",
    "0",
    "-",
    "^",
    " ",
    "`x y`",
    "f(",
    "__proto__",
  );
  fc.assert(
    fc.property(fc.array(piece, { maxLength: 40 }), fc.nat(120), (parts, nest) => {
      const text = `y ~ ${"(".repeat(nest % 130)}${parts.join("")}${")".repeat(nest % 130)}`;
      try {
        const f = parseFormula(text);
        assert.ok(f.terms.length <= FORMULA_LIMITS.terms);
      } catch (e) {
        assert.ok(e instanceof InputError, `not an InputError: ${(e as Error).message}`);
        assert.match(e.message, /^--model: .*\n {2}.*\n {2} *\^$/);
      }
    }),
    { numRuns: 1000, seed: 14 },
  );
});

test(`property (${1000} runs): the number reader gives finite numbers or a categorical column, never a crash or a silent 0`, () => {
  const field = fc.oneof(
    fc.double({ noNaN: true }).map(String),
    fc.constantFrom("Infinity", "-Infinity", "1e-400", "1e400", "0x10", "1,5", "1.5.2", "+.5", "-0", ".", "1e", "١٢"),
    fc.string({ maxLength: 6 }),
  );
  fc.assert(
    fc.property(fc.array(field, { minLength: 1, maxLength: 8 }), (values) => {
      const csv = `x\n${values.map((v) => `"${v.replace(/"/g, '""')}"`).join("\n")}\n`;
      try {
        const t = parseTable(csv, { source: "p.csv", na: [] });
        const c = t.columns.get("x")!;
        if (c.kind === "numeric")
          for (let i = 0; i < c.values.length; i++) {
            assert.ok(Number.isFinite(c.values[i]), `row ${i + 2}: ${values[i]}`);
            if (c.values[i] === 0)
              assert.doesNotMatch(values[i].trim(), /[1-9].*[eE]-/, `a silent 0 from ${values[i]}`);
          }
      } catch (e) {
        assert.ok(e instanceof InputError, `not an InputError: ${(e as Error).message}`);
      }
    }),
    { numRuns: 1000, seed: 15 },
  );
});
