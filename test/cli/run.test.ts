// tallyfit run JOB (weekly series): the bundled weekly job end to end, every
// output validated against its JSON Schema; faults in a job file located by
// line and column; a failed run leaves the earlier outputs as they were; a
// JSON job file works like YAML.
import { test } from "node:test";
import assert from "node:assert/strict";
import { mkdtempSync, readFileSync, readdirSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { ROOT, runCli, schemaValidator } from "../helpers.js";

const schema = schemaValidator;

const EX = join(ROOT, "examples");

function jobText(outDir: string, data = `${EX}/clinic_visits.csv`): string {
  return `schema: tallyfit.job/1
data: ${data}
model: visits ~ clinic + weekday + staff_on_duty + flu_season
exposure: open_hours
family: negbin
fit:
  intervals: wald
predict:
  data: ${EX}/clinic_visits_week49.csv
  flag_by: [clinic]
  adjust: holm
  skip_bad_rows: true
  draws: 300
  fail_on_flag: groups
outputs:
  dir: ${outDir}
  report: json
  predictions: json
`;
}

test("run: the weekly job fits, checks and predicts; every output validates against its schema; exit 4 for Harbour's week", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-run-"));
  const job = join(dir, "weekly.yaml");
  writeFileSync(job, jobText(join(dir, "out")));
  const r = runCli(["run", job]);
  assert.equal(r.code, 4, r.stderr);
  assert.match(r.stderr, /tallyfit run: fit ok, check ok, predict flagged; outputs in .*; exit code 4/);
  const out = join(dir, "out");
  assert.deepEqual(readdirSync(out).sort(), ["check.json", "fit.json", "model.json", "predictions.json", "run.json"]);
  const read = (f: string) => JSON.parse(readFileSync(join(out, f), "utf8"));
  for (const [file, name] of [
    ["fit.json", "fit"],
    ["check.json", "check"],
    ["predictions.json", "predict"],
    ["model.json", "model"],
    ["run.json", "run"],
  ]) {
    const v = schema(name);
    assert.ok(v(read(file)), `${file}: ${JSON.stringify((v as { errors?: unknown }).errors)}`);
  }
  assert.equal(read("check.json").check.family_checked, "negbin");
  const predictions = read("predictions.json");
  assert.deepEqual(
    predictions.groups.filter((g: { flagged: boolean }) => g.flagged).map((g: { group: string }) => g.group),
    ["harbour"],
  );
  assert.equal(read("run.json").exit_code, 4);
});

test("run with an excess-zero family: zero_terms reach fit and check, and predict uses the saved zinb model", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-run-"));
  const job = join(dir, "wards.yaml");
  writeFileSync(
    job,
    `schema: tallyfit.job/1
data: ${EX}/ward_reports.csv
model: falls ~ ward_type
exposure: bed_days
family: zinb
zero_terms: small_unit
fit:
  intervals: wald
predict:
  data: ${EX}/ward_reports.csv
  flag_by: [ward_type]
  draws: 100
  fail_on_flag: none
outputs:
  dir: ${join(dir, "out")}
  report: json
  predictions: json
`,
  );
  const r = runCli(["run", job]);
  assert.equal(r.code, 0, r.stderr);
  const read = (f: string) => JSON.parse(readFileSync(join(dir, "out", f), "utf8"));
  assert.equal(read("fit.json").family, "zinb");
  assert.equal(read("fit.json").zero_part.terms, "small_unit");
  assert.equal(read("check.json").check.family_checked, "zinb");
  assert.equal(read("model.json").zero_part.model, "falls ~ small_unit");
  const predictions = read("predictions.json");
  assert.ok(schema("predict")(predictions));
  assert.equal(predictions.family, "zinb");
  assert.equal(predictions.groups.length, 4);
});

test("a failed run leaves the earlier outputs as they were; a JSON job works like YAML", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-run-"));
  const out = join(dir, "out");
  const good = join(dir, "good.yaml");
  writeFileSync(good, jobText(out));
  assert.equal(runCli(["run", good]).code, 4);
  const before = readFileSync(join(out, "fit.json"), "utf8");
  const bad = join(dir, "bad.yaml");
  writeFileSync(bad, jobText(out, join(dir, "missing.csv")));
  const r = runCli(["run", bad]);
  assert.equal(r.code, 2);
  assert.match(r.stderr, /bad\.yaml, step fit: .*missing\.csv/);
  assert.equal(readFileSync(join(out, "fit.json"), "utf8"), before, "the earlier report is untouched");
  assert.deepEqual(
    readdirSync(out).filter((f) => f.startsWith(".")),
    [],
    "no staging folder is left behind",
  );
  const asJson = join(dir, "job.json");
  const obj = {
    schema: "tallyfit.job/1",
    data: `${EX}/clinic_visits.csv`,
    model: "visits ~ clinic + weekday",
    exposure: "open_hours",
    check: { run: false },
    outputs: { dir: join(dir, "out2"), report: "json" },
  };
  writeFileSync(asJson, JSON.stringify(obj, null, 2));
  const j = runCli(["run", asJson]);
  assert.equal(j.code, 0, j.stderr);
  assert.deepEqual(readdirSync(join(dir, "out2")).sort(), ["fit.json", "model.json", "run.json"]);
});

test("job file faults are located by line and column and name the field (exit 2)", () => {
  const dir = mkdtempSync(join(tmpdir(), "tallyfit-run-"));
  const cases: [string, RegExp][] = [
    [
      jobText(join(dir, "o")).replace("predict:\n", "predcit:\n"),
      /line 8, column 1: predcit is not a field of a job file \(a typo\?\)/,
    ],
    [
      jobText(join(dir, "o")).replace("adjust: holm", "adjust: sidak"),
      /line 11, column 11: predict\.adjust must be one of none, holm, bh/,
    ],
    [
      jobText(join(dir, "o")).replace("family: negbin\n", "family: negbin\n  oops: [\n"),
      /line \d+, column \d+: the job file cannot be read/,
    ],
    [jobText(join(dir, "o")).replace(/outputs:\n {2}dir: .*\n/, "outputs:\n"), /outputs needs the field 'dir'/],
    [
      jobText(join(dir, "o")).replace("schema: tallyfit.job/1", "schema: tallyfit.job/9"),
      /line 1, column 9: schema must be 'tallyfit.job\/1'/,
    ],
  ];
  for (const [text, re] of cases) {
    const f = join(dir, "job.yaml");
    writeFileSync(f, text);
    const r = runCli(["run", f]);
    assert.equal(r.code, 2, text);
    assert.match(r.stderr, re);
    assert.doesNotMatch(r.stderr, /at .*\.js:\d+/);
  }
});
