// Every option a command lists is one it uses: others are refused (exit 2);
// --summary-by only where its table can go; each --help has examples; the
// delimiter may be written tab; decimal commas; the order of factor levels and
// the default reference.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { assertRel, runCli } from "../helpers.js";

const dir = mkdtempSync(join(tmpdir(), "tallyfit-options-"));
const CLINIC = ["examples/clinic_visits.csv", "--exposure", "open_hours"];

test("options a command does not use are refused with exit 2, naming the option", () => {
  const compare = ["compare", ...CLINIC, "--model", "visits ~ clinic", "--model", "visits ~ clinic + weekday"];
  for (const extra of [["--plot", "x.svg"], ["--robust"], ["--level", "0.9"], ["--intervals", "wald"]]) {
    const r = runCli([...compare, ...extra]);
    assert.equal(r.code, 2, extra.join(" "));
    assert.match(r.stderr, new RegExp(`unknown option '${extra[0]}'`));
  }
  for (const extra of [["--robust"], ["--level", "0.9"], ["--intervals", "wald"]]) {
    const r = runCli(["check", ...CLINIC, "--model", "visits ~ clinic", ...extra]);
    assert.equal(r.code, 2, extra.join(" "));
  }
});

test("--summary-by with CSV output is refused (its table has nowhere to go); Markdown carries it", () => {
  const fit = runCli(["fit", ...CLINIC, "--model", "visits ~ clinic", "--summary-by", "clinic", "--format", "csv"]);
  assert.equal(fit.code, 2);
  assert.match(fit.stderr, /--summary-by is not part of the CSV output/);
  const md = runCli([
    "fit",
    ...CLINIC,
    "--model",
    "visits ~ clinic",
    "--summary-by",
    "weekday",
    "--format",
    "markdown",
  ]);
  assert.equal(md.code, 0, md.stderr);
  assert.match(md.stdout, /## Observed and expected by weekday \(O\/E limits: /);
  assert.match(
    md.stdout,
    /\| weekday \| rows \| observed \| expected \| O\/E \| O\/E 95% \| exposure \| rate per 1 \|/,
  );
  const predict = runCli([
    "predict",
    "--model-file",
    "test/fixtures/golden/model-negbin.json",
    "examples/clinic_visits_week49.csv",
    "--summary-by",
    "clinic",
  ]);
  assert.equal(predict.code, 2);
  assert.match(predict.stderr, /--summary-by is not part of the CSV output \(one line per input row\)/);
});

test("each command's --help lists the formats it accepts and shows examples", () => {
  for (const cmd of ["fit", "check", "compare", "predict"]) {
    const r = runCli([cmd, "--help"]);
    assert.equal(r.code, 0);
    assert.match(r.stdout, /\nExamples:\n {2}tallyfit /);
    assert.ok((r.stdout.match(/\n {2}tallyfit /g) ?? []).length >= 2, `${cmd}: at least two examples`);
  }
  assert.match(runCli(["check", "--help"]).stdout.replace(/\s+/g, " "), /--format <fmt> text, json, markdown or html/);
  assert.doesNotMatch(runCli(["check", "--help"]).stdout, /--robust|--intervals/);
  assert.doesNotMatch(runCli(["compare", "--help"]).stdout, /--plot|--robust|--level/);
});

test("--delimiter tab and a typed \\t read a tab-separated file; a decimal-comma file fits like its decimal-point twin", () => {
  const rows = [
    ["a", "10.5", "3"],
    ["b", "12.25", "4"],
    ["a", "9", "1"],
    ["b", "11", "2"],
    ["a", "8.75", "2"],
  ];
  const tab = join(dir, "wards.txt");
  writeFileSync(tab, `ward\tbeds\tfalls\n${rows.map((r) => r.join("\t")).join("\n")}\n`);
  const semi = join(dir, "wards-semi.csv");
  writeFileSync(
    semi,
    `ward;beds;falls\n${rows.map((r) => [r[0], r[1].replace(".", ","), r[2]].join(";")).join("\n")}\n`,
  );
  const dot = join(dir, "wards.csv");
  writeFileSync(dot, `ward,beds,falls\n${rows.map((r) => r.join(",")).join("\n")}\n`);
  const est = (args: string[]) => {
    const r = runCli(["fit", ...args, "--model", "falls ~ ward", "--exposure", "beds", "--format", "json"]);
    assert.equal(r.code, 0, r.stderr);
    return JSON.parse(r.stdout).coefficients[1].estimate as number;
  };
  const ref = est([dot]);
  assert.equal(est([tab, "--delimiter", "tab"]), ref);
  assert.equal(est([tab, "--delimiter", "\\t"]), ref);
  assertRel(est([semi, "--delimiter", ";", "--decimal-comma"]), ref, 1e-15, "decimal comma");
  const noDelimiter = runCli(["fit", semi, "--model", "falls ~ ward", "--exposure", "beds"]);
  assert.equal(noDelimiter.code, 2);
  assert.match(noDelimiter.stderr, /try --delimiter ';' \(and --decimal-comma if its numbers are written 1,5\)/);
  const noComma = runCli(["fit", semi, "--delimiter", ";", "--model", "falls ~ ward", "--exposure", "beds"]);
  assert.equal(noComma.code, 2);
  assert.match(noComma.stderr, /row 2 holds '10,5'.*It looks like a decimal comma: add --decimal-comma/);
  const clash = runCli(["fit", dot, "--decimal-comma", "--model", "falls ~ ward", "--exposure", "beds"]);
  assert.equal(clash.code, 2);
  assert.match(clash.stderr, /--decimal-comma needs another field delimiter than the comma/);
});

test("--order sets the order of a factor's levels (and the default reference); a level not in the data is refused", () => {
  const order = "weekday=mon,tue,wed,thu,fri,sat";
  const r = runCli(["fit", ...CLINIC, "--model", "visits ~ weekday", "--order", order, "--intervals", "wald"]);
  assert.equal(r.code, 0, r.stderr);
  const terms = [...r.stdout.matchAll(/^ {4}(weekday=\w+)/gm)].map((m) => m[1]);
  assert.deepEqual(terms, ["weekday=tue", "weekday=wed", "weekday=thu", "weekday=fri", "weekday=sat"]);
  assert.match(r.stdout, /reference: weekday = mon/);
  const bad = runCli(["fit", ...CLINIC, "--model", "visits ~ weekday", "--order", "weekday=mon,tues"]);
  assert.equal(bad.code, 2);
  assert.match(bad.stderr, /--order weekday=…: 'tues' is not a level of 'weekday'.*Did you mean 'tue'\?/);
});

test("with no --ref, a first level without events gives way to the first level with events, with a notice; --ref to it stays exit 3", () => {
  const wards = ["examples/ward_falls.csv", "--model", "falls ~ ward", "--exposure", "bed_days"];
  const r = runCli(["fit", ...wards, "--format", "json", "--intervals", "wald"]);
  assert.equal(r.code, 0, r.stderr);
  assert.match(
    r.stderr,
    /the first level of 'ward', 'day_unit', has no events, so 'general_medicine' is the reference level/,
  );
  const json = JSON.parse(r.stdout);
  assert.deepEqual(json.references, [{ factor: "ward", level: "general_medicine" }]);
  assert.equal(json.coefficients.find((c: { term: string }) => c.term === "ward=day_unit").status, "no_events");
  const explicit = runCli(["fit", ...wards, "--ref", "ward=day_unit"]);
  assert.equal(explicit.code, 3);
});
