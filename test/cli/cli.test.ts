// The built command line, end to end, as a user or a CI job runs it.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, writeFileSync, existsSync, readdirSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { ROOT, runCli } from "../helpers.js";
import { spawnSync } from "node:child_process";

const ANSI = new RegExp(`${String.fromCharCode(27)}\\[`);

const EXAMPLE = "examples/clinic_visits.csv";
const MODEL = "visits ~ clinic + weekday + staff_on_duty + flu_season";
const ARGS = [
  "fit",
  EXAMPLE,
  "--model",
  MODEL,
  "--exposure",
  "open_hours",
  "--ref",
  "clinic=northgate",
  "--ref",
  "weekday=mon",
];

test("fit on the example file prints the text report with rate ratios, dispersion and cautions", () => {
  const r = runCli(ARGS);
  assert.equal(r.code, 0, r.stderr);
  assert.match(r.stdout, /^Poisson rate model for visits, log link, exposure open_hours/);
  assert.match(r.stdout, /clinic {2}\(reference: clinic = northgate\)/);
  assert.match(r.stdout, /clinic=harbour +\d\.\d+ +\d\.\d+ – \d\.\d+ +\d\.\d+ – \d\.\d+/);
  assert.match(r.stdout, /Pearson chi-square \/ df/);
  assert.match(r.stdout, /Reading these results/);
  assert.doesNotMatch(r.stdout, ANSI, "no colour when not a TTY");
  assert.match(r.stderr, /zero exposure and a zero count/, "notices go to stderr");
});

test("fit reads standard input and writes the JSON contract", () => {
  const csv = readFileSync(EXAMPLE, "utf8");
  const args = ARGS.filter((a) => a !== EXAMPLE).concat(["--format", "json", "-"]);
  const r = runCli(args, csv);
  assert.equal(r.code, 0, r.stderr);
  const j = JSON.parse(r.stdout);
  for (const k of [
    "schema",
    "family",
    "link",
    "level",
    "n_rows",
    "n_used",
    "n_dropped",
    "df_residual",
    "converged",
    "iterations",
    "deviance",
    "null_deviance",
    "pearson_chi2",
    "log_likelihood",
    "aic",
    "bic",
    "dispersion",
    "coefficients",
    "warnings",
  ])
    assert.ok(k in j, `field ${k}`);
  assert.equal(j.schema, "tallyfit.fit/1");
  assert.equal(j.family, "poisson");
  assert.equal(j.n_rows, j.n_used + j.n_dropped);
  const h = j.coefficients.find((c: { term: string }) => c.term === "clinic=harbour");
  for (const k of ["term", "estimate", "std_error", "z", "p_value", "rate_ratio", "wald", "profile", "aliased"])
    assert.ok(k in h, `coefficient field ${k}`);
  assert.ok(h.wald[0] < h.rate_ratio && h.rate_ratio < h.wald[1]);
  assert.ok(h.profile[0] < h.rate_ratio && h.rate_ratio < h.profile[1]);
  assert.ok(Math.abs(h.rate_ratio - Math.exp(h.estimate)) < 1e-12);
  // From a file, the same numbers.
  const f = JSON.parse(runCli([...ARGS, "--format", "json"]).stdout);
  assert.deepEqual(f.coefficients, j.coefficients);
});

test("csv and markdown formats", () => {
  const c = runCli([...ARGS, "--format", "csv", "--intervals", "wald"]);
  assert.equal(c.code, 0);
  const lines = c.stdout.trim().split("\n");
  assert.equal(
    lines[0],
    "term,estimate,std_error,z,p_value,rate_ratio,wald_low,wald_high,profile_low,profile_high,status",
  );
  assert.equal(lines.length, 1 + 13);
  const m = runCli([...ARGS, "--format", "markdown"]);
  assert.match(m.stdout, /\| clinic=harbour \| \d/);
});

test("exit code 2: unknown column, with the columns that exist and the closest name; no stack trace", () => {
  const r = runCli(["fit", EXAMPLE, "--model", "visits ~ clinc", "--exposure", "open_hours"]);
  assert.equal(r.code, 2);
  assert.match(
    r.stderr,
    /model column 'clinc' is not in the file\. Did you mean 'clinic'\? The columns are 'date', 'week'/,
  );
  assert.doesNotMatch(r.stderr, /at .*\.js:\d+/);
});

