// Text from the data in outputs: spreadsheet formulas neutralised in CSV and
// Markdown (OWASP CSV-injection guidance), the Markdown separator escaped,
// terminal control sequences escaped in reports and messages, very long
// names shortened in messages.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { markdownCell, neutraliseFormula } from "../../src/report/safe-text.js";
import { runCli } from "../helpers.js";

const ESC = String.fromCharCode(27);
const dir = mkdtempSync(join(tmpdir(), "tallyfit-safe-"));

test("neutraliseFormula: text starting with = + - @ tab or CR gets a leading quote; numbers stay numbers", () => {
  assert.equal(neutraliseFormula("=1+1"), "'=1+1");
  assert.equal(neutraliseFormula("@SUM(A1)"), "'@SUM(A1)");
  assert.equal(neutraliseFormula("+cmd"), "'+cmd");
  assert.equal(neutraliseFormula("-2+3"), "'-2+3");
  assert.equal(neutraliseFormula("-2.5"), "-2.5");
  assert.equal(neutraliseFormula("+1e3"), "+1e3");
  assert.equal(neutraliseFormula("harbour"), "harbour");
  assert.equal(markdownCell("a|b`c"), "a\\|b\\`c");
});

test("hostile level names: CSV and Markdown neutralise formulas and escape '|', text reports escape control sequences", () => {
  const file = join(dir, "hostile.csv");
  const levels = ["=HYPERLINK(1)", "+cmd", `${ESC}[31mred`, "a|b", "@x"];
  let csv = "unit,e,y\n";
  for (let i = 0; i < 40; i++) csv += `"${levels[i % levels.length]}",${1 + (i % 3)},${1 + (i % 4)}\n`;
  writeFileSync(file, csv);
  const args = ["fit", file, "--model", "y ~ unit", "--exposure", "e", "--intervals", "wald", "--quiet"];
  const out = runCli([...args, "--format", "csv"]).stdout;
  for (const line of out.split("\n").slice(1).filter(Boolean)) assert.doesNotMatch(line, /^[=+\-@]/, line);
  assert.match(out, /^'?unit=\+cmd,/m);
  const md = runCli([...args, "--format", "markdown"]).stdout;
  assert.match(md, /\| unit=a\\\|b \|/);
  assert.doesNotMatch(md, new RegExp(ESC));
  const text = runCli(args).stdout;
  assert.doesNotMatch(text, new RegExp(ESC), "no raw escape from the data reaches the terminal");
  assert.match(text, /\\x1b\[31mred/);
  const json = JSON.parse(runCli([...args, "--format", "json"]).stdout);
  assert.equal(json.references[0].level, `${ESC}[31mred`, "JSON keeps the name as it is");
});

test("predict's CSV echo of the input neutralises formulas too", () => {
  const train = join(dir, "train.csv");
  let csv = "g,e,y,note\n";
  for (let i = 0; i < 30; i++) csv += `${i % 2 ? "a" : "b"},${1 + (i % 3)},${i % 5},ok\n`;
  writeFileSync(train, csv);
  const model = join(dir, "m.json");
  assert.equal(runCli(["fit", train, "--model", "y ~ g", "--exposure", "e", "--save-model", model, "--quiet"]).code, 0);
  const fresh = join(dir, "new.csv");
  writeFileSync(fresh, 'g,e,y,note\na,2,1,"=WEBSERVICE(""http://x"")"\nb,1,-0,-3\n');
  const r = runCli(["predict", "--model-file", model, fresh, "--quiet"]);
  assert.equal(r.code, 0, r.stderr);
  const lines = r.stdout.split("\n");
  assert.match(lines[1], /,"'=WEBSERVICE\(""http:\/\/x""\)",/);
  assert.match(lines[2], /^b,1,-0,-3,/, "numbers are left as they are");
});

test("messages escape control characters and shorten a huge column name", () => {
  const file = join(dir, "long.csv");
  const huge = "x".repeat(200_000);
  writeFileSync(file, `${huge},e,y\n1,1,1\n2,1,2\n`);
  const esc = runCli(["fit", file, "--model", `y ~ ${ESC}[2Jz`, "--exposure", "e"]);
  assert.equal(esc.code, 2);
  assert.doesNotMatch(esc.stderr, new RegExp(ESC));
  assert.match(esc.stderr, /\\x1b/);
  const r = runCli(["fit", file, "--model", "y ~ zz", "--exposure", "e"]);
  assert.equal(r.code, 2);
  assert.ok(r.stderr.length < 2000, `message of ${r.stderr.length} characters`);
  assert.match(r.stderr, /model column 'zz' is not in the file\. The columns are 'x+…\(\d+ characters\)/);
});