test("exit code 2: a negative count names the file, row, column and value", () => {
  const r = runCli(["fit", "-", "--model", "y ~ g"], "g,y\na,1\nb,-2\na,3\nb,1\n");
  assert.equal(r.code, 2);
  assert.match(r.stderr, /<stdin>, row 3, column 'y': the count is -2/);
});

test("exit code 2: bad option values and model syntax", () => {
  assert.equal(runCli([...ARGS, "--level", "95"]).code, 2);
  assert.equal(runCli([...ARGS, "--format", "xml"]).code, 2);
  assert.equal(runCli([...ARGS, "--bogus"]).code, 2);
  const r = runCli(["fit", EXAMPLE, "--model", "visits ~ clinic +"]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /visits ~ clinic \+\n {2}\s+\^/);
});

test("exit code 3: IRLS that cannot converge within --max-iter", () => {
  const r = runCli([...ARGS, "--max-iter", "1"]);
  assert.equal(r.code, 3);
  assert.match(r.stderr, /the model could not be fitted: IRLS did not converge in 1 iterations/);
});

test("exit code 0 for --help and --version", () => {
  assert.equal(runCli(["--help"]).code, 0);
  assert.match(runCli(["--version"]).stdout, /^\d+\.\d+\.\d+/);
  assert.match(runCli(["fit", "--help"]).stdout, /--exposure <col>/);
});

test("--output writes atomically and a failed run leaves the earlier report in place", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-"));
  const out = join(dir, "report.json");
  assert.equal(runCli([...ARGS, "--format", "json", "--output", out]).code, 0);
  const first = readFileSync(out, "utf8");
  assert.equal(JSON.parse(first).schema, "tallyfit.fit/1");
  const bad = runCli(["fit", EXAMPLE, "--model", "visits ~ nope", "--format", "json", "--output", out]);
  assert.equal(bad.code, 2);
  assert.equal(readFileSync(out, "utf8"), first);
  assert.deepEqual(readdirSync(dir), ["report.json"], "no temporary files left");
  const nowhere = runCli([...ARGS, "--output", join(dir, "missing", "r.txt")]);
  assert.equal(nowhere.code, 2);
  assert.match(nowhere.stderr, /cannot write .*missing\/r\.txt \(the folder does not exist\)/);
  assert.ok(!existsSync(join(dir, "missing")));
});

test("the same input gives byte-identical JSON, run after run", () => {
  const a = runCli([...ARGS, "--format", "json"]).stdout;
  const b = runCli([...ARGS, "--format", "json"]).stdout;
  assert.equal(a, b);
});

test("colour appears only when forced and never with NO_COLOR", () => {
  const forced = runCli(ARGS, undefined, { NO_COLOR: "", FORCE_COLOR: "1" });
  assert.match(forced.stdout, ANSI);
  const off = runCli([...ARGS, "--no-color"], undefined, { NO_COLOR: "", FORCE_COLOR: "1" });
  assert.doesNotMatch(off.stdout, ANSI);
});

test("a file with another delimiter: the message says so and suggests it", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-"));
  const f = join(dir, "semi.csv");
  writeFileSync(f, "g;y\na;1\nb;2\n");
  const r = runCli(["fit", f, "--model", "y ~ g"]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /uses ';' between fields.*--delimiter ';'/);
});

test("the benchmark runs end to end on a 10,000-row smoke file", () => {
  const r = spawnSync(process.execPath, ["dist/bench/run.js", "--smoke"], { cwd: ROOT, encoding: "utf8" });
  assert.equal(r.status, 0, r.stderr);
  assert.match(r.stdout, /10,000 rows/);
  assert.match(r.stdout, /tallyfit poisson \(Wald\) +[\d.]+ s/);
  assert.match(r.stdout, /byte scan/);
  assert.match(r.stdout, /IRLS kernel \(fitGlm\)/, "the kernel micro-benchmark runs too");
  assert.match(
    r.stdout,
    /poisson, row by row: [\d,]+ rows, \d+ columns, row-by-row path\n +this build +[\d.]+ ms +\d+ iterations/,
  );
});
